package acquisition

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

type vectors struct {
	Source string       `json:"source"`
	Erfcx  [][2]float64 `json:"erfcx"`
	LogH   [][2]float64 `json:"log_h"`
	LogPhi [][2]float64 `json:"log_Phi"`
	LogMES [][2]float64 `json:"log_mes"`
}

func loadVectors(t *testing.T) vectors {
	t.Helper()
	data, err := os.ReadFile("testdata/vectors.json")
	if err != nil {
		t.Fatal(err)
	}
	var v vectors
	if err := json.Unmarshal(data, &v); err != nil {
		t.Fatal(err)
	}
	return v
}

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// Erfcx against mpmath at 50 digits (testdata/gen_vectors.py): within
// 1e-13 relative, across both branches and the switch at x = 10.
func TestErfcxAgainstMpmath(t *testing.T) {
	v := loadVectors(t)
	for _, c := range v.Erfcx {
		if got := Erfcx(c[0]); relErr(got, c[1]) > 1e-13 {
			t.Errorf("Erfcx(%g) = %.17g, mpmath %.17g (rel err %.2g)", c[0], got, c[1], relErr(got, c[1]))
		}
	}
}

// ln h(z) = ln(φ(z) + zΦ(z)) against mpmath (testdata/gen_vectors.py):
// within 1e-9 relative everywhere, including the far tail where
// the naive formula underflows to −Inf.
func TestLogHAgainstMpmath(t *testing.T) {
	v := loadVectors(t)
	for _, c := range v.LogH {
		if got := logH(c[0]); relErr(got, c[1]) > 1e-9 {
			t.Errorf("logH(%g) = %.17g, mpmath %.17g (rel err %.2g)", c[0], got, c[1], relErr(got, c[1]))
		}
	}
	if naive := math.Log(NormPDF(-40) + -40*NormCDF(-40)); !math.IsInf(naive, -1) && !math.IsNaN(naive) {
		t.Logf("naive ln EI at z=-40 is %v (expected to underflow)", naive)
	}
}

// At z = 0, EI = sd·φ(0) = 0.398942·sd (standard normal density at 0,
// 1/√(2π) = 0.3989423, from any standard normal table).
func TestExpectedImprovementAtZeroZ(t *testing.T) {
	for _, sd := range []float64{0.1, 1, 7.5} {
		ei := ExpectedImprovement(3, sd, 3)
		if math.Abs(ei-0.3989423*sd) > 1e-7*sd {
			t.Errorf("EI(mean=best, sd=%g) = %.8f, want %.8f", sd, ei, 0.3989423*sd)
		}
		if l := LogExpectedImprovement(3, sd, 3); math.Abs(l-math.Log(ei)) > 1e-12 {
			t.Errorf("log EI %v, ln EI %v", l, math.Log(ei))
		}
	}
	// z = 1: EI = sd·(Φ(1) + φ(1)) = sd·(0.8413447 + 0.2419707) = 1.0833154·sd
	// (standard normal table values).
	if ei := ExpectedImprovement(0, 1, 1); math.Abs(ei-1.0833154) > 1e-6 {
		t.Errorf("EI at z=1: %.7f, want 1.0833154", ei)
	}
}

func TestLogExpectedImprovementEdges(t *testing.T) {
	if l := LogExpectedImprovement(1, 0, 2); math.Abs(l) > 1e-15 {
		t.Errorf("no uncertainty, improvement 1: ln EI = %v, want 0", l)
	}
	if l := LogExpectedImprovement(2, 0, 1); !math.IsInf(l, -1) {
		t.Errorf("no uncertainty, no improvement: %v, want -Inf", l)
	}
	if l := LogExpectedImprovement(math.NaN(), 1, 0); !math.IsInf(l, -1) {
		t.Errorf("NaN prediction: %v, want -Inf", l)
	}
	// Monotone in the mean: a worse mean never scores higher, from well
	// inside the improvement region to far in the tail (z = −2000).
	var means []float64
	for m := -5.0; m < 0; m += 0.05 {
		means = append(means, m)
	}
	for m := 0.01; m < 2000; m *= 1.01 {
		means = append(means, m)
	}
	prev := math.Inf(1)
	for _, m := range means {
		l := LogExpectedImprovement(m, 1, 0)
		if l > prev || math.IsNaN(l) || math.IsInf(l, 0) {
			t.Fatalf("ln EI at mean %g: %v after %v", m, l, prev)
		}
		prev = l
	}
}

// ln Φ(z) against mpmath (testdata/gen_vectors.py) to 1e-12 relative,
// down to z = −1e6 where Φ itself underflows.
func TestLogNormCDFAgainstMpmath(t *testing.T) {
	v := loadVectors(t)
	if len(v.LogPhi) == 0 {
		t.Fatal("no log_Phi vectors")
	}
	for _, c := range v.LogPhi {
		if got := LogNormCDF(c[0]); relErr(got, c[1]) > 1e-12 && math.Abs(got-c[1]) > 1e-15 {
			t.Errorf("LogNormCDF(%g) = %.17g, mpmath %.17g", c[0], got, c[1])
		}
	}
	if l := LogProbabilityOfImprovement(0, 1, 0); math.Abs(l-math.Log(0.5)) > 1e-15 {
		t.Errorf("PI at z=0: %v, want ln 0.5", l)
	}
}
