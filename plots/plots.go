// Package plots draws the campaign's figures as SVG (gonum.org/v1/plot):
// the best result so far against the run number, the surrogate's
// prediction along a slice through the predicted optimum, where the
// optimum probably is (per factor and for a pair of factors), the
// distribution of the best achievable value, and the leave-one-out check.
//
// Every figure labels its axes with the factors' and the response's names
// and units. The package only draws: it takes numbers the planner computed
// and returns bytes; it reads and writes no files.
package plots

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"benchtender/campaign"
)

// Figure is one drawn plot.
type Figure struct {
	Name    string // short key, e.g. "slice-temperature"
	Title   string
	Caption string // one or two sentences saying how to read it
	SVG     []byte // a standalone SVG document, without the XML prolog
}

// The colours are our own: dark slate ink, ochre for the model, teal for
// measured runs.
var (
	ink    = color.RGBA{0x22, 0x31, 0x3f, 0xff}
	ochre  = color.RGBA{0xb8, 0x73, 0x1b, 0xff}
	band   = color.RGBA{0xf1, 0xdd, 0xbd, 0xff}
	teal   = color.RGBA{0x1f, 0x6f, 0x6b, 0xff}
	grey   = color.RGBA{0x9a, 0xa5, 0xb1, 0xff}
	paleBg = color.RGBA{0xd9, 0xe4, 0xe3, 0xff}
)

// RunColour is the stroke colour of the glyph that marks a measured run in
// every figure (tests count runs by it).
const RunColour = "#1F6F6B"

const width, height = 5.2 * vg.Inch, 3.4 * vg.Inch

// newPlot returns a plot in the house style: sans-serif text, light grid.
func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	for _, s := range []*draw.TextStyle{&p.Title.TextStyle, &p.X.Label.TextStyle, &p.Y.Label.TextStyle, &p.X.Tick.Label, &p.Y.Tick.Label, &p.Legend.TextStyle} {
		s.Font.Variant = "Sans"
		s.Color = ink
	}
	p.Title.TextStyle.Font.Size = vg.Points(12)
	p.X.Label.TextStyle.Font.Size = vg.Points(11)
	p.Y.Label.TextStyle.Font.Size = vg.Points(11)
	p.X.LineStyle.Color, p.Y.LineStyle.Color = ink, ink
	p.X.Tick.LineStyle.Color, p.Y.Tick.LineStyle.Color = ink, ink
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = paleBg, paleBg
	p.Add(g)
	return p
}

// axisLabel is "name (unit)", or the name alone when it has no unit.
func axisLabel(name, unit string) string {
	if strings.TrimSpace(unit) == "" {
		return name
	}
	return fmt.Sprintf("%s (%s)", name, unit)
}

// render writes the plot as SVG and drops the XML prolog and the
// generator comment, so the document can be placed inside a page.
func render(p *plot.Plot) ([]byte, error) {
	w, err := p.WriterTo(width, height, "svg")
	if err != nil {
		return nil, fmt.Errorf("plots: %w", err)
	}
	var b bytes.Buffer
	if _, err := w.WriteTo(&b); err != nil {
		return nil, fmt.Errorf("plots: %w", err)
	}
	return withoutProlog(b.Bytes()), nil
}

// renderWithScale writes the plot as SVG with a vertical colour scale of
// cm at its right, labelled.
func renderWithScale(p *plot.Plot, cm palette.ColorMap, label string) ([]byte, error) {
	bar := newPlot("", "", label)
	bar.Add(scaleBar{cm})
	bar.X.Min, bar.X.Max, bar.Y.Min, bar.Y.Max = 0, 1, cm.Min(), cm.Max()
	bar.HideX()
	bar.Title.Text = " " // the same top margin as the plot's title
	bar.Title.TextStyle.Font.Size = p.Title.TextStyle.Font.Size
	c := vgsvg.New(width, height)
	dc := draw.New(c)
	const barWidth = 0.85 * vg.Inch
	p.Draw(draw.Crop(dc, 0, -barWidth, 0, 0))
	bar.Draw(draw.Crop(dc, width-barWidth+0.1*vg.Inch, 0, 0, 0))
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return nil, fmt.Errorf("plots: %w", err)
	}
	return withoutProlog(b.Bytes()), nil
}

// scaleBar draws a colour map as a column of filled bands (vector shapes:
// an embedded raster image is drawn one pixel wide by some SVG viewers).
type scaleBar struct{ cm palette.ColorMap }

func (b scaleBar) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	const n = 64
	lo, hi := b.cm.Min(), b.cm.Max()
	for i := 0; i < n; i++ {
		v0, v1 := lo+(hi-lo)*float64(i)/n, lo+(hi-lo)*float64(i+1)/n
		col, err := b.cm.At((v0 + v1) / 2)
		if err != nil {
			continue
		}
		x0, x1, y0, y1 := trX(0), trX(1), trY(v0), trY(v1)
		c.FillPolygon(col, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1 + 0.3}, {X: x0, Y: y1 + 0.3}})
	}
}

// withoutProlog drops what comes before the <svg> element (the XML prolog,
// the generator comment), so the document can be placed inside a page.
func withoutProlog(out []byte) []byte {
	if i := bytes.Index(out, []byte("<svg")); i >= 0 {
		return out[i:]
	}
	return out
}

// runGlyphs marks measured runs: teal dots.
func runGlyphs(pts plotter.XYs) (*plotter.Scatter, error) {
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, fmt.Errorf("plots: %w", err)
	}
	s.GlyphStyle.Color = teal
	s.GlyphStyle.Radius = vg.Points(2.6)
	s.GlyphStyle.Shape = draw.CircleGlyph{}
	return s, nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// categoryTicks labels a categorical factor's axis with its category names.
func categoryTicks(f campaign.Factor) plot.Ticker {
	var ts plot.ConstantTicks
	for i, c := range f.Categories {
		ts = append(ts, plot.Tick{Value: float64(i), Label: c})
	}
	return ts
}
