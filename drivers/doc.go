// Package drivers owns links and protocols: serial lines, TCP endpoints, the
// ASCII question-and-answer exchange, Modbus, SCPI and the simulated chamber
// (in drivers/sim). A driver turns one exchange with an instrument into a
// Reading: the raw value, the instrument's status and the time of the exchange.
//
// drivers must not know about alarms or storage, and imports nothing else of
// this module.
package drivers
