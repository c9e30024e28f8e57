package main

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"holdfast/calib"
)

// readPoints reads a CSV of calibration points: a header naming the columns
// raw and reference (any order, other columns ignored), "#" comment lines.
// Reference cells are numbers in refUnit or carry their own pressure unit.
// It also returns the raw resolution the cells' digits imply. Every bad
// line is reported, each as file:line.
func readPoints(path string, refUnit calib.Unit) ([]calib.Point, float64, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, 0, err
	}
	r := csv.NewReader(bytes.NewReader(bytes.TrimPrefix(data, []byte("\ufeff"))))
	r.Comment = '#'
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = true
	head, err := r.Read()
	if err == io.EOF {
		return nil, 0, fmt.Errorf("%s: no header line; the first line must name the columns raw,reference", path)
	}
	if err != nil {
		return nil, 0, fmt.Errorf("%s: %w", path, err)
	}
	line, _ := r.FieldPos(0)
	ri, fi := columnIndex(head, "raw"), columnIndex(head, "reference")
	if ri < 0 || fi < 0 {
		return nil, 0, fmt.Errorf("%s:%d: header %q must name the columns raw and reference", path, line, strings.Join(head, ","))
	}
	var pts []calib.Point
	var errs []error
	res := 0.0
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		line, _ := r.FieldPos(0)
		if err != nil {
			errs = append(errs, fmt.Errorf("%s: %w", path, err))
			continue
		}
		p, step, err := parsePoint(rec, ri, fi, refUnit)
		if err != nil {
			errs = append(errs, fmt.Errorf("%s:%d: %w", path, line, err))
			continue
		}
		p.Line = line
		pts = append(pts, p)
		res = max(res, step)
	}
	if len(errs) > 0 {
		return nil, 0, errors.Join(errs...)
	}
	if len(pts) == 0 {
		return nil, 0, fmt.Errorf("%s: no points after the header", path)
	}
	return pts, res, nil
}

func columnIndex(head []string, name string) int {
	for i, h := range head {
		if strings.EqualFold(strings.TrimSpace(h), name) {
			return i
		}
	}
	return -1
}

func parsePoint(rec []string, ri, fi int, refUnit calib.Unit) (calib.Point, float64, error) {
	if len(rec) <= max(ri, fi) {
		return calib.Point{}, 0, fmt.Errorf("%d fields; want raw and reference in columns %d and %d", len(rec), ri+1, fi+1)
	}
	rawText := strings.TrimSpace(rec[ri])
	raw, err := strconv.ParseFloat(rawText, 64)
	if err != nil || math.IsNaN(raw) || math.IsInf(raw, 0) {
		return calib.Point{}, 0, fmt.Errorf("raw %q is not a number", rawText)
	}
	refText := strings.TrimSpace(rec[fi])
	ref, err := strconv.ParseFloat(refText, 64)
	if err == nil {
		ref = refUnit.ToSI(ref)
	} else if ref, err = calib.Parse(refText, calib.Pressure); err != nil {
		return calib.Point{}, 0, fmt.Errorf("reference: %w", err)
	}
	if !(ref > 0) || math.IsInf(ref, 0) {
		return calib.Point{}, 0, fmt.Errorf("reference %q: a pressure must be above zero", refText)
	}
	return calib.Point{Raw: raw, Reference: ref}, digitStep(rawText), nil
}

// digitStep returns the step of the last written digit: "2.310" → 0.001, "1.5e-3" → 1e-4.
func digitStep(s string) float64 {
	s = strings.TrimLeft(s, "+-")
	exp := 0
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		exp, _ = strconv.Atoi(s[i+1:])
		s = s[:i]
	}
	dec := 0
	if i := strings.IndexByte(s, '.'); i >= 0 {
		dec = len(s) - i - 1
	}
	return math.Pow(10, float64(exp-dec))
}
