package report

import (
	"bytes"
	"fmt"
	"io"
	"slices"
	"strings"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Formats lists what Write can produce.
var Formats = []string{"html", "svg", "png", "pdf"}

// ContentType is the media type of a format.
func ContentType(format string) string {
	switch format {
	case "html":
		return "text/html; charset=utf-8"
	case "svg":
		return "image/svg+xml"
	case "png":
		return "image/png"
	case "pdf":
		return "application/pdf"
	}
	return "application/octet-stream"
}

// FormatOf returns the format a file name's extension asks for.
func FormatOf(name string) (string, error) {
	i := strings.LastIndexByte(name, '.')
	if i >= 0 {
		if f := strings.ToLower(name[i+1:]); slices.Contains(Formats, f) {
			return f, nil
		}
	}
	return "", fmt.Errorf("%q: want a file ending in .%s", name, strings.Join(Formats, ", ."))
}

// Page size of the picture.
const (
	pageWidth = 25 * vg.Centimeter
	pngDPI    = 144
)

// Write renders the report in format to w.
func Write(w io.Writer, n *Night, format string) error {
	if !slices.Contains(Formats, format) {
		return fmt.Errorf("format %q: want one of %s", format, strings.Join(Formats, ", "))
	}
	if !n.To.After(n.From) {
		return fmt.Errorf("empty period %s to %s", n.From.Format(time.RFC3339), n.To.Format(time.RFC3339))
	}
	n = n.clipped()
	if format == "html" {
		return writeHTML(w, n)
	}
	return writePicture(w, n, format, true)
}

// writePicture draws the panels (and, for a picture on its own, the header
// lines under them) in format.
func writePicture(w io.Writer, n *Night, format string, header bool) error {
	f, err := newFigure(n)
	if err != nil {
		return err
	}
	var lines []string
	if header {
		lines = headerLines(n)
	}
	l := f.layout(len(lines))
	var cv vg.CanvasWriterTo
	switch format {
	case "svg":
		cv = vgsvg.New(pageWidth, l.height)
	case "png":
		cv = vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(pageWidth, l.height), vgimg.UseDPI(pngDPI))}
	case "pdf":
		pdf := vgpdf.New(pageWidth, l.height)
		pdf.EmbedFonts(true)
		cv = pdf
	}
	f.draw(draw.New(cv), l, lines)
	if format != "svg" {
		_, err = cv.WriteTo(w)
		return err
	}
	var buf bytes.Buffer
	if _, err := cv.WriteTo(&buf); err != nil {
		return err
	}
	_, err = w.Write(svgFonts(buf.Bytes()))
	return err
}

// svgFonts gives the SVG's font a fallback, so that a viewer without the
// Liberation fonts (which have Arial's metrics) still draws a sans-serif.
func svgFonts(b []byte) []byte {
	return bytes.ReplaceAll(b, []byte("font-family:Liberation Sans;"),
		[]byte("font-family:'Liberation Sans',Arial,Helvetica,sans-serif;"))
}

// layout is the height of each band of the picture, top to bottom.
type layout struct {
	title, events, press, temp, legend, header, height vg.Length
	legendRows                                         int
}

const legendCols = 3

func (f *figure) layout(headerLines int) layout {
	l := layout{title: 0.9 * vg.Centimeter, press: 9 * vg.Centimeter}
	if f.events != nil {
		l.events = vg.Length(f.lanes)*0.55*vg.Centimeter + 0.4*vg.Centimeter
	}
	if f.temp != nil {
		l.temp = 5.5 * vg.Centimeter
	}
	l.legendRows = (len(f.legend) + legendCols - 1) / legendCols
	l.legend = vg.Length(l.legendRows)*0.5*vg.Centimeter + 0.4*vg.Centimeter
	l.header = vg.Length(headerLines) * 0.45 * vg.Centimeter
	l.height = l.title + l.events + l.press + l.temp + l.legend + l.header + 0.3*vg.Centimeter
	return l
}

// draw lays the bands out on c and aligns the panels' data areas, so that
// one instant is at the same x in each.
func (f *figure) draw(c draw.Canvas, l layout, lines []string) {
	c.SetColor(whiteColor)
	c.Fill(c.Rectangle.Path())
	top := c.Max.Y
	band := func(h vg.Length) draw.Canvas {
		b := c
		b.Max.Y, b.Min.Y = top, top-h
		top -= h
		return b
	}
	title := band(l.title)
	sty := draw.TextStyle{Color: textColor, Font: font.Font{Typeface: "Liberation", Variant: "Sans", Size: vg.Points(13)}, Handler: plot.DefaultTextHandler,
		XAlign: draw.XCenter, YAlign: draw.YCenter}
	title.FillText(sty, title.Center(), titleText(f.n))
	var plots []*plot.Plot
	var areas []draw.Canvas
	for _, b := range []struct {
		p *plot.Plot
		h vg.Length
	}{{f.events, l.events}, {f.press, l.press}, {f.temp, l.temp}} {
		if b.p == nil {
			continue
		}
		plots, areas = append(plots, b.p), append(areas, draw.Crop(band(b.h), 0.3*vg.Centimeter, -0.6*vg.Centimeter, 0, -0.15*vg.Centimeter))
	}
	alignX(plots, areas)
	for i, p := range plots {
		p.Draw(areas[i])
	}
	f.drawLegend(draw.Crop(band(l.legend), 1.5*vg.Centimeter, -0.5*vg.Centimeter, 0, -0.3*vg.Centimeter), l.legendRows)
	if len(lines) > 0 {
		hb := draw.Crop(band(l.header), 0.8*vg.Centimeter, 0, 0, 0)
		hs := sty
		hs.Font.Size, hs.XAlign, hs.YAlign = vg.Points(9), draw.XLeft, draw.YTop
		y := hb.Max.Y
		for _, line := range lines {
			hb.FillText(hs, vg.Point{X: hb.Min.X, Y: y}, line)
			y -= 0.45 * vg.Centimeter
		}
	}
}

// alignX crops each area so that every plot's data area spans the same x
// range: the widest y axis decides the left edge for all.
func alignX(plots []*plot.Plot, areas []draw.Canvas) {
	left, right := make([]vg.Length, len(plots)), make([]vg.Length, len(plots))
	var maxL, maxR vg.Length
	for i, p := range plots {
		dc := p.DataCanvas(areas[i])
		left[i], right[i] = dc.Min.X-areas[i].Min.X, areas[i].Max.X-dc.Max.X
		maxL, maxR = max(maxL, left[i]), max(maxR, right[i])
	}
	for i := range areas {
		areas[i] = draw.Crop(areas[i], maxL-left[i], -(maxR - right[i]), 0, 0)
	}
}

// drawLegend lays the entries out in rows of legendCols below the panels,
// where they cannot cover data.
func (f *figure) drawLegend(c draw.Canvas, rows int) {
	if rows == 0 {
		return
	}
	cw := (c.Max.X - c.Min.X) / legendCols
	rh := (c.Max.Y - c.Min.Y) / vg.Length(rows)
	for i, e := range f.legend {
		r, col := i/legendCols, i%legendCols
		cell := c
		cell.Min.X = c.Min.X + vg.Length(col)*cw
		cell.Max.X = cell.Min.X + cw
		cell.Max.Y = c.Max.Y - vg.Length(r)*rh
		cell.Min.Y = cell.Max.Y - rh
		lg := plot.NewLegend()
		lg.TextStyle.Font.Size, lg.TextStyle.Font.Variant = vg.Points(9), "Sans"
		lg.Top, lg.Left = true, true
		lg.ThumbnailWidth = vg.Points(16)
		lg.Add(e.name, e.thumbs...)
		lg.Draw(cell)
	}
}

func titleText(n *Night) string {
	loc := n.loc()
	from, to := n.From.In(loc), n.To.In(loc)
	layout := "2006-01-02 15:04"
	end := to.Format(layout)
	if from.Format("2006-01-02") == to.Format("2006-01-02") {
		end = to.Format("15:04")
	}
	return fmt.Sprintf("%s: %s to %s %s", n.Chamber, from.Format(layout), end, zoneName(to))
}

func zoneName(t time.Time) string {
	name, _ := t.Zone()
	return name
}

// writeSVGBody renders the picture as SVG without the XML prolog, for
// inlining in HTML.
func svgInline(n *Night) ([]byte, error) {
	var buf bytes.Buffer
	if err := writePicture(&buf, n, "svg", false); err != nil {
		return nil, err
	}
	b := buf.Bytes()
	if i := bytes.Index(b, []byte("<svg")); i > 0 {
		b = b[i:]
	}
	return b, nil
}
