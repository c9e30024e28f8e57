package daemon

import (
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"
)

// The next poll slot, by hand: slots every iv from T; a poll that began
// late is not followed at once by the next (whose reading would land
// within the store's 1 ms of this one's: two samples of one gauge at one
// stored time, as a stalled -race run showed), one that overran skips the
// slots it covered, and a slow link that starts on its slots keeps its rate.
func TestNextSlot(t *testing.T) {
	T := time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC)
	ms := func(n float64) time.Time { return T.Add(time.Duration(n * float64(time.Millisecond))) }
	for _, c := range []struct {
		name         string
		iv           time.Duration
		began, ended time.Time
		want         time.Time
		skipped      float64
	}{
		{"on time", 20 * time.Millisecond, ms(0), ms(5), ms(20), 0},
		{"began 19 ms late", 20 * time.Millisecond, ms(19), ms(19.5), ms(40), 1},
		{"began 9 ms late", 20 * time.Millisecond, ms(9), ms(10), ms(20), 0},
		{"overran two slots", 20 * time.Millisecond, ms(0), ms(45), ms(60), 2},
		{"late and overran", 20 * time.Millisecond, ms(38), ms(41), ms(60), 2},
		{"slow link, 0.6 s of a 1 s slot", time.Second, ms(0), ms(600), ms(1000), 0},
	} {
		ctr := prometheus.NewCounter(prometheus.CounterOpts{Name: "skipped"})
		if got := nextSlot(T, c.began, c.ended, c.iv, ctr); !got.Equal(c.want) || testutil.ToFloat64(ctr) != c.skipped {
			t.Errorf("%s: next slot %s with %g skipped, want %s with %g", c.name,
				got.Sub(T), testutil.ToFloat64(ctr), c.want.Sub(T), c.skipped)
		}
	}
}
