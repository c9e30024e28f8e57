package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"

	"holdfast/calib"
)

const temperatureSynopsis = "--thermocouple TYPE (--emf E | --temperature T) [--cold-junction T]  |  --rtd ELEMENT (--resistance R | --temperature T)"

const temperatureExamples = `
examples:
  holdfast temperature --thermocouple K --emf 4.096mV                    100.00 °C
  holdfast temperature --thermocouple K --emf 3.096mV --cold-junction 25C
  holdfast temperature --thermocouple K --temperature 100C               4.096 mV
  holdfast temperature --rtd pt100 --resistance 138.51ohm                100.00 °C
  holdfast temperature --rtd pt1000 --temperature -40C --json

The first line is the answer: a temperature in °C for --emf or --resistance,
the EMF in mV or the resistance in Ω for --temperature. Thermocouples follow
the NIST ITS-90 reference functions (NIST Monograph 175; types B, E, J, K, N,
R, S, T); the cold junction (the meter's terminals) defaults to 0 °C, as in
the printed tables. Resistance thermometers follow IEC 60751
(Callendar–Van Dusen; pt100, pt1000). Give every value with its unit: mV, V,
uV; ohm, kohm; C, K, F.
`

// temperatureFlags are the command's flags.
type temperatureFlags struct {
	thermocouple, rtd            string
	emf, resistance, temperature string
	coldJunction                 string
	asJSON                       bool
}

// temperatureResult is what the command prints, and its --json form.
type temperatureResult struct {
	Sensor        string     `json:"sensor"`           // thermocouple or rtd
	Type          string     `json:"type"`             // K, pt100, ...
	TemperatureC  float64    `json:"temperature_c"`    // the measuring junction or the element
	EMFmV         *float64   `json:"emf_mv,omitempty"` // as measured, against the cold junction
	ColdJunctionC *float64   `json:"cold_junction_c,omitempty"`
	ResistanceOhm *float64   `json:"resistance_ohm,omitempty"`
	ValidRange    [2]float64 `json:"valid_range"`   // of the input: mV (against 0 °C) or Ω
	ValidRangeC   [2]float64 `json:"valid_range_c"` // the temperatures at its ends
	Answer        string     `json:"-"`             // first line
}

// cmdTemperature converts a thermocouple EMF or a resistance thermometer's
// resistance to a temperature, or back.
func cmdTemperature(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("temperature", temperatureSynopsis, stderr)
	var f temperatureFlags
	fs.StringVar(&f.thermocouple, "thermocouple", "", "thermocouple `type`: "+strings.Join(calib.ThermocoupleTypes(), ", "))
	fs.StringVar(&f.rtd, "rtd", "", "resistance thermometer `element`: "+strings.Join(calib.RTDNames(), ", "))
	fs.StringVar(&f.emf, "emf", "", "the thermocouple's measured `EMF` with its unit, e.g. 4.096mV")
	fs.StringVar(&f.resistance, "resistance", "", "the element's `resistance` with its unit, e.g. 138.51ohm")
	fs.StringVar(&f.temperature, "temperature", "", "convert this `temperature` the other way, e.g. 100C")
	fs.StringVar(&f.coldJunction, "cold-junction", "", "`temperature` of the thermocouple's reference (cold) junction; default 0C")
	fs.BoolVar(&f.asJSON, "json", false, "print JSON (temperatures in °C, EMF in mV, resistance in Ω)")
	flagUsage := fs.Usage
	fs.Usage = func() {
		flagUsage()
		fmt.Fprint(stderr, temperatureExamples)
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		fs.Usage()
		return errUsage("temperature takes flags only, got %q", fs.Args())
	}
	res, err := f.run()
	if err != nil {
		if errors.Is(err, errTemperatureUsage) {
			fs.Usage()
		}
		return fmt.Errorf("temperature: %w", err)
	}
	if f.asJSON {
		b, err := json.MarshalIndent(res, "", "  ")
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "%s\n", b)
		return err
	}
	_, err = fmt.Fprintln(stdout, res.Answer+"\n"+res.describe())
	return err
}

var errTemperatureUsage = errors.New("want --thermocouple TYPE with --emf or --temperature, or --rtd ELEMENT with --resistance or --temperature")

func (f temperatureFlags) run() (temperatureResult, error) {
	switch {
	case f.thermocouple != "" && f.rtd != "":
		return temperatureResult{}, fmt.Errorf("--thermocouple and --rtd: give one sensor; %w", errTemperatureUsage)
	case f.thermocouple != "":
		if f.resistance != "" {
			return temperatureResult{}, fmt.Errorf("--resistance is for --rtd; a thermocouple gives --emf")
		}
		return f.thermocoupleRun()
	case f.rtd != "":
		if f.emf != "" || f.coldJunction != "" {
			return temperatureResult{}, fmt.Errorf("--emf and --cold-junction are for --thermocouple; a resistance thermometer gives --resistance")
		}
		return f.rtdRun()
	}
	return temperatureResult{}, errTemperatureUsage
}

// oneOf returns which of --temperature and the other input is set, or an error.
func oneOf(temperature, other, otherFlag string) (reverse bool, err error) {
	switch {
	case temperature != "" && other != "":
		return false, fmt.Errorf("--temperature and %s: give one, the value to convert; %w", otherFlag, errTemperatureUsage)
	case temperature == "" && other == "":
		return false, fmt.Errorf("give %s or --temperature; %w", otherFlag, errTemperatureUsage)
	}
	return temperature != "", nil
}

func parseFlag(name, v string, d calib.Dimension) (float64, error) {
	x, err := calib.Parse(v, d)
	if err != nil {
		return 0, fmt.Errorf("--%s: %w", name, err)
	}
	return x, nil
}

func (f temperatureFlags) thermocoupleRun() (temperatureResult, error) {
	tc, err := calib.ThermocoupleType(f.thermocouple)
	if err != nil {
		return temperatureResult{}, fmt.Errorf("--thermocouple: %w", err)
	}
	reverse, err := oneOf(f.temperature, f.emf, "--emf")
	if err != nil {
		return temperatureResult{}, err
	}
	cj := 0.0
	if f.coldJunction != "" {
		if cj, err = parseFlag("cold-junction", f.coldJunction, calib.Temperature); err != nil {
			return temperatureResult{}, err
		}
	}
	lo, hi, tlo, thi := tc.EMFRange()
	res := temperatureResult{Sensor: "thermocouple", Type: tc.Name(), ColdJunctionC: &cj,
		ValidRange: [2]float64{lo, hi}, ValidRangeC: [2]float64{tlo, thi}}
	var emf float64
	if reverse {
		if res.TemperatureC, err = parseFlag("temperature", f.temperature, calib.Temperature); err != nil {
			return res, err
		}
		if emf, err = tc.EMFBetween(res.TemperatureC, cj); err != nil {
			return res, err
		}
		res.Answer = fmt.Sprintf("%.3f mV", emf)
	} else {
		v, err := parseFlag("emf", f.emf, calib.Voltage)
		if err != nil {
			return res, err
		}
		emf = v * 1e3
		if res.TemperatureC, err = tc.Compensated(emf, cj); err != nil {
			return res, err
		}
		res.Answer = fmt.Sprintf("%.2f °C", res.TemperatureC)
	}
	res.EMFmV = &emf
	return res, nil
}

func (f temperatureFlags) rtdRun() (temperatureResult, error) {
	el, err := calib.PlatinumRTD(f.rtd)
	if err != nil {
		return temperatureResult{}, fmt.Errorf("--rtd: %w", err)
	}
	reverse, err := oneOf(f.temperature, f.resistance, "--resistance")
	if err != nil {
		return temperatureResult{}, err
	}
	lo, hi := el.ResistanceRange()
	tlo, thi := el.TemperatureRange()
	res := temperatureResult{Sensor: "rtd", Type: el.Name, ValidRange: [2]float64{lo, hi}, ValidRangeC: [2]float64{tlo, thi}}
	var ohms float64
	if reverse {
		if res.TemperatureC, err = parseFlag("temperature", f.temperature, calib.Temperature); err != nil {
			return res, err
		}
		if ohms, err = el.Resistance(res.TemperatureC); err != nil {
			return res, err
		}
		res.Answer = fmt.Sprintf("%.2f Ω", ohms)
	} else {
		if ohms, err = parseFlag("resistance", f.resistance, calib.Resistance); err != nil {
			return res, err
		}
		if res.TemperatureC, err = el.Temperature(ohms); err != nil {
			return res, err
		}
		res.Answer = fmt.Sprintf("%.2f °C", res.TemperatureC)
	}
	res.ResistanceOhm = &ohms
	return res, nil
}

// describe is the second line: what was converted, and over what range.
func (r temperatureResult) describe() string {
	if r.Sensor == "rtd" {
		return fmt.Sprintf("%s at %.2f °C: %.3f Ω (IEC 60751; valid %.2f … %.2f Ω, %g … %g °C)",
			r.Type, r.TemperatureC, *r.ResistanceOhm, r.ValidRange[0], r.ValidRange[1], r.ValidRangeC[0], r.ValidRangeC[1])
	}
	return fmt.Sprintf("type %s thermocouple at %.2f °C: %.3f mV with the cold junction at %g °C (NIST ITS-90; valid %.3f … %.3f mV against 0 °C, %g … %g °C)",
		r.Type, r.TemperatureC, *r.EMFmV, *r.ColdJunctionC, r.ValidRange[0], r.ValidRange[1], r.ValidRangeC[0], r.ValidRangeC[1])
}
