package planner

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/optimize"
)

// TestSimplexAgainstGonum: the simplex asks for the same points, value for
// value, and ends at the same answer as gonum's optimize.NelderMead under
// optimize.Minimize (gonum v0.17.0), the pair it replaced, on functions
// that exercise every step: Rosenbrock's valley (reflections,
// expansions, contractions), a bowl cut off by a barred region that
// answers math.MaxFloat64 (ties, shrinks), a plateau (ties everywhere) and
// a function with −∞ in it; in 1 to 8 factors, with limits on the values
// and on the iterations without improvement small and large.
func TestSimplexAgainstGonum(t *testing.T) {
	fns := map[string]func(u []float64) float64{
		"rosenbrock": func(u []float64) float64 {
			s := 0.0
			for k := 0; k+1 < len(u); k++ {
				a, b := 4*u[k]-2, 4*u[k+1]-2
				s += 100*(b-a*a)*(b-a*a) + (1-a)*(1-a)
			}
			return s + u[0]*u[0]
		},
		"barred bowl": func(u []float64) float64 {
			if u[0]+u[len(u)-1] < 0.7 {
				return math.MaxFloat64
			}
			s := 0.0
			for k, v := range u {
				s += float64(k+1) * (v - 0.3) * (v - 0.3)
			}
			return s
		},
		"plateau": func(u []float64) float64 {
			return math.Floor(4 * math.Abs(u[0]-0.5))
		},
		"minus infinity": func(u []float64) float64 {
			if u[0] > 0.8 {
				return math.Inf(-1)
			}
			return -u[0]
		},
	}
	rng := rand.New(rand.NewPCG(5, 6))
	cases := 0
	for name, f := range fns {
		for d := 1; d <= 8; d++ {
			for _, lim := range []struct {
				evals, iters int
				tol          float64
			}{{60 * d, 15, 1e-6}, {12 * d, 10, 1e-7}, {400, 100, 0}, {3, 15, 1e-6}} {
				start := make([]float64, d)
				for k := range start {
					start[k] = rng.Float64()
				}
				var theirs [][]float64
				res, err := optimize.Minimize(optimize.Problem{Func: func(u []float64) float64 {
					theirs = append(theirs, slices.Clone(u))
					return f(u)
				}}, start, &optimize.Settings{FuncEvaluations: lim.evals, Converger: &optimize.FunctionConverge{Absolute: lim.tol, Iterations: lim.iters}},
					&optimize.NelderMead{SimplexSize: 0.02})
				if res == nil {
					t.Fatalf("%s, %d factors: gonum gave no result: %v", name, d, err)
				}
				s := newSimplex(start, 0.02, lim.evals, lim.tol, lim.iters)
				var ours [][]float64
				for u := s.ask(); u != nil; u = s.ask() {
					ours = append(ours, slices.Clone(u))
					s.tell(f(u))
				}
				if len(ours) != len(theirs) {
					t.Fatalf("%s, %d factors, %+v: %d values asked, gonum asked %d", name, d, lim, len(ours), len(theirs))
				}
				for i := range ours {
					if !slices.Equal(ours[i], theirs[i]) {
						t.Fatalf("%s, %d factors, %+v: value %d asked at %v, gonum at %v", name, d, lim, i, ours[i], theirs[i])
					}
				}
				got := s.result()
				if got == nil && len(ours) > 1 {
					t.Fatalf("%s, %d factors, %+v: no answer after %d values", name, d, lim, len(ours))
				}
				if got != nil && !slices.Equal(got, res.X) {
					t.Fatalf("%s, %d factors, %+v: answer %v, gonum %v", name, d, lim, got, res.X)
				}
				cases++
			}
		}
	}
	t.Logf("%d searches, each point asked the same as gonum's", cases)
}
