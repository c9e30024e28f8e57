package calib

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"
)

// A Point is one calibration pair: the gauge's raw signal and the reference
// pressure (Pa) measured at the same moment.
type Point struct {
	Raw       float64 `json:"raw"`
	Reference float64 `json:"reference_pa"`
	Line      int     `json:"line,omitempty"` // where the point came from (a CSV line); 0 when unknown
}

// The model names Fit accepts. "pirani" is an alias of ModelHeatLoss.
const (
	ModelLinear    = "linear"     // p = offset + span·raw
	ModelLogLinear = "log-linear" // log10 p = (raw − raw_at_1pa)/raw_per_decade
	ModelPCHIP     = "pchip"      // monotone piecewise cubic through (raw, log10 p)
	ModelHeatLoss  = "heat-loss"  // raw = S0 + A·p/(1 + p/Pt), inverted for p
	ModelPoly      = "poly"       // log10 p = Σ c_k·z^k, z = (raw − raw_mid)/raw_half
)

// Models returns the model names Fit accepts, aliases included.
func Models() []string {
	return []string{ModelPCHIP, ModelHeatLoss, "pirani", ModelLogLinear, ModelLinear, ModelPoly}
}

// CanonicalModel resolves an alias ("pirani") and rejects unknown names,
// listing the known ones.
func CanonicalModel(name string) (string, error) {
	switch n := strings.ToLower(strings.TrimSpace(name)); n {
	case ModelLinear, ModelLogLinear, ModelPCHIP, ModelHeatLoss, ModelPoly:
		return n, nil
	case "pirani":
		return ModelHeatLoss, nil
	}
	return "", fmt.Errorf("unknown model %q (known: %s)", name, strings.Join(Models(), ", "))
}

// FitOptions tune Fit. The zero value is usable.
type FitOptions struct {
	// Degree is the polynomial degree for ModelPoly; 0 picks min(3, points−2), at least 1.
	Degree int
	// ReferenceUncertainty is the reference's relative expanded uncertainty
	// (k = 2) as its certificate states it, e.g. 0.005 for 0.5 % of reading.
	ReferenceUncertainty float64
	// Resolution is the smallest step of the raw signal (raw units); 0 if unknown.
	Resolution float64
}

// minPoints is the fewest points each model can be fitted to.
func minPoints(model string, degree int) int {
	switch model {
	case ModelHeatLoss:
		return 3
	case ModelPoly:
		return degree + 1
	}
	return 2
}

// Fit fits model to points and returns the calibration with its fit report,
// valid range and uncertainty. Points may come in any order; they are kept
// in the given order in the result. Too few points, a non-positive or
// non-finite value, or points whose raw signal does not move in one
// direction as pressure rises are errors naming the offending points.
func Fit(model string, points []Point, opt FitOptions) (*Calibration, error) {
	model, err := CanonicalModel(model)
	if err != nil {
		return nil, err
	}
	if opt.Degree < 0 || opt.Degree > 6 {
		return nil, fmt.Errorf("poly degree %d: choose 1 to 6", opt.Degree)
	}
	if !(opt.ReferenceUncertainty >= 0 && opt.ReferenceUncertainty < 1) || !(opt.Resolution >= 0) {
		return nil, fmt.Errorf("reference uncertainty %g and resolution %g must be zero or positive (uncertainty below 100 %%)",
			opt.ReferenceUncertainty, opt.Resolution)
	}
	degree := opt.Degree
	if model == ModelPoly && degree == 0 {
		degree = max(1, min(3, len(points)-2))
	}
	if err := checkPoints(model, points, minPoints(model, degree)); err != nil {
		return nil, err
	}
	var c *Calibration
	switch model {
	case ModelLinear:
		c, err = fitLinear(points)
	case ModelLogLinear:
		c, err = fitPoly(points, 1, ModelLogLinear)
	case ModelPoly:
		c, err = fitPoly(points, degree, ModelPoly)
	case ModelPCHIP:
		c, err = fitPCHIP(points)
	case ModelHeatLoss:
		c, err = fitHeatLoss(points)
	}
	if err != nil {
		return nil, fmt.Errorf("%s fit: %w", model, err)
	}
	if err := c.finish(opt); err != nil {
		return nil, fmt.Errorf("%s fit: %w", model, err)
	}
	return c, nil
}

// pointName names point i (0-based) as people count it, with its line if known.
func pointName(points []Point, i int) string {
	if points[i].Line > 0 {
		return fmt.Sprintf("%d (line %d)", i+1, points[i].Line)
	}
	return fmt.Sprint(i + 1)
}

// checkPoints rejects sets no model can use: too few, non-finite values,
// references at or below zero, and raw signals that reverse as pressure rises.
func checkPoints(model string, points []Point, need int) error {
	if len(points) < need {
		return fmt.Errorf("the %s model needs at least %d points, got %d", model, need, len(points))
	}
	var bad []string
	for i, p := range points {
		if math.IsNaN(p.Raw) || math.IsInf(p.Raw, 0) || math.IsNaN(p.Reference) || math.IsInf(p.Reference, 0) {
			bad = append(bad, fmt.Sprintf("point %s: raw %g, reference %g Pa: both must be finite numbers", pointName(points, i), p.Raw, p.Reference))
		} else if p.Reference <= 0 {
			bad = append(bad, fmt.Sprintf("point %s: reference %g Pa: must be above zero (a zero reading belongs in a baseline, not a fit)", pointName(points, i), p.Reference))
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%s", strings.Join(bad, "; "))
	}
	return checkMonotone(model, points)
}

// byPressure returns the indices of points ordered by reference, ties by raw.
func byPressure(points []Point) []int {
	idx := make([]int, len(points))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int {
		if c := cmp.Compare(points[a].Reference, points[b].Reference); c != 0 {
			return c
		}
		return cmp.Compare(points[a].Raw, points[b].Raw)
	})
	return idx
}

// direction is +1 when raw rises with pressure over the whole set, −1 when it falls, 0 when flat.
func direction(points []Point) int {
	idx := byPressure(points)
	return cmp.Compare(points[idx[len(idx)-1]].Raw, points[idx[0]].Raw)
}

// checkMonotone names every pair of pressure-neighbours whose raw steps
// against the set's overall direction. Every model here is monotone: a gauge
// whose signal reverses cannot be read back to one pressure.
func checkMonotone(model string, points []Point) error {
	dir := direction(points)
	if dir == 0 {
		return fmt.Errorf("raw is %g at every pressure: the signal does not follow pressure", points[0].Raw)
	}
	if model == ModelHeatLoss && dir < 0 {
		return fmt.Errorf("raw falls as pressure rises over the whole set; the heat-loss model needs raw to increase with pressure")
	}
	want := "increase"
	if dir < 0 {
		want = "decrease"
	}
	idx := byPressure(points)
	var bad []string
	for k := 1; k < len(idx); k++ {
		a, b := points[idx[k-1]], points[idx[k]]
		if cmp.Compare(b.Raw, a.Raw) == -dir && b.Reference > a.Reference {
			bad = append(bad, fmt.Sprintf("points %s and %s: reference %g then %g Pa but raw %g then %g",
				pointName(points, idx[k-1]), pointName(points, idx[k]), a.Reference, b.Reference, a.Raw, b.Raw))
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%s — a monotone model needs raw to %s with pressure; re-measure or remove one point of each pair",
			strings.Join(bad, "; "), want)
	}
	return nil
}
