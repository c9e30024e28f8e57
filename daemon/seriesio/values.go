package seriesio

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"holdfast/calib"
)

// canonicalNaN is the NaN strconv.ParseFloat returns for "NaN".
var canonicalNaN = math.Float64bits(math.NaN())

// formatFloat writes v so parseFloat gives back the same bits: the shortest
// decimal that round-trips, NaN, +Inf, -Inf, and for a NaN with other bits
// (0/0 on some machines) NaN:0x followed by its 16 hex digits.
func formatFloat(v float64) string {
	if math.IsNaN(v) && math.Float64bits(v) != canonicalNaN {
		return fmt.Sprintf("NaN:0x%016x", math.Float64bits(v))
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// parseFloat inverts formatFloat; it also accepts what people write
// (1.5e-3, 0.0015, nan, inf).
func parseFloat(s string) (float64, error) {
	if h, ok := strings.CutPrefix(s, "NaN:0x"); ok {
		b, err := strconv.ParseUint(h, 16, 64)
		if err != nil || !math.IsNaN(math.Float64frombits(b)) {
			return 0, fmt.Errorf("%q: NaN:0x must be followed by the 16 hex digits of a NaN", s)
		}
		return math.Float64frombits(b), nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, fmt.Errorf("%q is not a number (write 1.5e-3, 0.0015, NaN, +Inf or -Inf)", s)
	}
	return v, nil
}

// formatQuality writes a quality by name (ok, over-range, …; quality(N) for
// codes without one).
func formatQuality(q uint8) string { return calib.Quality(q).String() }

// parseQuality inverts formatQuality; a bare number 0-255 is accepted too.
func parseQuality(s string) (uint8, error) {
	for q := range calib.Quality(16) {
		if q.String() == s {
			return uint8(q), nil
		}
	}
	inner := s
	if t, ok := strings.CutPrefix(s, "quality("); ok {
		inner = strings.TrimSuffix(t, ")")
	}
	n, err := strconv.ParseUint(inner, 10, 8)
	if err != nil {
		return 0, fmt.Errorf("quality %q: want ok, over-range, under-range, sensor-fault, off or a code 0-255", s)
	}
	return uint8(n), nil
}

// validSeries says what is wrong with a gauge name in an import, or nil:
// 1 to 128 letters, digits, '.', '_' and '-'.
func validSeries(s string) error {
	if s == "" || len(s) > 128 {
		return fmt.Errorf("gauge name %q: want 1 to 128 characters", s)
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '.' || r == '_' || r == '-') {
			return fmt.Errorf("gauge name %q: %q is not allowed; use letters, digits, '.', '_' and '-'", s, r)
		}
	}
	return nil
}
