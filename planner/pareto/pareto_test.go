package pareto

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

// Worked by hand: three boxes to (4, 4) in two responses, 3 + 2 + 1; in
// three, two boxes of 4 and 2 that share a unit cube.
func TestHypervolumeHandWorked(t *testing.T) {
	for _, c := range []struct {
		name string
		pts  [][]float64
		ref  []float64
		want float64
	}{
		{"staircase", [][]float64{{1, 3}, {2, 2}, {3, 1}}, []float64{4, 4}, 6},
		{"with a dominated point and one beyond ref", [][]float64{{1, 3}, {2, 2}, {3, 1}, {3, 3}, {0, 5}}, []float64{4, 4}, 6},
		{"one point in 3-D", [][]float64{{0, 0, 0}}, []float64{1, 2, 3}, 6},
		{"two boxes sharing a cube", [][]float64{{0, 0, 1}, {1, 1, 0}}, []float64{2, 2, 2}, 5},
		{"on ref adds nothing", [][]float64{{4, 1}}, []float64{4, 4}, 0},
		{"empty", nil, []float64{1, 1}, 0},
	} {
		if got := Hypervolume(c.pts, c.ref); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%s: %v, want %v", c.name, got, c.want)
		}
	}
}

// The front of ZDT1, f2 = 1 − √f1 for f1 in [0, 1], dominates 2/3 of the
// unit square up to (1, 1) (Zitzler, Deb and Thiele 2000, "Comparison of
// multiobjective evolutionary algorithms: empirical results", Evol.
// Comput. 8(2); the integral of √f1). Points on the front dominate a
// staircase under it, approaching 2/3 from below.
func TestHypervolumeOfZDT1Front(t *testing.T) {
	prev := 0.0
	for _, n := range []int{10, 100, 10000} {
		pts := make([][]float64, n)
		for i := range pts {
			f1 := float64(i) / float64(n-1)
			pts[i] = []float64{f1, 1 - math.Sqrt(f1)}
		}
		hv := Hypervolume(pts, []float64{1, 1})
		if hv >= 2.0/3 || hv <= prev {
			t.Fatalf("%d points: %v after %v; want rising towards 2/3 from below", n, hv, prev)
		}
		prev = hv
	}
	if math.Abs(prev-2.0/3) > 1e-3 {
		t.Errorf("10,000 points: %v, want 2/3 within 1e-3", prev)
	}
}

// The front of DTLZ2 in three responses is the unit sphere's positive
// octant (Deb, Thiele, Laumanns and Zitzler 2002, "Scalable
// multi-objective optimization test problems", CEC): up to (1, 1, 1) it
// dominates the unit cube less the octant, 1 − π/6. A 40 × 40 grid of
// points on it dominates a staircase just under that.
func TestHypervolumeOfDTLZ2Front(t *testing.T) {
	const n = 40
	var pts [][]float64
	for i := range n {
		for j := range n {
			a := math.Pi / 2 * float64(i) / (n - 1)
			b := math.Pi / 2 * float64(j) / (n - 1)
			pts = append(pts, []float64{math.Cos(a) * math.Cos(b), math.Cos(a) * math.Sin(b), math.Sin(a)})
		}
	}
	want := 1 - math.Pi/6
	if hv := Hypervolume(pts, []float64{1, 1, 1}); hv >= want || want-hv > 0.03 {
		t.Errorf("%v, want just under %v", hv, want)
	}
}

// Against inclusion and exclusion over every subset of boxes, an
// independent way to the same volume, on random sets in two to four
// responses; and Improvement against the difference of two volumes.
func TestHypervolumeAgainstInclusionExclusion(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := range 300 {
		d := 2 + trial%3
		n := 1 + rng.IntN(8)
		pts := make([][]float64, n)
		for i := range pts {
			pts[i] = make([]float64, d)
			for k := range pts[i] {
				pts[i][k] = math.Round(rng.Float64()*10) / 10 // ties on purpose
			}
		}
		ref := make([]float64, d)
		for k := range ref {
			ref[k] = 1
		}
		want := 0.0
		for mask := 1; mask < 1<<n; mask++ {
			corner := make([]float64, d)
			bits := 0
			for i := range n {
				if mask&(1<<i) != 0 {
					bits++
					for k := range corner {
						corner[k] = math.Max(corner[k], pts[i][k])
					}
				}
			}
			v := 1.0
			for k := range corner {
				v *= math.Max(0, ref[k]-corner[k])
			}
			if bits%2 == 0 {
				v = -v
			}
			want += v
		}
		if got := Hypervolume(pts, ref); math.Abs(got-want) > 1e-9 {
			t.Fatalf("%d points in %d-D: %v, inclusion-exclusion gives %v (%v)", n, d, got, want, pts)
		}
		p, rest := pts[0], pts[1:]
		if got, want := Improvement(rest, p, ref), Hypervolume(pts, ref)-Hypervolume(rest, ref); math.Abs(got-want) > 1e-9 {
			t.Fatalf("improvement of %v over %v: %v, want %v", p, rest, got, want)
		}
		if d == 2 {
			if got, want := NewStaircase(rest, [2]float64{1, 1}).Improvement(p[0], p[1]), Improvement(rest, p, ref); math.Abs(got-want) > 1e-12 {
				t.Fatalf("staircase improvement of %v over %v: %v, want %v", p, rest, got, want)
			}
		}
	}
}

// The sorting Front in two responses agrees with comparing every pair,
// ties included.
func TestFront2AgreesWithPairs(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for range 500 {
		pts := make([][]float64, 1+rng.IntN(12))
		for i := range pts {
			pts[i] = []float64{float64(rng.IntN(5)), float64(rng.IntN(5))}
		}
		var want []int
		for i, p := range pts {
			beaten := false
			for j, q := range pts {
				beaten = beaten || (j != i && Dominates(q, p))
			}
			if !beaten {
				want = append(want, i)
			}
		}
		if got := Front(pts); !reflect.DeepEqual(got, want) {
			t.Fatalf("%v: front %v, want %v", pts, got, want)
		}
	}
}

// Worked by hand: (3, 4) is beaten by (2, 3), (2, 6) by (1, 5), (5, 5) by
// (3, 4) and others; equal points share a front.
func TestSortAndFront(t *testing.T) {
	pts := [][]float64{{1, 5}, {2, 3}, {4, 1}, {3, 4}, {5, 5}, {2, 6}, {4, 1}}
	want := [][]int{{0, 1, 2, 6}, {3, 5}, {4}}
	if got := Sort(pts); !reflect.DeepEqual(got, want) {
		t.Errorf("Sort: %v, want %v", got, want)
	}
	if got := Front(pts); !reflect.DeepEqual(got, want[0]) {
		t.Errorf("Front: %v, want %v", got, want[0])
	}
	if Dominates([]float64{1, 1}, []float64{1, 1}) || !Dominates([]float64{1, 1}, []float64{1, 2}) || Dominates([]float64{0, 2}, []float64{1, 1}) {
		t.Error("Dominates is wrong on equal, better and crossing points")
	}
}

// TestExpectedImprovementAgainstDraws checks the closed form against the
// mean of Improvement over many draws of the point, and its limits: with
// no spread it is Improvement at the mean; with no steps it is the
// product of two one-response expected improvements.
func TestExpectedImprovementAgainstDraws(t *testing.T) {
	front := [][]float64{{0.1, 0.9}, {0.3, 0.5}, {0.35, 0.6}, {0.6, 0.2}, {0.9, 0.05}, {1.2, 0.01}}
	s := NewStaircase(front, [2]float64{1, 1})
	rng := rand.New(rand.NewPCG(1, 2))
	cases := []struct{ mean, sd [2]float64 }{
		{[2]float64{0.4, 0.4}, [2]float64{0.1, 0.2}},
		{[2]float64{0.2, 0.3}, [2]float64{0.05, 0.05}},
		{[2]float64{0.8, 0.9}, [2]float64{0.3, 0.1}},
		{[2]float64{1.3, 0.5}, [2]float64{0.2, 0.4}}, // mean beyond the reference
		{[2]float64{0.5, 0.5}, [2]float64{1, 1}},
	}
	const n = 400000
	for _, c := range cases {
		var sum, sum2 float64
		for range n {
			v := s.Improvement(c.mean[0]+c.sd[0]*rng.NormFloat64(), c.mean[1]+c.sd[1]*rng.NormFloat64())
			sum, sum2 = sum+v, sum2+v*v
		}
		m := sum / n
		se := math.Sqrt((sum2/n - m*m) / n)
		got := s.ExpectedImprovement(c.mean, c.sd)
		if math.Abs(got-m) > 4*se+1e-12 {
			t.Errorf("mean %v sd %v: closed form %.6f, draws %.6f ± %.6f", c.mean, c.sd, got, m, se)
		}
	}
	for _, m := range [][2]float64{{0.4, 0.4}, {0.2, 0.95}, {0.7, 0.1}, {1.1, 0.1}} {
		if got, want := s.ExpectedImprovement(m, [2]float64{}), s.Improvement(m[0], m[1]); math.Abs(got-want) > 1e-12 {
			t.Errorf("no spread at %v: %v, want Improvement %v", m, got, want)
		}
	}
	empty := NewStaircase(nil, [2]float64{2, 3})
	got := empty.ExpectedImprovement([2]float64{1, 2}, [2]float64{0.5, 0.7})
	// E[(2 − a)⁺]·E[(3 − b)⁺] with z = 2 and 1/0.7, from the closed form
	// of one response's expected improvement.
	ei := func(m, sd, c float64) float64 {
		z := (c - m) / sd
		return sd * (z*0.5*math.Erfc(-z/math.Sqrt2) + math.Exp(-z*z/2)/math.Sqrt(2*math.Pi))
	}
	if want := ei(1, 0.5, 2) * ei(2, 0.7, 3); math.Abs(got-want) > 1e-12 {
		t.Errorf("no steps: %v, want %v", got, want)
	}
}
