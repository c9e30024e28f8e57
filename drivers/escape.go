package drivers

import (
	"fmt"
	"strconv"
)

// Unescape turns the escapes people write in config strings into bytes:
// \r, \n, \t, \0, \\ and \xHH (two hex digits, any byte). Other characters
// pass through as their UTF-8 bytes. A YAML double-quoted string has already
// done this for \r, \n, \t and \x; Unescape makes single-quoted and plain
// strings work the same way.
func Unescape(s string) ([]byte, error) {
	out := make([]byte, 0, len(s))
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c != '\\' {
			out = append(out, c)
			continue
		}
		if i+1 == len(s) {
			return nil, fmt.Errorf("%q ends in a lone backslash (write \\\\ for one backslash)", s)
		}
		i++
		switch s[i] {
		case 'r':
			out = append(out, '\r')
		case 'n':
			out = append(out, '\n')
		case 't':
			out = append(out, '\t')
		case '0':
			out = append(out, 0)
		case '\\':
			out = append(out, '\\')
		case 'x':
			if i+3 > len(s) {
				return nil, fmt.Errorf("%q: \\x at byte %d needs two hex digits", s, i-1)
			}
			v, err := strconv.ParseUint(s[i+1:i+3], 16, 8)
			if err != nil {
				return nil, fmt.Errorf("%q: \\x at byte %d needs two hex digits, got %q", s, i-1, s[i+1:i+3])
			}
			out = append(out, byte(v))
			i += 2
		default:
			return nil, fmt.Errorf("%q: unknown escape \\%c at byte %d (known: \\r \\n \\t \\0 \\\\ \\xHH)", s, s[i], i-1)
		}
	}
	return out, nil
}
