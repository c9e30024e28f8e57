package seriesio

import (
	"errors"
	"fmt"
	"slices"
	"strings"
)

// PickGauges expands the gauge names a caller asked for — each may be a
// comma-separated list, and "all" stands for every known one — and checks
// every name against known. The result is sorted, without repeats.
func PickGauges(asked, known []string) ([]string, error) {
	known = slices.Compact(slices.Sorted(slices.Values(known)))
	if len(known) == 0 {
		return nil, errors.New("the store holds no series yet")
	}
	var out []string
	for _, v := range asked {
		for _, s := range strings.Split(v, ",") {
			switch {
			case s == "all":
				out = append(out, known...)
			case !slices.Contains(known, s):
				return nil, fmt.Errorf("gauge %q: no such gauge or stored series (known: %s)", s, strings.Join(known, ", "))
			default:
				out = append(out, s)
			}
		}
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("gauge: missing; name one or more, or all (known: %s)", strings.Join(known, ", "))
	}
	slices.Sort(out)
	return slices.Compact(out), nil
}
