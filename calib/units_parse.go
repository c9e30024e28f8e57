package calib

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode"
)

// Parse reads a quantity such as "5e-3 mbar", "2Torr", "1.2e-6 mbar*L/s",
// "30 L", "150 C", "6 cm" or "870 kg/m3" and returns its value in the base
// unit of want (see Dimension).
//
// The number is Go float syntax (decimal or hexadecimal, digits may be
// grouped with "_"; "1.2E-6" is fine); NaN and infinities are refused. The
// unit follows, with or without a space. In the unit, "*", ".", "·", "⋅" and
// a space all mean a product ("mbar L/s", "mbar·L/s"), "³" and "²" may be
// written as superscripts, and "µ" or "μ" as "u".
//
// Unit names are matched exactly first, so "mPa" (millipascal) and "MPa"
// (megapascal) stay apart; a name that matches nothing is then matched
// ignoring case ("torr", "PA", "MBAR"), and is an error when that reaches two
// units ("mpa"). "micron" means µmHg for a pressure and µm for a length.
// Gauge pressures ("psig", "barg") are refused: holdfast takes absolute
// pressures only.
//
// Parse takes any sign: whether a negative value makes sense (a pressure
// never, a temperature in °C often) is the caller's rule. It refuses only
// what no measurement can be: temperatures below absolute zero. A
// temperature is a reading, never a difference: "5 F" is −15 °C.
func Parse(s string, want Dimension) (float64, error) {
	num, unit, err := splitQuantity(s)
	if err != nil {
		return 0, fmt.Errorf("%w; want %s such as %q", err, dimArticle(want), want.example())
	}
	u, err := ParseUnit(unit, want)
	if err != nil {
		if c, cerr := unitCandidates(unit); cerr == nil {
			return 0, fmt.Errorf("%q is %s; want %s such as %q", s, dimArticle(c[0].Dim), dimArticle(want), want.example())
		}
		return 0, fmt.Errorf("%q: %w", s, err)
	}
	v, err := strconv.ParseFloat(num, 64)
	if err != nil {
		if errors.Is(err, strconv.ErrRange) {
			return 0, fmt.Errorf("%q: number out of range", s)
		}
		return 0, fmt.Errorf("%q: %q is not a number", s, num)
	}
	si := u.ToSI(v)
	if err := checkUnitSI(si, u); err != nil {
		return 0, fmt.Errorf("%q: %w", s, err)
	}
	return si, nil
}

// splitQuantity cuts "5e-3 mbar" into "5e-3" and "mbar". It reports an
// empty string, a missing number and a missing unit.
func splitQuantity(s string) (num, unit string, err error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return "", "", errors.New("empty value")
	}
	n := quantityNumberLen(t)
	if n == 0 {
		if isNonFiniteWord(t) {
			return "", "", fmt.Errorf("%q is not a finite number", s)
		}
		return "", "", fmt.Errorf("%q has no number", s)
	}
	num, unit = t[:n], strings.TrimSpace(t[n:])
	switch {
	case unit == "":
		return "", "", fmt.Errorf("%q has no unit", s)
	case unit[0] == ',':
		return "", "", fmt.Errorf("%q: write the decimal point as \".\", not \",\"", s)
	}
	return num, unit, nil
}

// isNonFiniteWord reports whether t starts with a spelling of NaN or infinity.
func isNonFiniteWord(t string) bool {
	t = strings.ToLower(strings.TrimLeft(t, "+-"))
	return strings.HasPrefix(t, "nan") || strings.HasPrefix(t, "inf")
}

// quantityNumberLen returns the length of the number at the start of t: an
// optional sign, then decimal digits with an optional point and exponent,
// or a hexadecimal mantissa with its p exponent. It returns 0 when t does
// not start with a number. strconv.ParseFloat checks the details
// (underscore placement).
func quantityNumberLen(t string) int {
	i := 0
	if i < len(t) && (t[i] == '+' || t[i] == '-') {
		i++
	}
	isDigit := func(c byte) bool { return c >= '0' && c <= '9' || c == '_' }
	exp := byte('e')
	if strings.HasPrefix(strings.ToLower(t[i:]), "0x") {
		i += 2
		isDigit = func(c byte) bool { return strings.IndexByte("0123456789abcdefABCDEF_", c) >= 0 }
		exp = 'p'
	}
	digits := 0
	for i < len(t) && (isDigit(t[i]) || t[i] == '.') {
		if t[i] != '.' && t[i] != '_' {
			digits++
		}
		i++
	}
	if digits == 0 {
		return 0
	}
	if i < len(t) && (t[i]|0x20) == exp {
		j := i + 1
		if j < len(t) && (t[j] == '+' || t[j] == '-') {
			j++
		}
		k := j
		for k < len(t) && t[k] >= '0' && t[k] <= '9' {
			k++
		}
		if k > j {
			i = k
		}
	}
	return i
}

// normalizeUnitName writes a unit the way the table does: trimmed, every
// product sign and inner space as "*", superscript digits as digits, the
// micro sign as "u".
func normalizeUnitName(name string) string {
	var b strings.Builder
	space := false
	for _, r := range strings.TrimSpace(name) {
		if unicode.IsSpace(r) {
			space = true
			continue
		}
		if space {
			if last := b.String(); last != "" && !strings.HasSuffix(last, "*") && r != '*' && r != '/' &&
				!strings.HasSuffix(last, "/") {
				b.WriteByte('*')
			}
			space = false
		}
		switch r {
		case '·', '⋅', '.':
			r = '*'
		case '³':
			r = '3'
		case '²':
			r = '2'
		case 'µ', 'μ':
			r = 'u'
		}
		b.WriteRune(r)
	}
	return b.String()
}

// ParseDuration reads a duration: Go's form ("1s", "250ms", "1h30m"), days
// ("2d", "1.5d", "1d12h"; a day is 24 h), or a number and a time unit
// ("30 min", "2 h", "90 s").
func ParseDuration(s string) (time.Duration, error) {
	t := strings.TrimSpace(s)
	if d, err := time.ParseDuration(t); err == nil {
		return d, nil
	}
	if d, ok, err := parseDays(t); ok {
		return d, err
	}
	sec, err := Parse(t, Time)
	if err != nil {
		return 0, fmt.Errorf("%w (Go forms like \"1h30m\" and \"2d\" work too)", err)
	}
	return secondsToDuration(sec, s)
}

// parseDays reads "<number>d" optionally followed by a Go duration
// ("1d12h"). ok is false when t does not have that shape.
func parseDays(t string) (d time.Duration, ok bool, err error) {
	i := quantityNumberLen(t)
	if i == 0 || i >= len(t) || t[i] != 'd' || strings.ContainsAny(t[:i], "xXpP") {
		return 0, false, nil
	}
	days, err := strconv.ParseFloat(t[:i], 64)
	if err != nil {
		return 0, false, nil
	}
	var rest time.Duration
	if r := t[i+1:]; r != "" {
		if r[0] == '+' || r[0] == '-' {
			return 0, false, nil
		}
		if rest, err = time.ParseDuration(r); err != nil {
			return 0, false, nil
		}
		if days < 0 || strings.HasPrefix(t, "-") {
			rest = -rest // "-1d12h" is minus a day and a half, as "-1h30m" is in Go
		}
	}
	d, err = secondsToDuration(days*86400, t)
	if err != nil {
		return 0, true, err
	}
	sum := d + rest
	if (rest > 0 && sum < d) || (rest < 0 && sum > d) {
		return 0, true, fmt.Errorf("duration %q out of range (about ±292 years)", t)
	}
	return sum, true, nil
}

// secondsToDuration rounds sec to the nearest nanosecond.
func secondsToDuration(sec float64, s string) (time.Duration, error) {
	ns := math.Round(sec * 1e9)
	if math.IsNaN(ns) || ns >= math.MaxInt64 || ns <= math.MinInt64 {
		return 0, fmt.Errorf("duration %q out of range (about ±292 years)", s)
	}
	return time.Duration(ns), nil
}

// ParsePercent reads a share written as a percentage ("5%", "0.5 %") as a
// fraction (0.05). It reports false for text without the % sign, or whose
// number does not read or is not finite; the caller checks the range.
func ParsePercent(s string) (float64, bool) {
	num, ok := strings.CutSuffix(strings.TrimSpace(s), "%")
	v, err := strconv.ParseFloat(strings.TrimSpace(num), 64)
	if !ok || err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v / 100, true
}
