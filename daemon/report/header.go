package report

import (
	"fmt"
	"html/template"
	"image/color"
	"io"
	"math"
	"time"

	"holdfast/calib"
)

var (
	whiteColor = color.White
	textColor  = color.Gray{Y: 0x20}
)

// Caution closes every report.
const Caution = "holdfast is a monitoring aid, not a safety interlock: check the chamber in person " +
	"and follow local codes and your site's procedures."

// gaugeRow is one gauge's line of the header, formatted.
type gaugeRow struct {
	Gauge, Kind, Min, Max, Final, Status string
	Missing                              bool
}

func (n *Night) unitFor(kind string) calib.Unit {
	if kind == "temperature" {
		return n.Temperature
	}
	return n.Pressure
}

func (n *Night) gaugeRows() []gaugeRow {
	var rows []gaugeRow
	for _, g := range n.Summaries() {
		u := n.unitFor(g.Kind)
		r := gaugeRow{Gauge: g.Gauge, Kind: g.Kind, Min: "—", Max: "—", Final: "—"}
		switch {
		case g.NoData:
			r.Status, r.Missing = "no data: never answered in this period", true
		case g.Points == 0:
			r.Status, r.Missing = fmt.Sprintf("no valid reading (%d not ok, last %s)", g.NotOK, g.LastStatus), true
		default:
			r.Min, r.Max = calib.Format(g.Min, u), calib.Format(g.Max, u)
			r.Final = calib.Format(g.Final, u) + " at " + n.clock(g.FinalAt)
			r.Status = fmt.Sprintf("%d readings, all ok", g.Stored)
			if g.NotOK > 0 {
				r.Status = fmt.Sprintf("%d readings, %d not ok (%.1f %%)", g.Stored, g.NotOK, 100*float64(g.NotOK)/float64(g.Stored))
			}
			if g.LastStatus != calib.QualityOK {
				r.Status += "; last reading " + g.LastStatus.String()
			}
		}
		rows = append(rows, r)
	}
	return rows
}

// clock writes t as the report's local time, with the date when it is not
// the period's last day.
func (n *Night) clock(t time.Time) string {
	t = t.In(n.loc())
	if t.Format("2006-01-02") == n.To.In(n.loc()).Format("2006-01-02") {
		return t.Format("15:04:05")
	}
	return t.Format("Jan 2 15:04:05")
}

// Duration writes d as people read it: "3 d 04 h", "1 h 05 min", "12 min 30 s".
func Duration(d time.Duration) string {
	d = d.Round(time.Second)
	h, m, s := int(d.Hours()), int(d.Minutes())%60, int(d.Seconds())%60
	switch {
	case h >= 48:
		return fmt.Sprintf("%d d %02d h", h/24, h%24)
	case h > 0:
		return fmt.Sprintf("%d h %02d min", h, m)
	case m > 0:
		return fmt.Sprintf("%d min %02d s", m, s)
	}
	return fmt.Sprintf("%d s", s)
}

func (n *Night) pumpDownText(p PumpDown) string {
	target := calib.Format(p.Target, n.Pressure)
	switch {
	case !p.Reached.IsZero() && p.BeganBefore:
		return fmt.Sprintf("%s reached at %s, at least %s after pumping began (it began before the period)", target, n.clock(p.Reached), Duration(p.Took()))
	case !p.Reached.IsZero():
		verdict := "within"
		if p.Within > 0 && p.Took() > p.Within {
			verdict = "beyond"
		}
		return fmt.Sprintf("%s reached at %s, %s after pumping began (%s the %s deadline)", target, n.clock(p.Reached), Duration(p.Took()), verdict, Duration(p.Within))
	case !p.Began.IsZero():
		return fmt.Sprintf("%s not reached; pumping since %s", target, n.clock(p.Began))
	}
	return fmt.Sprintf("%s not reached; not pumping (never below %s)", target, calib.Format(p.Start, n.Pressure))
}

func (n *Night) maxTempText() string {
	v, who, at := n.MaxTemperature()
	if math.IsNaN(v) {
		if hasKind(n.Series, "temperature") {
			return "no valid temperature reading"
		}
		return ""
	}
	return fmt.Sprintf("%s (%s at %s)", calib.Format(v, n.Temperature), who, n.clock(at))
}

func (n *Night) alarmText(a AlarmPeriod) string {
	s := fmt.Sprintf("%s [%s] raised %s", a.Alarm, a.Severity, n.clock(a.Raised))
	if a.Raised.Before(n.From) {
		s = fmt.Sprintf("%s [%s] active since %s (before the period)", a.Alarm, a.Severity, a.Raised.In(n.loc()).Format("Jan 2 15:04"))
	}
	if a.Active() {
		return s + ", still active"
	}
	return s + fmt.Sprintf(", cleared %s after %s", n.clock(a.Cleared), Duration(a.Cleared.Sub(a.Raised)))
}

func (n *Night) holdText(h HoldTest) string {
	s := fmt.Sprintf("%s on %s, %s to %s: %s", h.ID, h.Gauge, n.clock(h.From), n.clock(h.To), holdLabel(h))
	if h.Summary != "" {
		s += " (" + h.Summary + ")"
	}
	return s
}

func (n *Night) periodText() string {
	return fmt.Sprintf("%s to %s (%s)", n.From.In(n.loc()).Format("2006-01-02 15:04"), n.To.In(n.loc()).Format("2006-01-02 15:04 MST"),
		Duration(n.To.Sub(n.From)))
}

// headerLines is the header as text, for a picture on its own.
func headerLines(n *Night) []string {
	lines := []string{"period " + n.periodText()}
	for _, r := range n.gaugeRows() {
		if r.Missing {
			lines = append(lines, fmt.Sprintf("%s: %s", r.Gauge, r.Status))
			continue
		}
		if r.Kind == "pressure" {
			lines = append(lines, fmt.Sprintf("%s: min %s, final %s (%s)", r.Gauge, r.Min, r.Final, r.Status))
		} else {
			lines = append(lines, fmt.Sprintf("%s: max %s, final %s (%s)", r.Gauge, r.Max, r.Final, r.Status))
		}
	}
	for _, p := range n.PumpDowns {
		lines = append(lines, fmt.Sprintf("pump-down %s (%s): %s", p.Alarm, p.Gauge, n.pumpDownText(p)))
	}
	if t := n.maxTempText(); t != "" {
		lines = append(lines, "maximum temperature "+t)
	}
	c := n.Counts()
	lines = append(lines, fmt.Sprintf("alarms: %d raised, %d cleared, %d still active", c.Raised, c.Cleared, c.Active))
	for _, h := range n.HoldTests {
		lines = append(lines, "hold test "+n.holdText(h))
	}
	for _, b := range n.Bakes {
		lines = append(lines, n.bakeText(b))
	}
	lines = append(lines, n.Notes...)
	return append(lines, Caution)
}

// htmlPage is the report as one HTML file: inline CSS, the picture as
// inline SVG, no script and nothing fetched from the network.
var htmlPage = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.N.Chamber}}: report {{.Period}}</title>
<style>
body { font-family: "Liberation Sans", Arial, Helvetica, sans-serif; color: #202020; margin: 1.5em; max-width: 64em; }
h1 { font-size: 1.4em; margin: 0 0 .2em; }
p.period { margin: 0 0 1em; color: #444; }
table { border-collapse: collapse; margin: .4em 0 1.2em; }
th, td { text-align: left; padding: .2em .8em .2em 0; border-bottom: 1px solid #ddd; vertical-align: top; }
th { font-weight: 600; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.missing td { color: #a01010; }
.active { color: #a01010; font-weight: 600; }
h2 { font-size: 1.1em; margin: 1.2em 0 .2em; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; }
p.caution { font-size: .9em; color: #555; border-top: 1px solid #ccc; padding-top: .6em; }
</style>
</head>
<body>
<h1>{{.N.Chamber}}</h1>
<p class="period">{{.Period}} · written {{.Generated}}</p>
<table>
<tr><th>gauge</th><th>kind</th><th>minimum</th><th>maximum</th><th>final</th><th>readings</th></tr>
{{range .Gauges}}<tr{{if .Missing}} class="missing"{{end}}><td>{{.Gauge}}</td><td>{{.Kind}}</td><td class="num">{{.Min}}</td><td class="num">{{.Max}}</td><td class="num">{{.Final}}</td><td>{{.Status}}</td></tr>
{{end}}</table>
{{if .PumpDowns}}<h2>Pump-down</h2>
<table>
<tr><th>rule</th><th>gauge</th><th>target reached</th></tr>
{{range .PumpDowns}}<tr><td>{{.Alarm}}</td><td>{{.Gauge}}</td><td>{{.Text}}</td></tr>
{{end}}</table>
{{end}}{{if .MaxTemp}}<p>Maximum temperature: {{.MaxTemp}}</p>
{{end}}<h2>Alarms</h2>
<p>{{.Counts.Raised}} raised, {{.Counts.Cleared}} cleared, <span{{if .Counts.Active}} class="active"{{end}}>{{.Counts.Active}} still active</span> at the end of the period.</p>
{{if .Alarms}}<ul>
{{range .Alarms}}<li{{if .Active}} class="active"{{end}}>{{.Text}}</li>
{{end}}</ul>
{{end}}{{if .HoldTests}}<h2>Hold tests</h2>
<ul>
{{range .HoldTests}}<li>{{.}}</li>
{{end}}</ul>
{{end}}{{if .Bakes}}<h2>Bakes</h2>
<ul>
{{range .Bakes}}<li>{{.}}</li>
{{end}}</ul>
{{end}}<figure>
{{.SVG}}
</figure>
{{range .N.Notes}}<p>{{.}}</p>
{{end}}<p class="caution">{{.Caution}}</p>
</body>
</html>
`))

type textItem struct {
	Alarm, Gauge, Text string
	Active             bool
}

func writeHTML(w io.Writer, n *Night) error {
	svg, err := svgInline(n)
	if err != nil {
		return err
	}
	data := struct {
		N                 *Night
		Period, Generated string
		Gauges            []gaugeRow
		PumpDowns, Alarms []textItem
		HoldTests         []string
		Bakes             []string
		MaxTemp           string
		Counts            AlarmCounts
		SVG               template.HTML
		Caution           string
	}{N: n, Period: n.periodText(), Generated: n.Generated.In(n.loc()).Format("2006-01-02 15:04:05 MST"),
		Gauges: n.gaugeRows(), MaxTemp: n.maxTempText(), Counts: n.Counts(), SVG: template.HTML(svg), Caution: Caution}
	for _, p := range n.PumpDowns {
		data.PumpDowns = append(data.PumpDowns, textItem{Alarm: p.Alarm, Gauge: p.Gauge, Text: n.pumpDownText(p)})
	}
	for _, a := range n.Alarms {
		data.Alarms = append(data.Alarms, textItem{Alarm: a.Alarm, Text: n.alarmText(a), Active: a.Active()})
	}
	for _, h := range n.HoldTests {
		data.HoldTests = append(data.HoldTests, n.holdText(h))
	}
	for _, b := range n.Bakes {
		data.Bakes = append(data.Bakes, n.bakeText(b))
	}
	return htmlPage.Execute(w, data)
}
