package drivers

import (
	"fmt"
	"strconv"
	"strings"
)

// ParseNumber reads a number as instruments print it. Accepted forms, with
// optional spaces around and an optional sign:
//
//	1.23E-04   +1.230E-4   7.5E+02   5e-3   750   -0.5   .5   12.
//	1.23-04    4.5+2                 mantissa and signed exponent without the E
//
// The second line is the compact form some controllers print: a mantissa
// that contains a decimal point (or is a plain integer) directly followed by
// a sign and the exponent digits, so "1.23-04" is 1.23×10⁻⁴. Everything
// else is refused: hex floats, "inf", "nan", digit separators, thousands
// commas, decimal commas and trailing units.
func ParseNumber(s string) (float64, error) {
	t := strings.TrimSpace(s)
	norm, ok := normalizeNumber(t)
	if !ok {
		return 0, fmt.Errorf("%q is not a number (want forms like 1.23E-04, +1.230E-4, 7.5E+02 or 1.23-04)", s)
	}
	v, err := strconv.ParseFloat(norm, 64)
	if err != nil {
		return 0, fmt.Errorf("%q is out of range for a number", s)
	}
	return v, nil
}

// normalizeNumber checks t against the accepted grammar and rewrites the
// compact exponent form into one strconv.ParseFloat reads.
func normalizeNumber(t string) (string, bool) {
	i := 0
	if i < len(t) && (t[i] == '+' || t[i] == '-') {
		i++
	}
	intDigits := digitsAt(t, i)
	i += intDigits
	fracDigits := 0
	if i < len(t) && t[i] == '.' {
		i++
		fracDigits = digitsAt(t, i)
		i += fracDigits
	}
	if intDigits+fracDigits == 0 {
		return "", false
	}
	mantissa := i
	if i == len(t) {
		return t, true
	}
	if t[i] == 'e' || t[i] == 'E' {
		i++
	}
	compact := i == mantissa
	if i < len(t) && (t[i] == '+' || t[i] == '-') {
		i++
	} else if compact {
		return "", false // a mantissa followed by something other than E or a sign
	}
	exp := digitsAt(t, i)
	if exp == 0 || i+exp != len(t) {
		return "", false
	}
	if compact {
		return t[:mantissa] + "e" + t[mantissa:], true
	}
	return t, true
}

func digitsAt(s string, i int) int {
	n := 0
	for i+n < len(s) && s[i+n] >= '0' && s[i+n] <= '9' {
		n++
	}
	return n
}
