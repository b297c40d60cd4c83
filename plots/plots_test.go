package plots

import (
	"bytes"
	"encoding/xml"
	"io"
	"math"
	"math/rand/v2"
	"regexp"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
)

var (
	temp   = campaign.Factor{Name: "temperature", Unit: "°C", Min: 60, Max: 95}
	feed   = campaign.Factor{Name: "feed", Unit: "mL/min", Min: 1, Max: 4}
	yield  = campaign.Response{Name: "yield", Unit: "%", Goal: campaign.Maximise}
	glyphs = regexp.MustCompile(`<path d="[^"]*A[^"]*" style="[^"]*(fill|stroke):` + RunColour)
)

// checkSVG parses the figure as XML and checks that it has text for both
// axes' labels and the expected number of run markers.
func checkSVG(t *testing.T, f Figure, labels []string, runs int) {
	t.Helper()
	if len(f.SVG) < 500 || !bytes.HasPrefix(f.SVG, []byte("<svg")) {
		t.Fatalf("%s: %d bytes, starting %.40q", f.Name, len(f.SVG), f.SVG)
	}
	dec := xml.NewDecoder(bytes.NewReader(f.SVG))
	var texts []string
	inText := false
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("%s: not well-formed SVG: %v", f.Name, err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			inText = tok.Name.Local == "text"
		case xml.CharData:
			if inText {
				texts = append(texts, string(tok))
			}
		case xml.EndElement:
			inText = false
		}
	}
	all := strings.Join(texts, "\n")
	for _, l := range labels {
		if !strings.Contains(all, l) {
			t.Errorf("%s: no text %q in %q", f.Name, l, all)
		}
	}
	// Tick labels: at least two numbers on the axes.
	if n := len(regexp.MustCompile(`(?m)^-?[0-9.]+$`).FindAllString(all, -1)); n < 4 {
		t.Errorf("%s: %d numeric tick labels", f.Name, n)
	}
	if n := len(glyphs.FindAll(f.SVG, -1)); n != runs {
		t.Errorf("%s: %d run markers, want %d", f.Name, n, runs)
	}
	if f.Caption == "" || f.Title == "" {
		t.Errorf("%s: no title or caption", f.Name)
	}
}

func trials(n int) []campaign.Trial {
	rng := rand.New(rand.NewPCG(1, 2))
	out := make([]campaign.Trial, n)
	for i := range out {
		out[i] = campaign.Trial{Point: campaign.Point{60 + 35*rng.Float64(), 1 + 3*rng.Float64()}, Value: 50 + 40*rng.Float64()}
	}
	return out
}

func TestFiguresHaveAxesLabelsAndRuns(t *testing.T) {
	ts := trials(13)
	vals := make([]float64, len(ts))
	for i, tr := range ts {
		vals[i] = tr.Value
	}
	f, err := BestSoFar(yield, vals)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"completed run", "yield (%)"}, 13)

	var bands []planner.Band
	for i := 0; i <= 50; i++ {
		x := 60 + 35*float64(i)/50
		bands = append(bands, planner.Band{X: x, Median: 70 + 10*math.Sin(x/10), Low: 65, High: 85})
	}
	f, err = Slice(temp, yield, bands, ts, 0)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"temperature (°C)", "yield (%)"}, 13)

	m := planner.Marginal{Factor: "temperature", Edges: []float64{60, 70, 80, 90, 95}, Counts: []int{1, 5, 3, 1},
		Grid: []float64{60, 70, 80, 90, 95}, Density: []float64{0.001, 0.05, 0.03, 0.01, 0.0}}
	f, err = Location(temp, m)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"temperature (°C)", "probability density"}, 0)

	rng := rand.New(rand.NewPCG(3, 4))
	xs, ys := make([]float64, 200), make([]float64, 200)
	for i := range xs {
		xs[i], ys[i] = 80+3*rng.NormFloat64(), 2.5+0.3*rng.NormFloat64()
	}
	f, err = Pair(temp, feed, xs, ys, ts, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"temperature (°C)", "feed (mL/min)"}, 13)

	vs := make([]float64, 300)
	for i := range vs {
		vs[i] = 90 + rng.NormFloat64()
	}
	f, err = BestValue(yield, vs, 89.5)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"yield (%)", "probability density"}, 0)

	var checks []planner.CheckPoint
	for i, tr := range ts {
		checks = append(checks, planner.CheckPoint{Index: i, Measured: tr.Value, Predicted: tr.Value + 1, Low: tr.Value - 3, High: tr.Value + 5})
	}
	f, err = LeaveOneOut(yield, checks)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"measured yield (%)", "predicted from the other runs yield (%)"}, 13)
}

// The 2-D density peaks where the draws are: its darkest cell lies
// within a cell or two of the draws' centre.
func TestPairDensityPeaksAtTheDraws(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	xs, ys := make([]float64, 400), make([]float64, 400)
	for i := range xs {
		xs[i], ys[i] = 70+2*rng.NormFloat64(), 3.2+0.2*rng.NormFloat64()
	}
	d := kde2(temp, feed, xs, ys, 48)
	var br, bc int
	for r := range d.z {
		for c := range d.z[r] {
			if d.z[r][c] > d.z[br][bc] {
				br, bc = r, c
			}
		}
	}
	cw, ch := (temp.Max-temp.Min)/48, (feed.Max-feed.Min)/48
	if math.Abs(d.X(bc)-70) > 2*cw || math.Abs(d.Y(br)-3.2) > 2*ch {
		t.Errorf("density peaks at (%.2f, %.3f), the draws centre on (70, 3.2)", d.X(bc), d.Y(br))
	}
	// A density: it integrates to about 1 over the grid (the draws lie
	// well inside the ranges).
	var sum float64
	for r := range d.z {
		for c := range d.z[r] {
			sum += d.z[r][c] * cw * ch
		}
	}
	if math.Abs(sum-1) > 0.02 {
		t.Errorf("density integrates to %.4f", sum)
	}
	f, err := Pair(temp, feed, xs, ys, nil, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	// The map carries its colour scale, labelled, from 0 to 1.
	checkSVG(t, f, []string{"temperature (°C)", "feed (mL/min)", "probability density, share of its peak", "\n0.5\n", "\n1.0"}, 0)
}

func TestFiguresRefuseEmptyInput(t *testing.T) {
	if _, err := BestSoFar(yield, nil); err == nil {
		t.Error("best so far of no runs")
	}
	if _, err := Slice(temp, yield, nil, nil, 0); err == nil {
		t.Error("slice of no points")
	}
	if _, err := Location(temp, planner.Marginal{}); err == nil {
		t.Error("location of no draws")
	}
	if _, err := Pair(temp, feed, []float64{1}, []float64{1}, nil, 0, 1); err == nil {
		t.Error("pair of one draw")
	}
	if _, err := BestValue(yield, []float64{math.NaN()}, 1); err == nil {
		t.Error("best value of no finite draws")
	}
	if _, err := LeaveOneOut(yield, nil); err == nil {
		t.Error("leave-one-out of no runs")
	}
}

// The front figure labels both responses with their units, marks every
// run once in teal, rings each front member in ochre; the hypervolume
// figure labels its axes.
func TestFrontFigures(t *testing.T) {
	energy := campaign.Response{Name: "energy", Unit: "kJ", Goal: campaign.Minimise}
	xs := []float64{80, 90, 70, 85, 60}
	ys := []float64{200, 260, 150, 300, 140}
	f, err := FrontPair(yield, energy, xs, ys, []int{0, 1, 2}, 55, 280)
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, f, []string{"yield (%)", "energy (kJ)"}, 5)
	if n := strings.Count(string(f.SVG), "stroke:#B8731B"); n < 4 {
		t.Errorf("%d ochre strokes; want the staircase and a ring for each of 3 members", n)
	}
	h, err := Hypervolume([]float64{0, 10, 10, 25, 40}, "% × kJ")
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, h, []string{"completed run", "hypervolume (% × kJ)"}, 0)
	if _, err := FrontPair(yield, energy, nil, nil, nil, 0, 0); err == nil {
		t.Error("a front of no runs was drawn")
	}
}
