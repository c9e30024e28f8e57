package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"holdfast/alerts"
	"holdfast/calib"
)

const leakSynopsis = `--rise FILE.csv --volume V [flags]

Analyses a recorded pressure rise of an isolated chamber: the leak rate
Q = V·a from the linear part of the rise, the outgassing at the start of the
record, and whether the rise is leak-dominated (the linear term explains at
least 90 % of it), outgassing-dominated (at most 10 %), mixed, or
inconclusive (too short: under 10 distinct times or 10 s; within noise; the
pressure falls; or the fit failed), with the reason.

The CSV has the header line "time_s,pressure_UNIT" (time_s,pressure_mbar,
time_s,pressure_Pa, time_s,pressure_Torr), or "time_s,pressure" with the
unit given by --unit, then one time in seconds and one pressure per line;
lines starting with # are ignored, and quoted fields (a spreadsheet's
export) read as CSV does. There is no default unit: a file in mbar read as
pascals would be 100 times off. Rows may
be in any order; readings sharing a time are averaged; a start that still
falls (recorded before the valve closed) is trimmed and reported. The digits
written set each reading's resolution.

  holdfast leak --rise chamber-b.csv --volume 30L --unit mbar
  holdfast leak --rise chamber-b.csv --volume 30L --unit mbar --leak-unit Torr*L/s --reach 1e-1mbar
  holdfast leak --rise chamber-b.csv --volume 0.03m3 --json     # header time_s,pressure_mbar
  holdfast leak --rise chamber-b.csv --volume 30L --unit mbar --volume-uncertainty 5% --gauge-uncertainty 1%

Without --gauge-uncertainty (the gauge's relative expanded uncertainty, k = 2,
counted as a scale error) and --volume-uncertainty (the volume's, k = 2) the
stated interval is the fit's scatter alone, and the notes say so.

--json prints one object (rates in Pa·m³/s, pressures in Pa, times in s):
  classification, reason           what the rise shows, and why
  leak_rate_pa_m3_per_s            Q = V·a
  leak_rate_uncertainty_pa_m3_per_s   its standard uncertainty (k = 1): the fit's covariance,
                                   with --gauge-uncertainty and --volume-uncertainty added
  scale_relative_uncertainty, volume_relative_uncertainty   those two as taken in (k = 1)
  outgassing_rate_pa_m3_per_s      V·b/τ: the curved part at the start of the record (0 for a line)
  outgassing_rate_uncertainty_pa_m3_per_s
  leak_share                       a·T over the fitted rise p(T) − p(0), 0 to 1
  rise_pa, rise_uncertainty_pa     the fitted rise over the record
  fit                              model ("line" or "line+exponential") and the parameters of
                                   p(t) = p0 + a·t + b·(1 − e^(−t/τ)): p0_pa, slope_pa_per_s (a),
                                   curve_pa (b), tau_s (τ), each with its _uncertainty, and
                                   covariance (4×4, that order, SI units)
  volume_m3                        the volume given
  start_s, span_s                  time of t = 0 in the file's clock, and the span fitted
  samples, points                  rows read; points fitted
  merged, trimmed, trimmed_span_s  rows averaged into another; points and seconds trimmed
  group_size                       rows per group in a long record (1: none)
  outliers                         points more than 3 noise units off the fit
  noise_pa                         noise beyond the readings' resolution
  resolution_pa                    median reading step, from the digits written (0: none seen)
  autocorrelation                  lag-1 autocorrelation of the residuals (widens uncertainties)
  curved_tried, delta_bic          whether line+exponential was fitted; BIC(line) − BIC(curved)
  notes                            what was done to the record, what to watch
  file, pressure_unit              the input and its unit
  leak_rate                        {value, unit}: Q in --leak-unit
  reach                            with --reach: {target_pa, reachable, time_s (from the start
                                   of the record), time_from_end_s}

The figures are a measuring aid: acceptance limits come from your process
specification and local codes. holdfast is never a safety interlock.`

type leakFlags struct {
	rise, volume, unit, leakUnit, reach string
	gaugeU, volumeU                     string
	keepStart, asJSON                   bool
}

// cmdLeak analyses a recorded pressure rise.
func cmdLeak(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("leak", leakSynopsis, stderr)
	f := &leakFlags{}
	fs.StringVar(&f.rise, "rise", "", "CSV file of the rise: header time_s,pressure_UNIT (or time_s,pressure with --unit)")
	fs.StringVar(&f.volume, "volume", "", "isolated volume with a unit: 30L, 0.03m3")
	fs.StringVar(&f.unit, "unit", "", "pressure unit of the CSV's pressure column (required unless the header names it)")
	fs.StringVar(&f.leakUnit, "leak-unit", "mbar*L/s", "throughput unit to print the leak rate in as well")
	fs.StringVar(&f.reach, "reach", "", "also tell when the fitted rise reaches this pressure, e.g. 1e-1mbar")
	fs.StringVar(&f.gaugeU, "gauge-uncertainty", "", "the gauge's relative expanded uncertainty (k = 2), e.g. 1%: enters the leak rate's")
	fs.StringVar(&f.volumeU, "volume-uncertainty", "", "the volume's relative expanded uncertainty (k = 2), e.g. 5%: enters the leak rate's")
	fs.BoolVar(&f.keepStart, "keep-start", false, "keep a falling start instead of trimming it")
	fs.BoolVar(&f.asJSON, "json", false, "print JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if f.rise == "" || f.volume == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("leak needs --rise FILE.csv and --volume V")
	}
	in, err := f.inputs()
	if err != nil {
		return fmt.Errorf("leak: %w", err)
	}
	rec, err := readRise(f.rise)
	if err != nil {
		return fmt.Errorf("leak: %w", err)
	}
	if in.unit, err = riseUnit(f, in.unit, rec.Unit); err != nil {
		return fmt.Errorf("leak: %w", err)
	}
	p := make([]float64, len(rec.Pressure))
	for i, v := range rec.Pressure {
		p[i] = in.unit.ToSI(v)
	}
	opt := alerts.RiseOptions{Step: rec.ReadingStep(in.unit.ToSI(1)), KeepStart: f.keepStart,
		ScaleUncertainty: in.gaugeU / alerts.CoverageK, VolumeUncertainty: in.volumeU / alerts.CoverageK}
	res, err := alerts.AnalyzeRise(rec.Time, p, in.volume, opt)
	if err != nil {
		return fmt.Errorf("leak: %s: %w", f.rise, err)
	}
	if res.Classification != alerts.Inconclusive {
		res.Notes = append(res.Notes, leakIntervalNote(in))
	}
	rep := newLeakReport(f.rise, res, in)
	if f.asJSON {
		b, err := json.MarshalIndent(rep, "", "  ")
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "%s\n", b)
		return err
	}
	return writeLeakText(stdout, rep, in)
}

// leakInputs are the parsed flags.
type leakInputs struct {
	volume         float64
	gaugeU         float64 // relative expanded (k = 2); 0: not given
	volumeU        float64
	unit, leakUnit calib.Unit
	reach          float64 // Pa; 0 when not asked
}

// inputs parses every flag, reporting all bad ones at once.
func (f *leakFlags) inputs() (leakInputs, error) {
	var in leakInputs
	var errs []error
	var err error
	if in.volume, err = calib.Parse(f.volume, calib.Volume); err != nil {
		errs = append(errs, fmt.Errorf("--volume: %w", err))
	} else if !(in.volume > 0) {
		errs = append(errs, fmt.Errorf("--volume %s: the isolated volume must be positive", f.volume))
	}
	if f.unit != "" {
		if in.unit, err = calib.ParseUnit(f.unit, calib.Pressure); err != nil {
			errs = append(errs, fmt.Errorf("--unit: %w", err))
		}
	}
	if in.leakUnit, err = calib.ParseUnit(f.leakUnit, calib.Throughput); err != nil {
		errs = append(errs, fmt.Errorf("--leak-unit: %w", err))
	}
	if f.reach != "" {
		if in.reach, err = calib.Parse(f.reach, calib.Pressure); err != nil {
			errs = append(errs, fmt.Errorf("--reach: %w", err))
		}
	}
	for _, u := range []struct {
		flag, text string
		to         *float64
	}{{"--gauge-uncertainty", f.gaugeU, &in.gaugeU}, {"--volume-uncertainty", f.volumeU, &in.volumeU}} {
		if u.text == "" {
			continue
		}
		if *u.to, err = parsePercent(u.text); err != nil {
			errs = append(errs, fmt.Errorf("%s: %w", u.flag, err))
		}
	}
	return in, errors.Join(errs...)
}

// parsePercent reads a relative uncertainty written as a percentage
// ("5%") into a fraction, from 0 to under 1.
func parsePercent(text string) (float64, error) {
	v, ok := calib.ParsePercent(text)
	if !ok || !(v >= 0 && v < 1) {
		return 0, fmt.Errorf("want a percentage from 0%% to under 100%% such as 5%%, got %q", text)
	}
	return v, nil
}

// leakIntervalNote says what the stated interval takes in.
func leakIntervalNote(in leakInputs) string {
	var with, without []string
	if in.gaugeU > 0 {
		with = append(with, fmt.Sprintf("the gauge's scale (%.2g %% at k = 2)", 100*in.gaugeU))
	} else {
		without = append(without, "the gauge's accuracy (give --gauge-uncertainty)")
	}
	if in.volumeU > 0 {
		with = append(with, fmt.Sprintf("the volume (%.2g %% at k = 2)", 100*in.volumeU))
	} else {
		without = append(without, "the volume's (give --volume-uncertainty)")
	}
	return alerts.IntervalNote(with, without)
}

// riseUnit is the pressure unit of the file: the header's or --unit's;
// never a guess. When both are given they must agree.
func riseUnit(f *leakFlags, flag, header calib.Unit) (calib.Unit, error) {
	switch {
	case header.Name == "" && f.unit == "":
		return calib.Unit{}, fmt.Errorf("%s: which unit are the pressures in? Give --unit (--unit mbar) or name it in the header (time_s,pressure_mbar)", f.rise)
	case header.Name == "":
		return flag, nil
	case f.unit != "" && flag.ToSI(1) != header.ToSI(1):
		return calib.Unit{}, fmt.Errorf("%s: the header says the pressures are in %s but --unit says %s: drop --unit or fix the header", f.rise, header.Name, flag.Name)
	}
	return header, nil
}

func readRise(path string) (alerts.RiseRecord, error) {
	fh, err := os.Open(path)
	if err != nil {
		return alerts.RiseRecord{}, err
	}
	defer fh.Close()
	return alerts.ReadRiseCSV(fh, path)
}

// leakReport is the JSON the command prints: the analysis and its context.
type leakReport struct {
	alerts.RiseResult
	File          string        `json:"file"`
	PressureUnit  string        `json:"pressure_unit"`
	LeakRateShown leakRateShown `json:"leak_rate"`
	Reach         *leakReach    `json:"reach,omitempty"`
}

type leakRateShown struct {
	Value       float64 `json:"value"`
	Uncertainty float64 `json:"uncertainty"`
	Unit        string  `json:"unit"`
}

type leakReach struct {
	Target      float64 `json:"target_pa"`
	Reachable   bool    `json:"reachable"`
	Time        float64 `json:"time_s"`
	TimeFromEnd float64 `json:"time_from_end_s"`
}

func newLeakReport(file string, res alerts.RiseResult, in leakInputs) leakReport {
	rep := leakReport{RiseResult: res, File: file, PressureUnit: in.unit.Name,
		LeakRateShown: leakRateShown{Value: in.leakUnit.FromSI(res.LeakRate),
			Uncertainty: in.leakUnit.FromSI(res.LeakRateUncertainty), Unit: in.leakUnit.Name}}
	if in.reach > 0 && res.Fit.Model != alerts.ModelNone {
		r := &leakReach{Target: in.reach}
		if t, err := res.Fit.TimeTo(in.reach); err == nil {
			r.Reachable, r.Time, r.TimeFromEnd = true, t, t-res.Span
		}
		rep.Reach = r
	}
	return rep
}

// writeLeakText prints the report for people.
func writeLeakText(w io.Writer, rep leakReport, in leakInputs) error {
	res := rep.RiseResult
	var b strings.Builder
	fmt.Fprintf(&b, "classification  %s: %s\n", res.Classification, res.Reason)
	if res.Fit.Model != alerts.ModelNone {
		si := calib.Throughput.Base()
		units := []calib.Unit{mustUnit("mbar*L/s", calib.Throughput)}
		if in.leakUnit != si && in.leakUnit != units[0] {
			units = append(units, in.leakUnit)
		}
		switch {
		case res.LeakUpperBound <= 0:
			fmt.Fprintf(&b, "leak rate       no leak found: the pressure does not rise\n")
		case res.LeakRate <= 0 || res.UpperBoundOnly:
			// A fitted leak term at or below zero, or one the outgassing
			// hides, is no finding: only its upper bound is evidence.
			fmt.Fprintf(&b, "leak rate       no leak found, below %s (upper bound: V·(dp/dt at the end + %g u))\n",
				calib.Format(res.LeakUpperBound, si), res.CoverageFactor)
			for _, u := range units {
				fmt.Fprintf(&b, "                below %s\n", calib.Format(res.LeakUpperBound, u))
			}
		default:
			fmt.Fprintf(&b, "leak rate       %s (± standard uncertainty)\n", withUnc(res.LeakRate, res.LeakRateUncertainty, si))
			for _, u := range units {
				fmt.Fprintf(&b, "                %s\n", withUnc(res.LeakRate, res.LeakRateUncertainty, u))
			}
		}
		if res.Fit.Model == alerts.ModelCurved {
			fmt.Fprintf(&b, "outgassing      %s at the start of the record\n",
				withUnc(res.OutgassingRate, res.OutgassingRateUncertainty, si))
		} else {
			fmt.Fprintf(&b, "outgassing      none needed: a straight line fits\n")
		}
		writeLeakFit(&b, res, in.unit)
	}
	if r := rep.Reach; r != nil {
		target := calib.Format(r.Target, in.unit)
		switch {
		case !r.Reachable:
			fmt.Fprintf(&b, "reaches         %s never: the fitted rise levels off below it\n", target)
		case r.Time == 0:
			fmt.Fprintf(&b, "reaches         %s: already at or above it at the start\n", target)
		case r.TimeFromEnd <= 0:
			fmt.Fprintf(&b, "reaches         %s %s s after the start, within the record\n", target, seconds(r.Time))
		default:
			fmt.Fprintf(&b, "reaches         %s %s s after the start (%s s after the last reading), if the fit holds\n",
				target, seconds(r.Time), seconds(r.TimeFromEnd))
		}
	}
	fmt.Fprintf(&b, "volume          %s\n", calib.Format(res.Volume, mustUnit("L", calib.Volume)))
	for _, n := range res.Notes {
		fmt.Fprintf(&b, "note            %s\n", n)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// withUnc writes an SI value and its uncertainty in unit u: "6.00e-06 ± 1.5e-09 mbar·L/s".
func withUnc(v, unc float64, u calib.Unit) string {
	return fmt.Sprintf("%s ± %.2g %s", sig3(u.FromSI(v)), u.FromSI(unc), u.Symbol())
}

// seconds writes a time to the second, or to three digits when shorter than 100 s.
func seconds(v float64) string {
	if math.Abs(v) >= 100 {
		return strconv.FormatFloat(v, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'g', 3, 64)
}

// sig3 writes v to three significant digits, keeping trailing zeros.
func sig3(v float64) string {
	if a := math.Abs(v); v != 0 && (a < 0.01 || a >= 1000) {
		return strconv.FormatFloat(v, 'e', 2, 64)
	}
	return strings.TrimSuffix(fmt.Sprintf("%#.3g", v), ".")
}

func writeLeakFit(b *strings.Builder, res alerts.RiseResult, unit calib.Unit) {
	f := res.Fit
	fmt.Fprintf(b, "fit             %s: p0 = %s, a = %s/s", f.Model, withUnc(f.P0, f.P0Uncertainty, unit),
		withUnc(f.Slope, f.SlopeUncertainty, unit))
	if f.Model == alerts.ModelCurved {
		fmt.Fprintf(b, ", b = %s, τ = %.4g ± %.2g s", withUnc(f.Curve, f.CurveUncertainty, unit), f.Tau, f.TauUncertainty)
	}
	fmt.Fprintf(b, "\nfit quality     %d points over %.4g s, noise %s", res.Points, res.Span, calib.Format(res.Noise, unit))
	if res.Resolution > 0 {
		fmt.Fprintf(b, " beyond a %s reading step", calib.Format(res.Resolution, unit))
	}
	fmt.Fprintf(b, ", %d outliers, lag-1 autocorrelation %.2f", res.Outliers, res.Autocorrelation)
	if res.CurvedTried {
		fmt.Fprintf(b, ", ΔBIC %.1f (line − curved)", res.DeltaBIC)
	}
	b.WriteString("\n")
}

// mustUnit returns a unit from the calib table; the names used are fixed.
func mustUnit(name string, d calib.Dimension) calib.Unit {
	u, err := calib.ParseUnit(name, d)
	if err != nil {
		panic("leak: unit missing from calib: " + err.Error())
	}
	return u
}
