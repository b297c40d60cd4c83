package campaign

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

func TestSpaceValidate(t *testing.T) {
	s := Space{{Name: "temp", Min: 0, Max: 100}, {Name: "temp", Min: 5, Max: 5}, {Name: "9bad", Min: math.NaN(), Max: 1}}
	got := s.Validate().Error()
	for _, want := range []string{"factor[1].name: factor \"temp\" is declared twice", "factor[1].max: must be greater than min", "factor[2].name", "factor[2].min: must be a finite number"} {
		if !strings.Contains(got, want) {
			t.Errorf("%q lacks %q", got, want)
		}
	}
	if ps := (Space{}).Validate(); len(ps) != 1 {
		t.Errorf("empty space: %v", ps)
	}
}

func TestUnitBoxRoundTrip(t *testing.T) {
	s := Space{{Name: "a", Min: -5, Max: 10}, {Name: "b", Min: 0, Max: 15}}
	p := Point{2.5, 15}
	u := s.ToUnit(nil, p)
	if u[0] != 0.5 || u[1] != 1 {
		t.Fatalf("ToUnit %v", u)
	}
	back := s.FromUnit(nil, u)
	if back[0] != p[0] || back[1] != p[1] {
		t.Fatalf("FromUnit %v", back)
	}
	if !s.Contains(p) || s.Contains(Point{11, 0}) || s.Contains(Point{math.NaN(), 0}) || s.Contains(Point{1}) {
		t.Error("Contains")
	}
}

func TestResponseLoss(t *testing.T) {
	max := Response{Name: "y", Goal: Maximise}
	min := Response{Name: "y", Goal: Minimise}
	if !max.Better(2, 1) || min.Better(2, 1) || max.Loss(3) != -3 || min.Loss(3) != 3 {
		t.Error("goal handling")
	}
	if ps := (Response{Name: "y", Goal: "maximize"}).Validate(); len(ps) != 1 || ps[0].Key != "goal" {
		t.Errorf("problems %v", ps)
	}
}

func TestRunIDs(t *testing.T) {
	for id, ok := range map[string]bool{"R0001": true, "batch-7.2": true, "..": false, "../x": false, "": false, "a b": false, "x\n": false, strings.Repeat("a", 65): false} {
		if ValidRunID(id) != ok {
			t.Errorf("ValidRunID(%q) = %v", id, !ok)
		}
	}
}

func TestProblemsPrefix(t *testing.T) {
	var ps Problems
	ps.Add("", "whole")
	ps.Add("max", "m")
	ps.Add("[2].name", "n")
	got := ps.Prefix("campaign.factor")
	want := []string{"campaign.factor", "campaign.factor.max", "campaign.factor[2].name"}
	for i, p := range got {
		if p.Key != want[i] {
			t.Errorf("key %d: %q, want %q", i, p.Key, want[i])
		}
	}
	if (Problems{}).Err() != nil {
		t.Error("no problems must be a nil error")
	}
}

func TestConfigInitial(t *testing.T) {
	for d, want := range map[int]int{1: 4, 2: 4, 3: 5, 6: 8} {
		c := Config{Factors: make(Space, d), MaxRuns: 30}
		if c.Initial() != want {
			t.Errorf("%d factors: initial %d, want %d (d+2, at least 4)", d, c.Initial(), want)
		}
	}
	c := Config{Factors: make(Space, 3), MaxRuns: 3}
	if c.Initial() != 3 {
		t.Errorf("initial %d, want capped at 3", c.Initial())
	}
}

// Display shows a continuous value with 4 significant digits and every
// other kind exactly, as status, holds and the console print them.
func TestFactorDisplay(t *testing.T) {
	cases := []struct {
		f    Factor
		v    float64
		want string
	}{
		{Factor{Name: "t", Min: 0, Max: 100}, 72.123456, "72.12"},
		{Factor{Name: "t", Kind: Continuous, Min: 0, Max: 1e6}, 123456.7, "1.235e+05"},
		{Factor{Name: "n", Kind: Integer, Min: 0, Max: 100000}, 12345, "12345"},
		{Factor{Name: "v", Kind: Levels, Levels: []float64{5, 12.5}}, 12.5, "12.5"},
		{Factor{Name: "c", Kind: Categorical, Categories: []string{"Pd", "Pt"}}, 1, "Pt"},
	}
	for _, c := range cases {
		if got := c.f.Display(c.v); got != c.want {
			t.Errorf("%s %v: %q, want %q", c.f.Name, c.v, got, c.want)
		}
		if c.f.Kind == "" && fmt.Sprintf("%.4g", c.v) != c.f.Display(c.v) {
			t.Errorf("differs from %%.4g for %v", c.v)
		}
	}
}

// A categorical factor is named so, in the trade's word; the old kind
// "choice" is refused (issue 20: the project has no users to migrate).
func TestCategoricalKind(t *testing.T) {
	ok := Factor{Name: "cat", Kind: Categorical, Categories: []string{"Pd", "Pt"}}
	if ps := ok.Validate(); len(ps) > 0 {
		t.Errorf("categorical factor: %v", ps)
	}
	old := Factor{Name: "cat", Kind: "choice", Categories: []string{"Pd", "Pt"}}
	if ps := old.Validate(); len(ps) == 0 || ps[0].Key != "kind" {
		t.Errorf("kind \"choice\" accepted: %v", ps)
	}
}

// A response's physical range and plausibility: values outside the range,
// not finite or beyond 1e15 in size are refused with a reason naming the
// response (issue 19: 1e308 was accepted and made the model's checks
// infinite); the range must be ordered.
func TestResponseCheck(t *testing.T) {
	lo, hi := 0.0, 100.0
	r := Response{Name: "yield", Unit: "%", Goal: Maximise, Min: &lo, Max: &hi}
	for _, c := range []struct {
		v    float64
		want string
	}{
		{42, ""}, {0, ""}, {100, ""},
		{-0.5, "below its physical range, 0 to 100 %"},
		{100.5, "above its physical range, 0 to 100 %"},
		{1e308, "beyond 1e+15"},
		{math.Inf(1), "not a finite number"},
		{math.NaN(), "not a finite number"},
	} {
		got := r.Check(c.v)
		if (c.want == "") != (got == "") || !strings.Contains(got, c.want) || (got != "" && !strings.HasPrefix(got, "yield")) {
			t.Errorf("Check(%v) = %q, want %q", c.v, got, c.want)
		}
	}
	if got := (Response{Name: "y"}).Check(-1e14); got != "" {
		t.Errorf("no range, a large but plausible value: %q", got)
	}
	if r.Clamp(111) != 100 || r.Clamp(-3) != 0 || r.Clamp(50) != 50 {
		t.Error("Clamp does not keep values in the range")
	}
	bad := r
	bad.Max = &lo
	if ps := bad.Validate(); len(ps) == 0 || ps[0].Key != "max" {
		t.Errorf("min 0, max 0 accepted: %v", ps)
	}
}
