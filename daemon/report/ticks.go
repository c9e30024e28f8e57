package report

import (
	"math"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// decadeTicks marks a log axis drawn linear in log10 of the value (lo and
// hi are log10 of the bounds): a labelled major tick at every power of ten,
// written as one ("10^-3", drawn by powerText as 10 and a raised −3), and
// minor ticks at 2…9 times it. Over many decades only every second or
// third decade is labelled, so the labels never touch.
type decadeTicks struct{}

func (decadeTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil
	}
	k0, k1 := int(math.Ceil(lo-1e-9)), int(math.Floor(hi+1e-9))
	every := 1
	if span := k1 - k0; span > 20 {
		every = 3
	} else if span > 12 {
		every = 2
	}
	var ticks []plot.Tick
	for k := k0 - 1; k <= k1; k++ {
		if k >= k0 {
			t := plot.Tick{Value: float64(k)}
			if k%every == 0 {
				t.Label = decadeLabel(k)
			}
			ticks = append(ticks, t)
		}
		for m := 2; m < 10; m++ {
			if v := float64(k) + math.Log10(float64(m)); v > lo && v < hi {
				ticks = append(ticks, plot.Tick{Value: v})
			}
		}
	}
	return ticks
}

// decadeLabel is 10^k in powerText's notation.
func decadeLabel(k int) string { return "10^" + strconv.Itoa(k) }

// powerText draws "10^k" as a power of ten: 10 and the exponent raised in a
// smaller size, with a proper minus sign. The plot fonts have no
// superscript digits or minus, so the exponent is drawn, not encoded.
// Other text is drawn as plain text.
type powerText struct{ text.Plain }

const (
	expScale = 0.7  // exponent size over base size
	expRaise = 0.42 // exponent baseline above the base's, in base sizes
)

func splitPower(txt string) (base, exp string, ok bool) {
	base, exp, ok = strings.Cut(txt, "^")
	return base, strings.Replace(exp, "-", "\u2212", 1), ok && !strings.Contains(txt, "\n")
}

func (h powerText) Box(txt string, fnt font.Font) (w, ht, d vg.Length) {
	base, exp, ok := splitPower(txt)
	w, ht, d = h.Plain.Box(base, fnt)
	if ok {
		small := fnt
		small.Size = fnt.Size * expScale
		we, _, _ := h.Plain.Box(exp, small)
		w += we
	}
	return w, ht, d
}

func (h powerText) Draw(c vg.Canvas, txt string, sty text.Style, pt vg.Point) {
	base, exp, ok := splitPower(txt)
	if !ok || sty.Rotation != 0 {
		h.Plain.Draw(c, txt, sty, pt)
		return
	}
	w, _, _ := h.Box(txt, sty.Font)
	pt.X += vg.Length(sty.XAlign) * w
	bs := sty
	bs.XAlign = draw.XLeft
	h.Plain.Draw(c, base, bs, pt)
	wb, _, _ := h.Plain.Box(base, sty.Font)
	es := bs
	es.Font.Size = sty.Font.Size * expScale
	// Plain puts the baseline at pt.Y + height·YAlign − ascent + size; lift
	// the exponent's to expRaise above the base's.
	baseline := func(s text.Style) vg.Length {
		return s.Height("0")*vg.Length(s.YAlign) - s.FontExtents().Ascent + s.Font.Size
	}
	lift := baseline(bs) - baseline(es) + expRaise*sty.Font.Size
	h.Plain.Draw(c, exp, es, vg.Point{X: pt.X + wb, Y: pt.Y + lift})
}

// timeTicks marks a time axis (Unix seconds) at round local times: a step
// from one minute to one day chosen for about six labels, "15:04" labels,
// and the date instead at each midnight.
type timeTicks struct {
	loc    *time.Location
	blank  bool // marks without labels (an upper panel; the bottom one is labelled)
	target int  // labels wanted; 0 means 7
}

var timeSteps = []time.Duration{time.Minute, 2 * time.Minute, 5 * time.Minute, 10 * time.Minute, 15 * time.Minute,
	30 * time.Minute, time.Hour, 2 * time.Hour, 3 * time.Hour, 6 * time.Hour, 12 * time.Hour, 24 * time.Hour}

func (t timeTicks) Ticks(lo, hi float64) []plot.Tick {
	want := t.target
	if want == 0 {
		want = 7
	}
	span := time.Duration((hi - lo) * float64(time.Second))
	step := timeSteps[len(timeSteps)-1]
	for _, s := range timeSteps {
		if span/s <= time.Duration(want) {
			step = s
			break
		}
	}
	for span/step > time.Duration(want) { // beyond a day: whole days
		step += 24 * time.Hour
	}
	minor := step / 2
	if step == 15*time.Minute || step == 3*time.Hour {
		minor = step / 3
	}
	start := time.Unix(int64(math.Floor(lo)), 0).In(t.loc)
	day := time.Date(start.Year(), start.Month(), start.Day(), 0, 0, 0, 0, t.loc)
	var ticks []plot.Tick
	for at := day; !at.After(time.Unix(int64(math.Ceil(hi)), 0)); at = at.Add(minor) {
		x := float64(at.Unix())
		if x < lo || x > hi {
			continue
		}
		tk := plot.Tick{Value: x}
		if at.Sub(day)%step == 0 && !t.blank {
			tk.Label = at.Format("15:04")
			if at.Hour() == 0 && at.Minute() == 0 {
				tk.Label = at.Format("Jan 2")
			}
		}
		ticks = append(ticks, tk)
	}
	return ticks
}
