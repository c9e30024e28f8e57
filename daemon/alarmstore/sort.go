package alarmstore

import (
	"cmp"
	"slices"

	"holdfast/alerts"
)

func sortEvents(evs []alerts.Event) {
	slices.SortStableFunc(evs, func(a, b alerts.Event) int {
		if c := a.At.Compare(b.At); c != 0 {
			return c
		}
		return cmp.Compare(a.Seq, b.Seq)
	})
}
