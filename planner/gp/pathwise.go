package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Path is one function drawn from the posterior, cheap to evaluate
// anywhere, so that its minimiser can be searched for in any dimension.
//
// It is built by Matheron's rule, the decoupled ("pathwise") sampling of
// Wilson, Borovitskiy, Terenin, Mostowsky and Deisenroth (2020),
// "Efficiently sampling functions from Gaussian process posteriors", ICML,
// eq. 13:
//
//	f*(x) = f(x) + k(x, X) (K + σ²I)⁻¹ (y − f(X) − ε),   ε ~ N(0, σ²I)
//
// where f is a draw from the prior, approximated by random Fourier
// features (Rahimi and Recht 2007): f(x) = √(2s²/F) Σ_j w_j cos(ω_jᵀx + b_j)
// with w_j ~ N(0, 1), b_j ~ U(0, 2π) and ω_j from the kernel's spectral
// density (a Student t with 2ν degrees of freedom for Matérn ν, a normal
// for the squared exponential, scaled by the inverse length-scales). The
// data term is exact, so the draw is exact at the runs up to the noise;
// only the prior's fine structure away from them is approximated.
type Path struct {
	m     *Model
	omega [][]float64
	b, w  []float64
	amp   float64
	v     []float64 // (K + σ²I)⁻¹ (z − m − f(X) − ε)
}

// Paths draws count posterior functions with features random features
// each (512 is ample for up to 10 inputs).
func (m *Model) Paths(count, features int, rng *rand.Rand) ([]*Path, error) {
	if count < 1 || features < 1 {
		return nil, fmt.Errorf("gp: paths: count %d and features %d must be positive", count, features)
	}
	d, n := m.Dim(), len(m.x)
	out := make([]*Path, count)
	fx := make([]float64, n)
	r := make([]float64, n)
	for s := range out {
		p := &Path{m: m, omega: make([][]float64, features), b: make([]float64, features), w: make([]float64, features),
			amp: math.Sqrt(2 * m.p.SignalVar / float64(features)), v: make([]float64, n)}
		for j := 0; j < features; j++ {
			scale := 1.0
			switch m.p.Kernel {
			case Matern52:
				scale = math.Sqrt(5 / chiSquare(rng, 5))
			case Matern32:
				scale = math.Sqrt(3 / chiSquare(rng, 3))
			}
			om := make([]float64, d)
			if w := m.p.Additive; w > 0 && rng.Float64() < w {
				// A feature of one input's additive term (additive.go).
				k := rng.IntN(d)
				om[k] = rng.NormFloat64() * scale * m.invLen[k]
			} else {
				for k := range om {
					om[k] = rng.NormFloat64() * scale * m.invLen[k]
				}
			}
			p.omega[j] = om
			p.b[j] = 2 * math.Pi * rng.Float64()
			p.w[j] = rng.NormFloat64()
		}
		noiseSD := math.Sqrt(m.p.NoiseVar + m.jitter)
		for i, xi := range m.x {
			fx[i] = p.prior(xi)
			r[i] = m.z[i] - m.p.Mean - fx[i] - noiseSD*rng.NormFloat64()
		}
		m.c.solveTo(p.v, r)
		out[s] = p
	}
	return out, nil
}

// chiSquare draws from χ² with k degrees of freedom.
func chiSquare(rng *rand.Rand, k int) float64 {
	var s float64
	for i := 0; i < k; i++ {
		g := rng.NormFloat64()
		s += g * g
	}
	return s
}

func (p *Path) prior(x []float64) float64 {
	var s float64
	for j, om := range p.omega {
		var a float64
		for k, o := range om {
			a += o * x[k]
		}
		s += p.w[j] * math.Cos(a+p.b[j])
	}
	return p.amp * s
}

// At evaluates the drawn function at x (unit box), in the response's
// units.
func (p *Path) At(x []float64) float64 {
	m := p.m
	f := p.prior(x)
	for i, xi := range m.x {
		f += m.p.SignalVar * m.corr(xi, x) * p.v[i]
	}
	return m.yMean + m.yScale*(m.p.Mean+f)
}

// WithFantasies returns the model conditioned, with the same
// hyperparameters and standardisation, on its data plus the points xs
// observed at their current posterior means ("kriging believer", Ginsbourger,
// Le Riche and Carraro 2010, "Kriging is well-suited to parallelize
// optimization"). The posterior mean is unchanged and the variance at and
// around xs falls to the noise, so a batch does not propose the same point
// twice.
func (m *Model) WithFantasies(xs [][]float64) (*Model, error) {
	if len(xs) == 0 {
		return m, nil
	}
	f := &Model{p: m.p.Clone(), yMean: m.yMean, yScale: m.yScale, invLen: m.invLen, jitter: m.jitter}
	f.x = append(append([][]float64(nil), m.x...), xs...)
	f.z = append([]float64(nil), m.z...)
	for _, x := range xs {
		if len(x) != m.Dim() {
			panic(fmt.Sprintf("gp: fantasy at %d values, model has %d inputs", len(x), m.Dim()))
		}
		f.z = append(f.z, (m.Mean(x)-m.yMean)/m.yScale)
	}
	f.prepareAdditive()
	// The factor grows by the fantasies' rows (update.go); only when
	// they need jitter of their own is it rebuilt.
	if !f.c.extend(&m.c, len(f.x), f.covBlock(len(m.x)), m.p.NoiseVar+m.jitter, m.p.SignalVar) {
		return f, f.factor()
	}
	return f, f.solve()
}
