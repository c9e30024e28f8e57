package config

import (
	"errors"
	"fmt"
	"reflect"
	"strings"

	"gopkg.in/yaml.v3"

	"holdfast/calib"
)

// GaugeCalibration is a gauge's calibration setting. Written as a scalar it
// is only the use: "calibration: active" (the default: apply the version
// activated in the store) or "calibration: none" (always the instrument's
// own curve). As a mapping it also names the reference liquid that
// "holdfast calib point --column-height" reads:
//
//	calibration:
//	  use: active
//	  reference_fluid: {name: hydrocarbon oil, density: 870 kg/m3, density_at: 20 C, expansion: 7e-4}
type GaugeCalibration struct {
	Use   string          // active | none
	Fluid *ReferenceFluid // the liquid of the reference column, if one is used
}

// ReferenceFluid describes the liquid of a closed-top reference column:
// p = ρ(t)·g·h with ρ(t) = ρ/(1 + β·(t − t₀)). JSON requests to the API use
// the same fields to override the config for one point.
type ReferenceFluid struct {
	Name        string       `yaml:"name" json:"name,omitempty"`     // for the record: "hydrocarbon oil, lot 7"
	Liquid      string       `yaml:"liquid" json:"liquid,omitempty"` // "mercury": density from its temperature law
	Density     Density      `yaml:"density" json:"density_kg_m3,omitempty"`
	DensityAt   *Temperature `yaml:"density_at" json:"density_at_c,omitempty"` // where density is quoted; default 20 C
	Expansion   float64      `yaml:"expansion" json:"expansion_per_k,omitempty"`
	Temperature *Temperature `yaml:"temperature" json:"temperature_c,omitempty"` // the liquid's temperature; default density_at
	Gravity     float64      `yaml:"gravity" json:"gravity_m_s2,omitempty"`      // m/s²; default from latitude, else standard
	Latitude    *float64     `yaml:"latitude" json:"latitude_deg,omitempty"`
	Elevation   Length       `yaml:"elevation" json:"elevation_m,omitempty"`
}

// Density and Length decode "870 kg/m3", "6 cm" into SI.
type (
	Density float64 // kg/m³
	Length  float64 // m
)

// UnmarshalYAML parses a density with its unit.
func (q *Density) UnmarshalYAML(n *yaml.Node) error { return decodeQ(n, calib.Density, (*float64)(q)) }

// UnmarshalYAML parses a length with its unit.
func (q *Length) UnmarshalYAML(n *yaml.Node) error { return decodeQ(n, calib.Length, (*float64)(q)) }

// calibrationYAML is the mapping form of GaugeCalibration.
type calibrationYAML struct {
	Use   string          `yaml:"use"`
	Fluid *ReferenceFluid `yaml:"reference_fluid"`
}

// UnmarshalYAML reads the scalar or the mapping form. Unknown keys and bad
// values come back as a *yaml.TypeError naming their lines, so the rest of
// the file is still read and every problem reported.
func (c *GaugeCalibration) UnmarshalYAML(n *yaml.Node) error {
	switch n.Kind {
	case yaml.ScalarNode:
		c.Use = n.Value
		return nil
	case yaml.MappingNode:
	default:
		return typeError(n, "want active, none, or a mapping with use and reference_fluid")
	}
	var probs []Problem
	walkKeys(n, reflect.TypeFor[calibrationYAML](), "calibration", map[string]int{}, &probs)
	var msgs []string
	for _, p := range probs {
		msgs = append(msgs, fmt.Sprintf("line %d: %s", p.Line, p.Msg))
	}
	var y calibrationYAML
	if err := n.Decode(&y); err != nil {
		var te *yaml.TypeError
		if !errors.As(err, &te) {
			return err
		}
		msgs = append(msgs, te.Errors...)
	}
	c.Use, c.Fluid = y.Use, y.Fluid
	if len(msgs) > 0 {
		return &yaml.TypeError{Errors: msgs}
	}
	return nil
}

// calibrationOn reports whether stored calibrations apply to the gauge.
func CalibrationOn(gc *GaugeConfig) bool {
	return gc.Calibration == nil || gc.Calibration.Use != "none"
}

// calibration checks a gauge's calibration setting and fills its default;
// it also refuses combined-gauge ranges on a gauge that combines nothing.
func (v *checker) calibration(name string, g *GaugeConfig) {
	path := "gauges." + name + ".calibration"
	c := g.Calibration
	if c == nil {
		v.expect(len(g.Ranges) == 0, "gauges."+name+".ranges", "ranges belong to a combined gauge (one with combine:); remove them here")
		return
	}
	if c.Use == "" {
		c.Use = "active"
	}
	v.expect(c.Use == "active" || c.Use == "none", path, "want active (apply the version activated in the store) or none (always the instrument's own curve), got %q", c.Use)
	v.expect(len(g.Ranges) == 0, "gauges."+name+".ranges", "ranges belong to a combined gauge (one with combine:); remove them here")
	v.expect(g.Kind == "pressure" || g.Kind == "", path, "only pressure gauges are calibrated against a reference; remove calibration from this %s gauge", g.Kind)
	if c.Fluid != nil {
		if _, _, err := c.Fluid.Column(0.01); err != nil {
			v.problem(path+".reference_fluid", "%v", err)
		}
	}
}

// merged returns f with every field set in over replacing f's.
func (f ReferenceFluid) Merged(over *ReferenceFluid) ReferenceFluid {
	if over == nil {
		return f
	}
	if over.Name != "" {
		f.Name = over.Name
	}
	if over.Liquid != "" || over.Density != 0 {
		f.Liquid, f.Density, f.Expansion = over.Liquid, over.Density, over.Expansion
	}
	if over.DensityAt != nil {
		f.DensityAt = over.DensityAt
	}
	if over.Expansion != 0 {
		f.Expansion = over.Expansion
	}
	if over.Temperature != nil {
		f.Temperature = over.Temperature
	}
	if over.Gravity != 0 || over.Latitude != nil {
		f.Gravity, f.Latitude, f.Elevation = over.Gravity, over.Latitude, over.Elevation
	}
	return f
}

// column builds the closed-top column of height h (m) in this liquid and
// describes it for the point's record.
func (f ReferenceFluid) Column(h float64) (calib.Column, string, error) {
	col := calib.Column{Height: h, Expansion: f.Expansion, DensityAt: 20, Gravity: f.Gravity}
	if f.DensityAt != nil {
		col.DensityAt = float64(*f.DensityAt)
	}
	col.Temperature = col.DensityAt
	if f.Temperature != nil {
		col.Temperature = float64(*f.Temperature)
	}
	var errs []error
	switch strings.ToLower(f.Liquid) {
	case "mercury", "hg":
		col.Density, col.Expansion = calib.MercuryDensity(col.Temperature), 0
	case "":
		col.Density = float64(f.Density)
		if !(col.Density > 0) {
			errs = append(errs, errors.New("no density: give density (e.g. density: 870 kg/m3) or liquid: mercury"))
		}
	default:
		errs = append(errs, fmt.Errorf("liquid %q: only mercury has a built-in density law; give density and expansion instead", f.Liquid))
	}
	gnote := "standard gravity"
	switch {
	case f.Gravity != 0 && f.Latitude != nil:
		errs = append(errs, errors.New("give gravity or latitude, not both"))
	case f.Latitude != nil:
		g, err := calib.LocalGravity(*f.Latitude, float64(f.Elevation))
		if err != nil {
			errs = append(errs, err)
		}
		col.Gravity, gnote = g, fmt.Sprintf("gravity %.7g m/s2 at latitude %g and %g m", g, *f.Latitude, float64(f.Elevation))
	case f.Gravity != 0:
		gnote = fmt.Sprintf("gravity %.7g m/s2 as given", f.Gravity)
	default:
		col.Gravity = calib.StandardGravity
	}
	if len(errs) > 0 {
		return col, "", errors.Join(errs...)
	}
	name := f.Name
	if name == "" {
		name = "liquid"
		if f.Liquid != "" {
			name = f.Liquid
		}
	}
	desc := fmt.Sprintf("closed-top column of %s: height %.6g m, density %.6g kg/m3 at %g C, %s",
		name, h, col.DensityNow(), col.Temperature, gnote)
	if _, err := col.Pressure(); err != nil {
		return col, "", err
	}
	return col, desc, nil
}
