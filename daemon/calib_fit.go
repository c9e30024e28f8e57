package daemon

import (
	"fmt"
	"slices"
	"strings"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
)

// fitRequest asks for a new version fitted to a gauge's stored points.
type fitRequest struct {
	Gauge  string `json:"gauge"`
	Model  string `json:"model"`
	Degree int    `json:"degree,omitempty"`
	// ReferenceUncertainty is the reference's relative expanded uncertainty (k = 2).
	ReferenceUncertainty float64 `json:"reference_uncertainty,omitempty"`
	Resolution           float64 `json:"resolution,omitempty"` // smallest step of the raw signal
	// Points lists the stored point ids to fit; empty means every point of
	// the gauge that is not excluded.
	Points []uint64 `json:"points,omitempty"`
	Note   string   `json:"note,omitempty"`
}

// fit fits the gauge's stored points and stores the result as a new,
// inactive version.
func (d *Daemon) fit(req fitRequest) (calibstore.Record, error) {
	g, err := d.calibratable(req.Gauge)
	if err != nil {
		return calibstore.Record{}, err
	}
	cs := d.calibs()
	stored, err := cs.Points(g.name)
	if err != nil {
		return calibstore.Record{}, err
	}
	use, err := choosePoints(g.name, stored, req.Points)
	if err != nil {
		return calibstore.Record{}, err
	}
	pts := make([]calib.Point, len(use))
	ids := make([]uint64, len(use))
	for i, p := range use {
		pts[i], ids[i] = calib.Point{Raw: p.Raw, Reference: p.Reference}, p.ID
	}
	c, err := calib.Fit(req.Model, pts, calib.FitOptions{Degree: req.Degree, ReferenceUncertainty: req.ReferenceUncertainty, Resolution: req.Resolution})
	if err != nil {
		return calibstore.Record{}, fmt.Errorf("gauge %s: %w (point k is the k-th of the stored points %s)", g.name, err, idList(ids))
	}
	c.Gauge, c.Note, c.ReferenceUnit = g.name, req.Note, g.unit.Name
	return cs.Add(calibstore.Record{Gauge: g.name, Model: c.Model, Calibration: c, PointIDs: ids, Notes: req.Note, Created: d.clock.Now()})
}

// choosePoints picks the points to fit: the ids asked for, or every point
// not excluded.
func choosePoints(gauge string, stored []calibstore.Point, ids []uint64) ([]calibstore.Point, error) {
	if len(ids) == 0 {
		use := slices.DeleteFunc(slices.Clone(stored), func(p calibstore.Point) bool { return p.Excluded != "" })
		if len(use) == 0 {
			return nil, fmt.Errorf("gauge %s has no calibration points to fit: take some with 'holdfast calib point'", gauge)
		}
		return use, nil
	}
	var use []calibstore.Point
	var bad []string
	for _, id := range ids {
		i := slices.IndexFunc(stored, func(p calibstore.Point) bool { return p.ID == id })
		switch {
		case i < 0:
			bad = append(bad, fmt.Sprintf("%d is not a point of gauge %s", id, gauge))
		case stored[i].Excluded != "":
			bad = append(bad, fmt.Sprintf("%d was excluded (%s)", id, stored[i].Excluded))
		default:
			use = append(use, stored[i])
		}
	}
	if len(bad) > 0 {
		return nil, fmt.Errorf("points: %s", strings.Join(bad, "; "))
	}
	return use, nil
}

func idList(ids []uint64) string {
	s := make([]string, len(ids))
	for i, id := range ids {
		s[i] = fmt.Sprintf("#%d", id)
	}
	return strings.Join(s, ", ")
}
