// Package sim is a simulated vacuum chamber and the instruments that read it,
// so holdfast can be seen working on a machine with no hardware and so tests
// of alarms and leak analysis have a chamber that obeys vacuum physics.
//
// A Chamber integrates the gas balance dp/dt = (Q − S(p)·p)/V lazily, up to
// the time its clock says, with an exponential step that is exact while the
// pumping speed and the gas load are constant and stays stable from
// atmosphere down to the pump's base pressure. Gas loads are a real leak,
// outgassing that falls with pumping time and rises with wall temperature,
// and a bleed valve; the pump is a roughing stage plus an optional
// high-vacuum stage below a crossover pressure; an isolation valve seals the
// chamber for rate-of-rise tests; a heater drives the wall temperature with a
// first-order lag. A scenario timeline of Events changes these over time.
//
// Modelling choices, beyond the textbook gas balance: the outgassing load is
// q = Q1h·f·(3600 s/age)^n with f = 2^((T_wall − T_ambient)/15 K) (the
// doubling interval from memory) and age clamped at 60 s; age is a clock that
// runs f times faster on a hot wall, so a bake first raises the load and then
// leaves the walls depleted, well below the unbaked curve once cool. The two
// pump stages act in parallel, each as S·(1 − u/p) above its own base
// pressure u; the high stage acts only below the crossover. A vent fills the
// chamber at once.
//
// Instruments (Pirani, capacitance diaphragm, ionisation, thermocouple) read
// the chamber's state the way real ones do, with noise, limits, printed
// significant digits and failure modes, and implement drivers.Driver.
//
// Clock runs simulated time faster than the wall clock for demos.
//
// Everything here is simulated. A real chamber can implode, a bake can burn
// and a software alarm can fail: holdfast is a monitoring aid, never a safety
// interlock; hard-wired interlocks, local codes and licensed practice come
// first.
//
// sim imports only drivers (for the Driver contract) and calib (for the
// heat-loss model) of this module.
package sim
