package alerts

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// AnalyzeRise analyses a pressure-rise record of an isolated chamber: times t
// in seconds (any origin, any order; equal times are averaged), pressures p
// in Pa, the isolated volume in m³. It fits the line and the curved model
// robustly (Huber loss, so a few wild readings do not pull the fit), keeps
// the curved one only when BIC prefers it, and classifies the rise.
//
// BIC rather than AICc: the question is whether an outgassing term is there
// at all, and BIC is consistent (it stops choosing a spurious term as the
// record grows) where AIC keeps choosing the larger model about one time in
// seven for two extra parameters; τ is not even defined when the amplitude is
// 0, which inflates that rate further (common practice for nested models).
// The penalty uses the effective number of points, n·(1 − r1)/(1 + r1) for
// residual lag-1 autocorrelation r1 (Bayley & Hammersley, JRSS Suppl. 8
// (1946) 184, from memory), so a gauge's smoothing filter does not pass for
// curvature.
//
// A record that cannot be judged is not an error: the result is Inconclusive
// with the reason. "Too short" means fewer than MinPoints distinct times or a
// span under MinSpan. Errors are only for unusable input: mismatched lengths,
// values that are not finite, times or pressures so far apart that their
// difference overflows, a volume that is not positive.
func AnalyzeRise(t, p []float64, volume float64, opt RiseOptions) (RiseResult, error) {
	if err := checkRiseInput(t, p, volume); err != nil {
		return RiseResult{}, err
	}
	for _, u := range []struct {
		name string
		v    float64
	}{{"ScaleUncertainty", opt.ScaleUncertainty}, {"VolumeUncertainty", opt.VolumeUncertainty}} {
		if !(u.v >= 0 && u.v < 1) {
			return RiseResult{}, fmt.Errorf("rise options: %s %g is not a relative standard uncertainty from 0 to under 1 (0.01 is 1 %%)", u.name, u.v)
		}
	}
	opt = opt.withDefaults()
	rec := prepareRecord(t, p, opt)
	res := RiseResult{Volume: volume, Classification: Inconclusive, RiseQuality: rec.quality(len(t)),
		ScaleUncertainty: opt.ScaleUncertainty, VolumeUncertainty: opt.VolumeUncertainty}
	if why := rec.tooShort(opt); why != "" {
		res.Reason = why
		return res, nil
	}
	fit, err := fitRise(rec, &res.RiseQuality)
	if err != nil {
		res.Reason = "the fit failed: " + err.Error()
		return res, nil
	}
	res.Fit = fit
	res.summarise()
	if !res.finite() {
		return RiseResult{Volume: volume, Classification: Inconclusive, RiseQuality: rec.quality(len(t)),
			ScaleUncertainty: opt.ScaleUncertainty, VolumeUncertainty: opt.VolumeUncertainty,
			Reason: "the fit failed: it gave values that are not finite numbers (record too ill-conditioned)"}, nil
	}
	return res, nil
}

// finite reports whether every number in the result is finite, as JSON needs.
func (res *RiseResult) finite() bool {
	f := res.Fit
	v := []float64{res.LeakRate, res.LeakRateUncertainty, res.OutgassingRate, res.OutgassingRateUncertainty,
		res.LeakShare, res.Rise, res.RiseUncertainty, res.Noise, res.Autocorrelation, res.DeltaBIC,
		f.P0, f.P0Uncertainty, f.Slope, f.SlopeUncertainty, f.Curve, f.CurveUncertainty, f.Tau, f.TauUncertainty}
	for _, row := range f.Covariance {
		v = append(v, row[:]...)
	}
	for _, x := range v {
		if !isFinite(x) {
			return false
		}
	}
	return true
}

func (rec record) quality(samples int) RiseQuality {
	q := RiseQuality{Samples: samples, Points: len(rec.t), Start: rec.start, Merged: rec.merged,
		Trimmed: rec.trimmed, TrimmedSpan: rec.trimmedSpan, GroupSize: max(rec.groupSize, 1),
		Resolution: median(slicesClone(rec.q)), Notes: []string{}}
	if len(rec.t) > 0 {
		q.Span = rec.t[len(rec.t)-1]
	}
	if rec.trimmed > 0 {
		q.Notes = append(q.Notes, fmt.Sprintf("dropped the first %d points (%.3g s): the pressure was still "+
			"falling, so the record seems to start before the chamber was isolated", rec.trimmed, rec.trimmedSpan))
	}
	if rec.merged > 0 {
		q.Notes = append(q.Notes, fmt.Sprintf("%d samples shared a time with another and were averaged", rec.merged))
	}
	if rec.groupSize > 1 {
		q.Notes = append(q.Notes, fmt.Sprintf("long record: fitted the medians of groups of %d samples", rec.groupSize))
	}
	return q
}

func (rec record) tooShort(opt RiseOptions) string {
	n := len(rec.t)
	if n < opt.MinPoints {
		return fmt.Sprintf("too short: %d distinct times, need at least %d", n, opt.MinPoints)
	}
	if span := rec.t[n-1]; span < opt.MinSpan {
		return fmt.Sprintf("too short: the record spans %.3g s, need at least %.3g s", span, opt.MinSpan)
	}
	return ""
}

// fitRise fits both models, chooses one and returns it in SI units, filling
// the fit-quality fields of q.
func fitRise(rec record, q *RiseQuality) (RiseFit, error) {
	n := len(rec.t)
	span := rec.t[n-1]
	pRef, pScale := rec.p[0], 0.0
	for _, v := range rec.p {
		pScale = max(pScale, math.Abs(v-pRef))
	}
	if pScale == 0 { // a flat record: any scale will do
		pScale = max(math.Abs(pRef), 1e-12)
	}
	tiny := max(1e-12*(math.Abs(pRef)+pScale), 1e-300)
	u, y, sq := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range u {
		u[i], y[i] = rec.t[i]/span, (rec.p[i]-pRef)/pScale
		sq[i] = (rec.q[i] / pScale) * (rec.q[i] / pScale) / (12 * float64(q.GroupSize))
	}
	d := newDesign(u, y, sq, tiny/pScale)
	d.setNoise(rec.diffNoise / pScale)
	var line, curved normFit
	var cerr error
	for round := 0; round < 3; round++ {
		line, curved, cerr = d.fitBoth(rec, q)
		if line.resid == nil {
			return RiseFit{}, cerr
		}
		old := d.sc
		best := bestOf(line, curved, cerr)
		d.solveNoise(best.resid, best.k)
		if math.Abs(d.sc-old) <= 0.05*old {
			break
		}
	}
	if cerr != nil {
		q.Notes = append(q.Notes, "curved model not used: "+cerr.Error())
	}
	r1 := lag1(bestOf(line, curved, cerr).resid, d.s)
	nEff := max(float64(n)*(1-r1)/(1+r1), 5)
	chosen := line
	if cerr == nil {
		q.DeltaBIC = 2*(line.loss-curved.loss)*nEff/float64(n) - 2*math.Log(nEff)
		q.altShare, q.altKnown = normShare(curved), true
		if q.DeltaBIC > 0 {
			chosen = curved
			q.altShare = normShare(line)
		}
	}
	cov, err := d.covariance(chosen, nEff)
	if err != nil && chosen.model == ModelCurved {
		q.Notes = append(q.Notes, "the curved model's uncertainty could not be computed ("+err.Error()+"): fitted a line")
		chosen = line
		cov, err = d.covariance(chosen, nEff)
	}
	if err != nil {
		return RiseFit{}, err
	}
	q.Noise, q.Autocorrelation = d.sc*pScale, r1
	q.Outliers = d.outliers(chosen.resid)
	d.noteFit(chosen, rec, q)
	return toSI(chosen, cov, pRef, pScale, span), nil
}

// normShare returns the share of a normalised fit's rise over the record
// that its linear term explains, as summarise computes it.
func normShare(f normFit) float64 {
	linear, curved := max(f.coef[1], 0), 0.0
	if f.model == ModelCurved {
		curved = max(f.coef[2]*-math.Expm1(-1/f.theta), 0)
	}
	if linear+curved == 0 {
		return 0
	}
	return linear / (linear + curved)
}

func bestOf(line, curved normFit, cerr error) normFit {
	if cerr == nil {
		return curved
	}
	return line
}

// outliers counts residuals more than riseOutlierFactor of their scale off.
func (d *design) outliers(r []float64) int {
	n := 0
	for i, v := range r {
		if math.Abs(v) > riseOutlierFactor*d.s[i] {
			n++
		}
	}
	return n
}

// fitBoth fits the line and, when the record allows, the curved model. A
// zero line (no residuals) means the line failed, with the error.
func (d *design) fitBoth(rec record, q *RiseQuality) (line, curved normFit, cerr error) {
	line, err := d.fitLine()
	if err != nil {
		return normFit{}, normFit{}, err
	}
	n := len(rec.t)
	thMin := tauMinSamples * medianStep(rec.t) / rec.t[n-1]
	switch {
	case n < minCurvedPoints:
		cerr = fmt.Errorf("only %d points: the curved model needs at least %d", n, minCurvedPoints)
	case thMin >= tauMaxSpans:
		cerr = fmt.Errorf("too few sample intervals in the record for the curved model")
	default:
		curved, cerr = d.fitCurved(thMin, tauMaxSpans, line.loss)
	}
	q.CurvedTried = cerr == nil
	return line, curved, cerr
}

func (d *design) noteFit(f normFit, rec record, q *RiseQuality) {
	if f.model == ModelCurved {
		thMin := tauMinSamples * medianStep(rec.t) / rec.t[len(rec.t)-1]
		switch {
		case f.theta >= tauMaxSpans*0.999:
			q.Notes = append(q.Notes, "τ reached its upper bound (3 × the span): the bend is weak, so leak and "+
				"outgassing are hard to separate; a longer record separates them better")
		case f.theta <= thMin*1.001:
			q.Notes = append(q.Notes, "τ reached its lower bound (3 sample intervals): a fast transient at the "+
				"start; a longer settle time before recording avoids it")
		}
	}
	if q.Outliers*10 > len(rec.t) {
		q.Notes = append(q.Notes, fmt.Sprintf("%d of %d points lie more than 3 noise units off the fit: "+
			"check the gauge and the record", q.Outliers, len(rec.t)))
	}
	if q.Autocorrelation > 0.5 {
		q.Notes = append(q.Notes, fmt.Sprintf("the residuals are strongly correlated (r1 = %.2f: a smoothing gauge "+
			"or a curve the model does not follow); uncertainties widened accordingly", q.Autocorrelation))
	}
}

func medianStep(t []float64) float64 {
	d := make([]float64, len(t)-1)
	for i := range d {
		d[i] = t[i+1] - t[i]
	}
	return median(d)
}

// toSI converts a normalised fit and its covariance to SI parameters.
func toSI(f normFit, cov *mat.SymDense, pRef, pScale, span float64) RiseFit {
	out := RiseFit{Model: f.model, P0: pRef + f.coef[0]*pScale, Slope: f.coef[1] * pScale / span}
	if f.model == ModelCurved {
		out.Curve, out.Tau = f.coef[2]*pScale, f.theta*span
	}
	sc := [4]float64{pScale, pScale / span, pScale, span}
	k := cov.SymmetricDim()
	for i := range k {
		for j := range k {
			out.Covariance[i][j] = cov.At(i, j) * sc[i] * sc[j]
		}
	}
	c := out.Covariance
	out.P0Uncertainty, out.SlopeUncertainty = math.Sqrt(c[0][0]), math.Sqrt(c[1][1])
	out.CurveUncertainty, out.TauUncertainty = math.Sqrt(c[2][2]), math.Sqrt(c[3][3])
	return out
}

// summarise derives the rates, the rise and the classification from the fit.
func (res *RiseResult) summarise() {
	f, v, span := res.Fit, res.Volume, res.Span
	res.LeakRate = v * f.Slope
	res.LeakRateUncertainty = res.withScaleAndVolume(res.LeakRate, v*f.SlopeUncertainty)
	if f.Model == ModelCurved {
		res.OutgassingRate = v * f.Curve / f.Tau
		res.OutgassingRateUncertainty = res.withScaleAndVolume(res.OutgassingRate,
			v*f.spread([4]float64{0, 0, 1 / f.Tau, -f.Curve / (f.Tau * f.Tau)}))
	}
	g0, gT := f.gradient(0), f.gradient(span)
	for i := range gT {
		gT[i] -= g0[i]
	}
	res.Rise, res.RiseUncertainty = f.Pressure(span)-f.Pressure(0), f.spread(gT)
	linear, curved := max(f.Slope*span, 0), max(res.Rise-f.Slope*span, 0)
	if linear+curved > 0 {
		res.LeakShare = linear / (linear + curved)
	}
	res.CoverageFactor, res.LeakRateExpanded = CoverageK, CoverageK*res.LeakRateUncertainty
	rate, uRate := v*f.Rate(span), v*f.spread(f.rateGradient(span))
	res.LeakUpperBound = max(rate+CoverageK*res.withScaleAndVolume(rate, uRate), 0)
	res.classify()
}

// withScaleAndVolume combines a rate's standard uncertainty u from the fit
// with the gauge scale's and the volume's relative ones: for Q = V·a the
// relative squares add (JCGM 100:2008, §5.1.6, exponents 1).
func (res *RiseResult) withScaleAndVolume(q, u float64) float64 {
	rel := math.Hypot(res.ScaleUncertainty, res.VolumeUncertainty)
	return math.Hypot(u, q*rel)
}

// rateGradient returns ∂(dp/dt)(t)/∂(P0, Slope, Curve, Tau).
func (f RiseFit) rateGradient(t float64) [4]float64 {
	if f.Tau <= 0 {
		return [4]float64{0, 1, 0, 0}
	}
	e := math.Exp(-t / f.Tau)
	return [4]float64{0, 1, e / f.Tau, f.Curve * e / (f.Tau * f.Tau) * (t/f.Tau - 1)}
}

func (res *RiseResult) classify() {
	rise, u := res.Rise, res.RiseUncertainty
	switch {
	case rise < -riseCoverage*u && -rise > res.Resolution:
		res.Reason = fmt.Sprintf("the pressure falls by %.3g Pa over the record: the chamber does not seem "+
			"isolated (a valve open, a pump or getter still acting, or a drifting gauge)", -rise)
	case math.Abs(rise) <= riseCoverage*u:
		res.Reason = fmt.Sprintf("the rise of %.3g Pa is within noise (under 3 standard uncertainties, %.3g Pa): "+
			"record longer or read a finer gauge", rise, riseCoverage*u)
	case math.Abs(rise) <= res.Resolution:
		res.Reason = fmt.Sprintf("the rise of %.3g Pa is within one reading step (%.3g Pa)", rise, res.Resolution)
	default:
		res.Classification = classOf(res.LeakShare)
		res.Reason = fmt.Sprintf("the linear term explains %.0f %% of the %.3g Pa rise", 100*res.LeakShare, rise)
		if res.Fit.Model == ModelLine {
			res.Reason += " (a straight line fits: no outgassing term needed)"
			res.Notes = append(res.Notes, "a straight rise cannot tell a leak from outgassing that stays "+
				"steady over the record: the leak term holds any such outgassing too, so the leak is at most "+
				"that rate; a repeat after more pumping that gives the same rate confirms a leak")
		}
		if res.Fit.Slope < -riseCoverage*res.Fit.SlopeUncertainty {
			res.Notes = append(res.Notes, "the linear term is negative: something removes gas (a pump, a "+
				"getter, a cooling chamber) or the gauge drifts")
		}
		res.limitConfidence()
	}
	res.Notes = slices.Clip(res.Notes)
}

// limitConfidence keeps a classification from claiming more than the fit
// supports. A leak (leak-dominated, mixed) is claimed only when the leak
// term's interval Q ± k·u excludes zero, and only when the model not
// chosen, if it fits about as well (|ΔBIC| < TellApartBIC), gives the same
// class; so does the line when the curved model's τ is pinned at its
// upper bound (the data then do not place the bend). Otherwise, and when outgassing dominates, the leak is stated only
// as its upper bound, the total rate of rise at the end of the record.
func (res *RiseResult) limitConfidence() {
	q, u := res.LeakRate, res.LeakRateExpanded
	bound := fmt.Sprintf("the leak is at most %.3g Pa·m³/s (the total rate of rise at the end of the record, "+
		"V·dp/dt + %g u)", res.LeakUpperBound, res.CoverageFactor)
	switch {
	case res.Classification == OutgassingDominated:
		res.UpperBoundOnly = true
		res.Reason += "; an upper bound only: " + bound
	case q-u <= 0:
		res.Classification, res.UpperBoundOnly = Inconclusive, true
		res.Reason = fmt.Sprintf("the leak term %.3g ± %.2g Pa·m³/s (k = %g) is not told from zero (%s); %s",
			q, u, res.CoverageFactor, res.Reason, bound)
	case res.altKnown && res.notToldApart() && classOf(res.altShare) != res.Classification:
		other := ModelLine
		if res.Fit.Model == ModelLine {
			other = ModelCurved
		}
		why := fmt.Sprintf("the %s and the %s model fit about equally well (ΔBIC = %.2g)", res.Fit.Model, other, res.DeltaBIC)
		if math.Abs(res.DeltaBIC) >= TellApartBIC {
			why = fmt.Sprintf("the rise bends too little for its curvature to be placed (τ at its bound, %.3g s), so the "+
				"split between leak and outgassing is set by that bound, not by the record", res.Fit.Tau)
		}
		res.Reason = fmt.Sprintf("leak and outgassing cannot be told apart: %s, and the %s model calls the rise %s, "+
			"the %s model %s (a slowly falling outgassing, as during a pump-down, looks like a leak over a short "+
			"record); record longer or after more pumping; %s", why, res.Fit.Model, res.Classification, other,
			classOf(res.altShare), bound)
		res.Classification, res.UpperBoundOnly = Inconclusive, true
	}
}

// notToldApart reports whether the record cannot choose between the line
// and the curved model: their BICs are within TellApartBIC, or the curved
// model's τ sits at its upper bound (its bend is then fixed by the bound).
func (res *RiseResult) notToldApart() bool {
	return math.Abs(res.DeltaBIC) < TellApartBIC ||
		res.Fit.Model == ModelCurved && res.Fit.Tau >= tauMaxSpans*0.999*res.Span
}

func classOf(share float64) Classification {
	switch {
	case share >= LeakShareMin:
		return LeakDominated
	case share <= OutgassingShareMax:
		return OutgassingDominated
	default:
		return Mixed
	}
}
