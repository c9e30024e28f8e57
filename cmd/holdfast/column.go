package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"holdfast/calib"
)

const columnSynopsis = `--height H (--density RHO | --liquid mercury) [flags]

Prints the pressure of a liquid column, p = rho*g*h, in Pa (or --unit).
A closed-top column (vacuum above the liquid, or one limb sealed and
evacuated) gives an absolute pressure; an open U-tube (--open) gives the
difference between the pressures on its two limbs. The output says which.

  holdfast column --height 76cm --density 13595.1kg/m3     # 101325.0 Pa
  holdfast column --height 6cm --density 870kg/m3 --temperature 24C \
      --density-at 20C --expansion 7e-4 --latitude 48.1 --elevation 520m

Mercury is toxic and a glass column under vacuum can break: handle both as
your local codes and your site's safety rules require.`

type columnFlags struct {
	height, density, liquid, temp, densityAt, elevation, unit, latitude string
	expansion, gravity                                                  float64
	open, asJSON                                                        bool
}

func columnFlagSet(stderr io.Writer) (*flag.FlagSet, *columnFlags) {
	fs := newFlags("column", columnSynopsis, stderr)
	f := &columnFlags{}
	fs.StringVar(&f.height, "height", "", "difference of the liquid levels, with a unit: 76cm, 760mm")
	fs.StringVar(&f.density, "density", "", "liquid density with a unit, at --density-at: 870kg/m3")
	fs.StringVar(&f.liquid, "liquid", "", "mercury: density from the mercury table at --temperature (-10 to 340 C), else the conventional 13595.1 kg/m3")
	fs.StringVar(&f.temp, "temperature", "", "the liquid's temperature, e.g. 24C (needs --expansion, or --liquid mercury)")
	fs.StringVar(&f.densityAt, "density-at", "20C", "temperature the --density is quoted at")
	fs.Float64Var(&f.expansion, "expansion", 0, "volumetric expansion coefficient of the liquid, per kelvin (e.g. 7e-4)")
	fs.Float64Var(&f.gravity, "gravity", 0, "local gravity in m/s2 (default: standard 9.80665, or from --latitude)")
	fs.StringVar(&f.latitude, "latitude", "", "latitude in `degrees`: gravity by the 1980 international formula")
	fs.StringVar(&f.elevation, "elevation", "0m", "height above sea level for --latitude (free-air correction), e.g. 520m")
	fs.StringVar(&f.unit, "unit", "Pa", "pressure unit to print in")
	fs.BoolVar(&f.open, "open", false, "open U-tube: the result is a pressure difference, not absolute")
	fs.BoolVar(&f.asJSON, "json", false, "print JSON")
	return fs, f
}

// cmdColumn prints the pressure of a liquid column.
func cmdColumn(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs, f := columnFlagSet(stderr)
	if err := fs.Parse(args); err != nil {
		return err
	}
	if f.height == "" || (f.density == "") == (f.liquid == "") || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("column needs --height and one of --density or --liquid")
	}
	col, unit, gnote, err := f.column()
	if err != nil {
		return fmt.Errorf("column: %w", err)
	}
	p, err := col.Pressure()
	if err != nil {
		return fmt.Errorf("column: %w", err)
	}
	v := unit.FromSI(p)
	kind := "absolute"
	if col.Open {
		kind = "difference"
	}
	if f.asJSON {
		b, err := json.MarshalIndent(map[string]any{
			"pressure_pa": p, "value": v, "unit": unit.Name, "kind": kind,
			"height_m": col.Height, "density_kg_m3": col.DensityNow(), "gravity_m_s2": col.Gravity,
		}, "", "  ")
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "%s\n", b)
		return err
	}
	fmt.Fprintf(stdout, "%s %s\n%s\n", sigDigits(v), unit.Symbol(), col.Kind())
	fmt.Fprintf(stdout, "height %g m, density %.7g kg/m3, gravity %.8g m/s2 (%s)\n", col.Height, col.DensityNow(), col.Gravity, gnote)
	return nil
}

// column turns the flags into a calib.Column, reporting every bad flag.
func (f *columnFlags) column() (calib.Column, calib.Unit, string, error) {
	var errs []error
	get := func(name, s string, d calib.Dimension) float64 {
		if s == "" {
			return 0
		}
		v, err := calib.Parse(s, d)
		if err != nil {
			errs = append(errs, fmt.Errorf("--%s: %w", name, err))
		}
		return v
	}
	col := calib.Column{Height: get("height", f.height, calib.Length), Open: f.open, Expansion: f.expansion}
	col.Density = get("density", f.density, calib.Density)
	col.DensityAt = get("density-at", f.densityAt, calib.Temperature)
	hasTemp := f.temp != ""
	col.Temperature = get("temperature", f.temp, calib.Temperature)
	switch strings.ToLower(f.liquid) {
	case "":
		if hasTemp && f.expansion == 0 {
			errs = append(errs, errors.New("--temperature needs --expansion to correct the density (or use --liquid mercury)"))
		}
	case "mercury", "hg":
		// Without a temperature: the conventional density, as the mmHg unit uses.
		col.Density, col.Expansion = calib.ConventionalMercury, 0
		if hasTemp {
			rho, err := calib.MercuryDensityAt(col.Temperature)
			if err != nil {
				errs = append(errs, fmt.Errorf("--temperature: %w", err))
			}
			col.Density = rho
		}
	default:
		errs = append(errs, fmt.Errorf("--liquid %q: only mercury has a built-in density law; give --density and --expansion", f.liquid))
	}
	col.Gravity = f.gravity
	gnote := "given"
	elev := get("elevation", f.elevation, calib.Length)
	switch {
	case f.gravity != 0 && f.latitude != "":
		errs = append(errs, errors.New("give --gravity or --latitude, not both"))
	case f.latitude != "":
		lat, err := strconv.ParseFloat(strings.TrimSuffix(f.latitude, "°"), 64)
		if err != nil {
			errs = append(errs, fmt.Errorf("--latitude %q: want degrees, e.g. 48.1", f.latitude))
			break
		}
		g, err := calib.LocalGravity(lat, elev)
		if err != nil {
			errs = append(errs, fmt.Errorf("--latitude/--elevation: %w", err))
		}
		col.Gravity, gnote = g, fmt.Sprintf("1980 formula at %g° and %g m", lat, elev)
	case f.gravity == 0:
		col.Gravity, gnote = calib.StandardGravity, "standard"
	}
	unit, err := calib.ParseUnit(f.unit, calib.Pressure)
	if err != nil {
		errs = append(errs, fmt.Errorf("--unit: %w", err))
	}
	return col, unit, gnote, errors.Join(errs...)
}

// sigDigits prints v with at least seven significant digits and at least one decimal.
func sigDigits(v float64) string {
	dec := 1
	if v != 0 {
		dec = max(1, 6-int(math.Floor(math.Log10(math.Abs(v)))))
	}
	return strconv.FormatFloat(v, 'f', dec, 64)
}
