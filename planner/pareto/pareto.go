// Package pareto holds the arithmetic of trade-offs between several
// responses: which results dominate which, the non-dominated fronts, and
// the hypervolume a set of results dominates up to a reference point.
//
// Every response is to be made small here: a caller negates a response to
// be made large before it asks. A point is a slice of one value per
// response; all points of one call have the same length.
package pareto

import (
	"cmp"
	"math"
	"slices"

	"benchtender/planner/acquisition"
)

// Dominates reports whether a dominates b: no worse in every response and
// better in at least one.
func Dominates(a, b []float64) bool {
	better := false
	for i := range a {
		switch {
		case a[i] > b[i]:
			return false
		case a[i] < b[i]:
			better = true
		}
	}
	return better
}

// Front returns the indices, in ascending order, of the points no other
// point dominates. Equal points are all on the front. In two responses it
// sorts, O(n log n); in more it compares every pair.
func Front(points [][]float64) []int {
	if len(points) > 0 && len(points[0]) == 2 {
		return front2(points)
	}
	var out []int
	for i, p := range points {
		dominated := false
		for j, q := range points {
			if j != i && Dominates(q, p) {
				dominated = true
				break
			}
		}
		if !dominated {
			out = append(out, i)
		}
	}
	return out
}

// front2 is Front in two responses: sorted by the first response, then
// the second, a point is on the front when it has the lowest second value
// among the points with its first value and a second value below every
// point with a lower first value.
func front2(points [][]float64) []int {
	idx := make([]int, len(points))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int {
		if c := cmp.Compare(points[a][0], points[b][0]); c != 0 {
			return c
		}
		return cmp.Compare(points[a][1], points[b][1])
	})
	var out []int
	low := math.Inf(1)
	for g := 0; g < len(idx); {
		// The group of points sharing this first value.
		end := g
		for end < len(idx) && points[idx[end]][0] == points[idx[g]][0] {
			end++
		}
		least := points[idx[g]][1]
		if least < low {
			for _, i := range idx[g:end] {
				if points[i][1] == least {
					out = append(out, i)
				}
			}
			low = least
		}
		g = end
	}
	slices.Sort(out)
	return out
}

// Sort splits the points into successive non-dominated fronts, each a list
// of indices in ascending order: the first is Front(points), the second
// the front of what is left, and so on (the fast non-dominated sort of
// Deb, Pratap, Agarwal and Meyarivan 2002, "A fast and elitist
// multiobjective genetic algorithm: NSGA-II", IEEE Trans. Evol. Comput.
// 6(2), section III-A).
func Sort(points [][]float64) [][]int {
	n := len(points)
	beats := make([][]int, n) // the points i dominates
	count := make([]int, n)   // how many points dominate i
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			switch {
			case Dominates(points[i], points[j]):
				beats[i] = append(beats[i], j)
				count[j]++
			case Dominates(points[j], points[i]):
				beats[j] = append(beats[j], i)
				count[i]++
			}
		}
	}
	var fronts [][]int
	var cur []int
	for i := range n {
		if count[i] == 0 {
			cur = append(cur, i)
		}
	}
	for len(cur) > 0 {
		fronts = append(fronts, cur)
		var next []int
		for _, i := range cur {
			for _, j := range beats[i] {
				if count[j]--; count[j] == 0 {
					next = append(next, j)
				}
			}
		}
		slices.Sort(next)
		cur = next
	}
	return fronts
}

// Hypervolume is the volume of the region that the points dominate and
// that is bounded by ref: the union of the boxes from each point to ref
// (Zitzler and Thiele 1998, the "size of the space covered"). Points not
// strictly better than ref in every response add nothing. It is exact: a
// sweep in two responses, and in more, slices along the last response,
// each slice a hypervolume in one response fewer (the slicing of While,
// Hingston, Barone and Huband 2006, "A faster algorithm for calculating
// hypervolume", IEEE Trans. Evol. Comput. 10(1)); cheap for the few
// responses and few hundred points of a campaign.
func Hypervolume(points [][]float64, ref []float64) float64 {
	var in [][]float64
	for _, p := range points {
		if strictlyBelow(p, ref) {
			in = append(in, p)
		}
	}
	return volume(in, ref)
}

// Improvement is the hypervolume that p adds to the points:
// Hypervolume(points ∪ {p}) − Hypervolume(points), computed as the box
// from p to ref less the part of it the points already dominate.
func Improvement(points [][]float64, p, ref []float64) float64 {
	if !strictlyBelow(p, ref) {
		return 0
	}
	box := 1.0
	for i := range p {
		box *= ref[i] - p[i]
	}
	var clipped [][]float64
	for _, q := range points {
		c := make([]float64, len(q))
		for i := range q {
			c[i] = math.Max(q[i], p[i])
		}
		if strictlyBelow(c, ref) {
			clipped = append(clipped, c)
		}
	}
	return math.Max(0, box-volume(clipped, ref))
}

func strictlyBelow(p, ref []float64) bool {
	for i := range p {
		if !(p[i] < ref[i]) {
			return false
		}
	}
	return true
}

// volume is the hypervolume of points that are all strictly below ref.
func volume(points [][]float64, ref []float64) float64 {
	if len(points) == 0 {
		return 0
	}
	d := len(ref)
	switch d {
	case 1:
		lo := ref[0]
		for _, p := range points {
			lo = math.Min(lo, p[0])
		}
		return ref[0] - lo
	case 2:
		return sweep2(points, ref)
	}
	// Slices along the last response: between the k-th and (k+1)-th
	// smallest value of it, the region is the (d−1)-dimensional
	// hypervolume of the first k+1 points.
	ps := slices.Clone(points)
	slices.SortFunc(ps, func(a, b []float64) int { return cmp.Compare(a[d-1], b[d-1]) })
	sub := make([][]float64, 0, len(ps))
	total := 0.0
	for k, p := range ps {
		sub = append(sub, p[:d-1])
		top := ref[d-1]
		if k+1 < len(ps) {
			top = ps[k+1][d-1]
		}
		if h := top - p[d-1]; h > 0 {
			total += h * volume(sub, ref[:d-1])
		}
	}
	return total
}

// sweep2 is the hypervolume in two responses: sorted by the first, each
// point adds the strip between its second value and the lowest second
// value seen so far.
func sweep2(points [][]float64, ref []float64) float64 {
	ps := slices.Clone(points)
	slices.SortFunc(ps, func(a, b []float64) int {
		if c := cmp.Compare(a[0], b[0]); c != 0 {
			return c
		}
		return cmp.Compare(a[1], b[1])
	})
	area, low := 0.0, ref[1]
	for _, p := range ps {
		if p[1] < low {
			area += (ref[0] - p[0]) * (low - p[1])
			low = p[1]
		}
	}
	return area
}

// Staircase is a set of points in two responses made ready for many
// Improvement questions: only the points that are on its front and
// strictly below ref, sorted by the first response.
type Staircase struct {
	steps [][2]float64
	ref   [2]float64
}

// NewStaircase prepares points (each of two values) for Improvement.
func NewStaircase(points [][]float64, ref [2]float64) *Staircase {
	var in [][]float64
	for _, p := range points {
		if p[0] < ref[0] && p[1] < ref[1] {
			in = append(in, p)
		}
	}
	slices.SortFunc(in, func(a, b []float64) int {
		if c := cmp.Compare(a[0], b[0]); c != 0 {
			return c
		}
		return cmp.Compare(a[1], b[1])
	})
	s := &Staircase{ref: ref}
	low := ref[1]
	for _, p := range in {
		if p[1] < low {
			s.steps = append(s.steps, [2]float64{p[0], p[1]})
			low = p[1]
		}
	}
	return s
}

// Improvement is the hypervolume the point (a, b) adds, as the function
// Improvement gives, in time linear in the steps and without allocating.
func (s *Staircase) Improvement(a, b float64) float64 {
	r0, r1 := s.ref[0], s.ref[1]
	if !(a < r0 && b < r1) {
		return 0
	}
	// The box from (a, b) to ref, less the steps clipped to it: clipped,
	// the steps stay sorted (first non-decreasing, second non-increasing).
	covered, low := 0.0, r1
	for _, st := range s.steps {
		x, y := math.Max(st[0], a), math.Max(st[1], b)
		if y < low {
			covered += (r0 - x) * (low - y)
			low = y
		}
	}
	return math.Max(0, (r0-a)*(r1-b)-covered)
}

// ExpectedImprovement is the expected value of Improvement at a point
// whose two values are independent and normal, with the given means and
// standard deviations: the expected hypervolume improvement in closed
// form for two responses (Emmerich, Deutz and Klinkenberg 2011,
// "Hypervolume-based expected improvement: monotonicity properties and
// exact computation", IEEE CEC, 2147-2154). The improvement of (a, b) is the integral over t from
// a to ref of (level(t) − b)⁺, where level(t) is the lowest second value
// among the steps whose first value is at most t (ref's second value
// before the first step). level is constant between steps, so with
// independent values its expectation is a sum over the strips between
// them of E[(level − b)⁺] times the integral of P(a ≤ t) over the strip,
// both of the form E[(c − v)⁺] = sd·(zΦ(z) + φ(z)), z = (c − mean)/sd.
func (s *Staircase) ExpectedImprovement(mean, sd [2]float64) float64 {
	// below(c, i) is E[(c − v)⁺] for the value i of the point; beyond
	// negligible standard deviations below the mean it is taken as 0
	// (under 1e-16 of the standard deviation), which spares the strips
	// that cannot count their error functions.
	below := func(c float64, i int) float64 {
		if c < mean[i]-negligible*sd[i] {
			return 0
		}
		return acquisition.ExpectedImprovement(mean[i], sd[i], c)
	}
	var sum float64
	level, from := s.ref[1], 0.0 // from: E[(t − a)⁺] at the strip's start; 0 at −∞
	for k := 0; k <= len(s.steps); k++ {
		// Levels only fall from strip to strip: once one is out of
		// reach, so are the rest.
		b := below(level, 1)
		if b == 0 {
			break
		}
		end := s.ref[0]
		if k < len(s.steps) {
			end = s.steps[k][0]
		}
		to := below(end, 0)
		sum += b * (to - from)
		if k < len(s.steps) {
			level, from = s.steps[k][1], to
		}
	}
	return math.Max(0, sum)
}

// negligible is how many standard deviations below its mean a value is
// out of reach in ExpectedImprovement: E[(c − v)⁺] there is under 1e-16
// of the standard deviation.
const negligible = 8
