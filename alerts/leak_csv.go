package alerts

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"holdfast/calib"
)

// RiseCSVHeader is the header line of a pressure-rise CSV file whose
// pressure unit is given elsewhere (holdfast leak --unit). A header may
// name the unit instead: "time_s,pressure_mbar", "time_s,pressure_Pa".
const RiseCSVHeader = "time_s,pressure"

// A RiseRecord is a pressure-rise record as read from a file, pressures
// still in the file's unit.
type RiseRecord struct {
	Time     []float64 // seconds
	Pressure []float64 // the file's unit
	// Step is the finest reading step written in the file, in the file's
	// unit (from the digits: "1.23e-3" has a step of 1e-5); 0 when unknown.
	Step float64
	// Digits is the most significant digits any pressure was written with
	// ("0.0120" has 3); 0 when unknown or 10 or more (continuous values).
	Digits int
	// Unit is the pressure unit the header names ("pressure_mbar"); the
	// zero Unit when the header says only "pressure".
	Unit calib.Unit
}

// ReadingStep returns the resolution the file's digits show, for a file
// unit of unit pascals: readings to Digits significant digits, never finer
// than Step. It is nil when the file shows none.
func (r RiseRecord) ReadingStep(unit float64) ReadingStep {
	if r.Step == 0 && r.Digits == 0 {
		return nil
	}
	return DigitsStep(r.Digits, unit, r.Step*unit)
}

// maxCSVProblems bounds how many bad lines one error lists.
const maxCSVProblems = 20

// ReadRiseCSV reads a pressure-rise CSV file: a header line
// "time_s,pressure" or "time_s,pressure_UNIT" (pressure_mbar, pressure_Pa,
// pressure_Torr), then one time and one pressure per line. It reads CSV as
// encoding/csv does (RFC 4180), so a spreadsheet's export with quoted
// fields and CRLF line ends reads too. Blank lines and lines starting with
// # are ignored, as are spaces around fields and a byte-order mark. Every
// bad line is reported as name:line with what is expected.
func ReadRiseCSV(r io.Reader, name string) (RiseRecord, error) {
	var rec RiseRecord
	var problems []string
	cr := csv.NewReader(bomless(r))
	cr.Comment, cr.FieldsPerRecord, cr.TrimLeadingSpace, cr.ReuseRecord = '#', -1, true, true
	header := false
	step, digits := math.Inf(1), 0
	for {
		f, err := cr.Read()
		if err == io.EOF {
			break
		}
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			problems = append(problems, fmt.Sprintf("%s:%d: %v", name, pe.Line, pe.Err))
			continue
		}
		if err != nil {
			return RiseRecord{}, fmt.Errorf("%s: %w", name, err)
		}
		line, _ := cr.FieldPos(0)
		if !header {
			header = true
			u, err := riseHeader(f)
			if err != nil {
				problems = append(problems, fmt.Sprintf("%s:%d: %v", name, line, err))
				break
			}
			rec.Unit = u
			continue
		}
		t, p, ps, err := parseRiseFields(f)
		if err != nil {
			problems = append(problems, fmt.Sprintf("%s:%d: %v", name, line, err))
			continue
		}
		rec.Time, rec.Pressure = append(rec.Time, t), append(rec.Pressure, p)
		s, d := decimalStep(ps)
		if s > 0 && step > 0 {
			step = min(step, s)
		} else {
			step = 0
		}
		if d >= 10 || d < 0 || digits < 0 {
			digits = -1
		} else {
			digits = max(digits, d)
		}
	}
	if !header && len(problems) == 0 {
		problems = append(problems, fmt.Sprintf("%s: no header line: the first line must be %q or name the unit, as %q", name, RiseCSVHeader, "time_s,pressure_mbar"))
	}
	if len(problems) > 0 {
		return RiseRecord{}, csvProblems(problems)
	}
	if digits > 0 && !math.IsInf(step, 1) { // continuous values (10+ digits) show no resolution
		rec.Step, rec.Digits = step, digits
	}
	return rec, nil
}

// bomless drops a leading UTF-8 byte-order mark, which spreadsheets write
// and encoding/csv would take as part of the first field.
func bomless(r io.Reader) io.Reader {
	br := bufio.NewReader(r)
	if b, err := br.Peek(3); err == nil && string(b) == "\ufeff" {
		br.Discard(3)
	}
	return br
}

// riseHeader checks the header fields and returns the unit they name, if any.
func riseHeader(f []string) (calib.Unit, error) {
	h := make([]string, len(f))
	for i, v := range f {
		h[i] = strings.TrimSpace(v)
	}
	text := strings.Join(h, ",")
	bad := fmt.Errorf("header is %q, want %q (with --unit) or one naming the unit, as %q", text, RiseCSVHeader, "time_s,pressure_mbar")
	if len(h) != 2 || !strings.EqualFold(h[0], "time_s") {
		return calib.Unit{}, bad
	}
	col := strings.ToLower(h[1])
	switch {
	case col == "pressure":
		return calib.Unit{}, nil
	case strings.HasPrefix(col, "pressure_"):
		u, err := calib.ParseUnit(h[1][len("pressure_"):], calib.Pressure)
		if err != nil {
			return calib.Unit{}, fmt.Errorf("header column %q: %w", h[1], err)
		}
		return u, nil
	}
	return calib.Unit{}, bad
}

func csvProblems(p []string) error {
	if len(p) > maxCSVProblems {
		p = append(p[:maxCSVProblems], fmt.Sprintf("... and %d more bad lines", len(p)-maxCSVProblems))
	}
	return errors.New(strings.Join(p, "\n"))
}

// parseRiseFields parses one "time,pressure" row, returning the
// pressure's text too.
func parseRiseFields(f []string) (t, p float64, ps string, err error) {
	if len(f) != 2 {
		return 0, 0, "", fmt.Errorf("%d fields, want 2 separated by a comma (time_s,pressure)", len(f))
	}
	ts, ps := strings.TrimSpace(f[0]), strings.TrimSpace(f[1])
	t, err = strconv.ParseFloat(ts, 64)
	if err != nil || !isFinite(t) {
		return 0, 0, "", fmt.Errorf("time %q is not a number of seconds", ts)
	}
	p, err = strconv.ParseFloat(ps, 64)
	if err != nil || !isFinite(p) {
		return 0, 0, "", fmt.Errorf("pressure %q is not a number", ps)
	}
	if p < 0 {
		return 0, 0, "", fmt.Errorf("pressure %q is negative; an absolute pressure is never below 0 (a gauge's offset is corrected before the record is written)", ps)
	}
	return t, p, ps, nil
}

// decimalStep returns the place value of the last digit written in a
// decimal number and how many significant digits it has ("0.0120" → 1e-4
// and 3, "1.23e-3" → 1e-5 and 3, "150" → 1 and 3); a zero has no
// significant digit. Forms it does not read (hexadecimal) give 0 and −1.
func decimalStep(s string) (step float64, digits int) {
	s = strings.TrimLeft(s, "+-")
	exp := 0
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		e, err := strconv.Atoi(s[i+1:])
		if err != nil {
			return 0, -1
		}
		s, exp = s[:i], e
	}
	if s == "" || strings.ContainsFunc(s, func(r rune) bool { return (r < '0' || r > '9') && r != '.' }) {
		return 0, -1
	}
	if i := strings.IndexByte(s, '.'); i >= 0 {
		exp -= len(s) - i - 1
	}
	mant := strings.TrimLeft(strings.ReplaceAll(s, ".", ""), "0")
	return math.Pow(10, float64(exp)), len(mant)
}
