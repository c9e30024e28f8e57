package sim

import "time"

// Demo is the built-in, invented scenario: a 30 L stainless-steel chamber
// ("bench chamber B") pumped down from atmosphere, baked, cooled, then given
// a leak and a hold test. At speed 600 its first four hours take 25 s.
//
// The plant:
//   - volume 30 L (a 0.3 m bore, 0.42 m long cylinder: π·0.3·0.42 + 2·π·0.15²
//     = 0.396 + 0.141 ≈ 0.54 m² of wall);
//   - a roughing stage of 5 m³/h (1.39 L/s) with a 0.5 Pa base pressure, the
//     order of a small two-stage oil-sealed pump (from memory): 3.6 min from
//     atmosphere to the crossover;
//   - a high-vacuum stage of 60 L/s with a 1e-7 Pa base pressure that joins
//     below a 5 Pa crossover, where the roughing stage still pumps at 90 %
//     of its speed and a small high-vacuum pump can safely take over
//     (modelling choice);
//   - outgassing of 3e-5 Pa·m³/s one hour into the pump-down at 22 °C, falling
//     as 1/t: 3e-5/0.54 ≈ 5.6e-5 Pa·m³/(s·m²) over the wall, within the range
//     of unbaked, cleaned stainless steel (from memory). Its pressure at one
//     hour is about 5e-4 Pa;
//   - the wall follows the heater with a 20 min lag.
//
// The timeline (offsets from the start):
//
//	0:00      pumping from atmosphere
//	1:00      bake setpoint 150 °C: the pressure climbs as the wall warms,
//	          then falls while the bake holds
//	1:45      the wall thermocouple "wall-tc" stops answering for 3 min
//	2:30      heater off: the wall cools toward 22 °C; the pressure drops
//	          well below its pre-bake value
//	3:00      a real leak of 1e-6 Pa·m³/s (1e-5 mbar·L/s) opens
//	3:30      isolation valve closed for a 5 min hold test: the pressure
//	          rises almost linearly at about 3.8e-5 Pa/s (leak plus a little
//	          outgassing over 30 L), so the ionisation gauge, set to protect
//	          itself at 1e-2 Pa (below the 1e-1 Pa top of its range, as an
//	          operator may choose), switches off near the end
//	3:35      valve reopened; pumping on to the end
//
// Names of the instruments in the timeline match DemoInstruments.
func Demo() Config {
	return Config{
		Volume:     0.030,
		AmbientC:   22,
		Rough:      Pump{Speed: 5.0 / 3600, Ultimate: 0.5},
		High:       Pump{Speed: 0.060, Ultimate: 1e-7},
		Crossover:  5,
		Outgassing: 3e-5,
		WallTau:    20 * time.Minute,
		Seed:       1,
		Events: []Event{
			{After: 1 * time.Hour, Action: ActBake, Value: 150},
			{After: 105 * time.Minute, Action: ActFail, Target: "wall-tc", Mode: ModeSilent},
			{After: 108 * time.Minute, Action: ActRecover, Target: "wall-tc"},
			{After: 150 * time.Minute, Action: ActBake, Value: 0},
			{After: 3 * time.Hour, Action: ActLeak, Value: 1e-6},
			{After: 210 * time.Minute, Action: ActIsolate},
			{After: 215 * time.Minute, Action: ActReopen},
		},
	}
}

// torr is 101325/760 Pa (REFERENCES.md §1b).
const torr = Atmosphere / 760

// DemoInstruments are the instruments the Demo scenario reads: a Pirani for
// the rough range, a 0.1 Torr capacitance diaphragm gauge for the hold test,
// an ionisation gauge for high vacuum, and thermocouples on the wall and in
// the room.
func DemoInstruments() []InstrumentConfig {
	return []InstrumentConfig{
		{Name: "chamber-pirani", Kind: KindPirani},
		{Name: "chamber-cdg", Kind: KindCDG, FullScale: 0.1 * torr, Digits: 4},
		{Name: "chamber-ion", Kind: KindIon, Protect: 1e-2},
		{Name: "wall-tc", Kind: KindThermocouple, Where: "wall"},
		{Name: "room-tc", Kind: KindThermocouple, Where: "ambient"},
	}
}
