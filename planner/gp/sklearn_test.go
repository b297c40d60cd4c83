package gp

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

type refSet struct {
	Name         string      `json:"name"`
	Kernel       string      `json:"kernel"`
	LengthScales []float64   `json:"length_scales"`
	SignalVar    float64     `json:"signal_var"`
	NoiseVar     float64     `json:"noise_var"`
	X            [][]float64 `json:"x"`
	Y            []float64   `json:"y"`
	XTest        [][]float64 `json:"xtest"`
	LML          float64     `json:"lml"`
	Mean         []float64   `json:"mean"`
	Var          []float64   `json:"var"`
	Cov          [][]float64 `json:"cov"`
}

func loadRefSets(t testing.TB) []refSet {
	t.Helper()
	data, err := os.ReadFile("testdata/sklearn_vectors.json")
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Source string   `json:"source"`
		Sets   []refSet `json:"sets"`
	}
	if err := json.Unmarshal(data, &doc); err != nil {
		t.Fatal(err)
	}
	return doc.Sets
}

// For fixed hyperparameters, the log marginal likelihood and the posterior
// mean, variance and covariance agree with scikit-learn's
// GaussianProcessRegressor (python3-sklearn; vectors from
// testdata/sklearn_vectors.py) to 1e-8 relative. Variances are compared
// relative to the prior variance where they are tiny, since a variance of
// 1e-12 of the prior is rounding in either code.
func TestAgainstScikitLearn(t *testing.T) {
	for _, s := range loadRefSets(t) {
		t.Run(s.Name, func(t *testing.T) {
			kern, err := ParseKernel(s.Kernel)
			if err != nil {
				t.Fatal(err)
			}
			m, err := New(s.X, s.Y, Params{Kernel: kern, LengthScales: s.LengthScales, SignalVar: s.SignalVar, NoiseVar: s.NoiseVar})
			if err != nil {
				t.Fatal(err)
			}
			if m.Jitter() != 0 {
				t.Errorf("needed jitter %g", m.Jitter())
			}
			const tol = 1e-8
			if e := rel(m.LogMarginalLikelihood(), s.LML); e > tol {
				t.Errorf("LML %.15g, sklearn %.15g (rel %.2g)", m.LogMarginalLikelihood(), s.LML, e)
			}
			_, scale := m.Standardisation()
			prior := s.SignalVar * scale * scale
			for i, x := range s.XTest {
				mu, v := m.Predict(x)
				if e := rel(mu, s.Mean[i]); e > tol {
					t.Errorf("mean at %d: %.15g, sklearn %.15g (rel %.2g)", i, mu, s.Mean[i], e)
				}
				if e := math.Abs(v-s.Var[i]) / math.Max(math.Abs(s.Var[i]), 1e-4*prior); e > tol {
					t.Errorf("variance at %d: %.15g, sklearn %.15g (rel %.2g)", i, v, s.Var[i], e)
				}
			}
			mean, cov := m.PredictJoint(s.XTest)
			for i := range s.XTest {
				if e := rel(mean[i], s.Mean[i]); e > tol {
					t.Errorf("joint mean %d: rel %.2g", i, e)
				}
				for j := range s.XTest {
					if e := math.Abs(cov.At(i, j)-s.Cov[i][j]) / math.Max(math.Abs(s.Cov[i][j]), 1e-4*prior); e > tol {
						t.Errorf("cov[%d][%d] %.15g, sklearn %.15g (rel %.2g)", i, j, cov.At(i, j), s.Cov[i][j], e)
					}
				}
			}
		})
	}
}

func rel(got, want float64) float64 {
	return math.Abs(got-want) / math.Max(math.Abs(want), 1e-300)
}
