// Package calib owns the numbers: units and their conversion, transfer
// functions from a raw signal to a value, calibration fits, gas correction
// factors and reference-column maths. Inside the program every pressure is in
// pascals and every temperature in degrees Celsius.
//
// calib is pure functions over values and times: it does no I/O and imports
// nothing else of this module.
package calib
