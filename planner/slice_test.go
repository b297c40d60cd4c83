package planner

import (
	"context"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/testfn"
)

// A slice of a surrogate fitted to 25 evenly spaced runs of the Forrester
// function (Forrester, Sóbester and Keane 2008, Engineering Design via
// Surrogate Modelling; its range on [0, 1] is about -6 to 16) follows the
// function: its median is within 1 of it (under 5% of the range)
// everywhere and its 95% band covers it at nearly every point.
// A maximised response is the same model with the sign turned: the
// slice's medians are the negatives and the band stays ordered.
func TestSliceFollowsTheFunction(t *testing.T) {
	f := testfn.Forrester()
	for _, goal := range []campaign.Goal{campaign.Minimise, campaign.Maximise} {
		sign := 1.0
		if goal == campaign.Maximise {
			sign = -1
		}
		cc := campaign.Config{Name: "f", StateDir: "x", Seed: 3, MaxRuns: 50, Factors: f.Space,
			Response: campaign.Response{Name: "y", Goal: goal}}
		p := New(cc, Default())
		var trials []campaign.Trial
		for i := 0; i < 25; i++ {
			x := float64(i) / 24
			trials = append(trials, campaign.Trial{Point: campaign.Point{x}, Value: sign * f.F([]float64{x})})
		}
		_, fitted, err := p.Diagnose(context.Background(), trials)
		if err != nil {
			t.Fatal(err)
		}
		bands, err := p.Slice(fitted, campaign.Point{0.5}, 0, 101)
		if err != nil {
			t.Fatal(err)
		}
		if len(bands) != 101 || bands[0].X != 0 || bands[100].X != 1 {
			t.Fatalf("%s: %d points from %v to %v", goal, len(bands), bands[0].X, bands[len(bands)-1].X)
		}
		covered := 0
		for _, b := range bands {
			truth := sign * f.F([]float64{b.X})
			if d := b.Median - truth; d > 1 || d < -1 {
				t.Errorf("%s: at %.2f median %.3f, function %.3f", goal, b.X, b.Median, truth)
			}
			if !(b.Low <= b.Median && b.Median <= b.High) {
				t.Errorf("%s: at %.2f band %.3f..%.3f does not hold the median %.3f", goal, b.X, b.Low, b.High, b.Median)
			}
			if b.Low <= truth && truth <= b.High {
				covered++
			}
		}
		if covered < 90 {
			t.Errorf("%s: the 95%% band covers the function at %d of 101 points", goal, covered)
		}
	}
	cc := campaign.Config{Name: "f", StateDir: "x", MaxRuns: 5, Factors: f.Space, Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}
	if _, err := New(cc, Default()).Slice(nil, campaign.Point{0.5}, 1, 10); err == nil {
		t.Error("a slice along a factor that does not exist was accepted")
	}
}
