package gp

import "math"

// An additive part of the kernel.
//
// Many responses are close to a sum of one effect per factor (the main
// effects of a factorial design); a stationary kernel on the joint
// distance cannot carry what it learns along one factor to other settings
// of the rest, so a model of such a response needs runs in every
// combination of wells. The kernel can therefore give a share w of its
// variance to first-order additive terms (Duvenaud, Nickisch and
// Rasmussen 2011, "Additive Gaussian processes", NeurIPS: the orders 1
// and d of their kernel, with the same length scales):
//
//	c(a, b) = (1 − w)·k(r) + w·(1/d) Σ_k k(|a_k − b_k|/l_k)
//
// w is fitted with the other hyperparameters (FitOptions.Additive): on a
// sum of one-factor effects it rises above 0.8, on a product it falls
// below 0.2 (additive_test.go). Under the planner's output warp (a
// logarithm, which turns a sum into something else) it mostly stays near
// its prior's centre, so the planner then chooses it again by
// leave-one-out prediction among a few values, the other hyperparameters
// held (planner/share.go; LOO.LogDensity). At w = 0 the model is the
// plain kernel's, value for value. Its spectral measure is the same
// mixture, which is how pathwise draws sample it (pathwise.go).

// Weak prior on logit w: centred at w ≈ 0.12, wide (ours, not from a
// source): interactions are assumed until the runs say otherwise. Centred
// at w = 0.5 it gained on the suite's separable problems and lost on both
// rotated ones (docs/planner-figures.md), so it stays here.
const (
	priorLogitAddMean = -2.0
	priorLogitAddSD   = 2.0
)

// corr returns the kernel's correlation between a and b, additive share
// included.
func (m *Model) corr(a, b []float64) float64 {
	c := m.p.Kernel.corr(scaledDist(a, b, m.invLen))
	if w := m.p.Additive; w > 0 {
		c = (1-w)*c + w*m.p.Kernel.additiveCorr(a, b, m.invLen)
	}
	return c
}

// additiveCorr returns (1/d) Σ_k k(|a_k − b_k|/l_k), given 1/l_k.
func (k Kernel) additiveCorr(a, b, invLen []float64) float64 {
	var s float64
	for i := range invLen {
		s += k.corr(math.Abs(a[i]-b[i]) * invLen[i])
	}
	return s / float64(len(invLen))
}

func logistic(u float64) float64 { return 1 / (1 + math.Exp(-u)) }

// expTable holds, for the Matérn kernels, e^{−c_k x_ik} and e^{c_k x_ik}
// for every run i and input k, c_k = √(2ν)/l_k: the exponential of an
// additive term at a new point v is then one product, e^{−c|x − v|} =
// e^{−cx}·e^{cv} where x ≥ v and e^{cx}·e^{−cv} below (within a few units
// in the last place of the exponential itself), instead of one exponential
// per run and input. An input whose c_k·|x| could overflow is left out
// (ok false) and worked out directly.
type expTable struct {
	c           []float64
	x, neg, pos [][]float64 // [k][i]: the inputs by column, and their exponentials
	ok          []bool
}

// expLimit bounds c·|x| in expTable: e^300 is far inside float64's range,
// and so is the product of two such factors' reciprocals.
const expLimit = 300

// prepareAdditive builds m.add from m.x and m.invLen when the model has
// additive terms and a Matérn kernel.
func (m *Model) prepareAdditive() {
	m.add = nil
	root := m.p.Kernel.rate()
	if m.p.Additive == 0 || root == 0 || len(m.x) == 0 {
		return
	}
	d := len(m.invLen)
	t := &expTable{c: make([]float64, d), x: make([][]float64, d), neg: make([][]float64, d), pos: make([][]float64, d), ok: make([]bool, d)}
	for k := range d {
		c := root * m.invLen[k]
		t.c[k], t.ok[k] = c, true
		t.x[k], t.neg[k], t.pos[k] = make([]float64, len(m.x)), make([]float64, len(m.x)), make([]float64, len(m.x))
		for i, xi := range m.x {
			t.x[k][i] = xi[k]
			if math.Abs(c*xi[k]) > expLimit {
				t.ok[k] = false
				break
			}
			t.neg[k][i], t.pos[k][i] = math.Exp(-c*xi[k]), math.Exp(c*xi[k])
		}
	}
	m.add = t
}

// additiveRow writes into sum, for runs lo.. (as many as sum is long),
// Σ_k k(|x_ik − v_k|/l_k): with the table where it holds, otherwise
// from the squared distances (a and arg are scratch as long as sum).
func (m *Model) additiveRow(sum, a, arg []float64, lo int, v []float64) {
	for j := range sum {
		sum[j] = 0
	}
	t := m.add
	for k, vk := range v {
		if t != nil && t.ok[k] && math.Abs(t.c[k]*vk) <= expLimit {
			c, up, down := t.c[k], math.Exp(t.c[k]*vk), math.Exp(-t.c[k]*vk)
			xs, neg, pos := t.x[k][lo:lo+len(sum)], t.neg[k][lo:lo+len(sum)], t.pos[k][lo:lo+len(sum)]
			for j, x := range xs {
				e := pos[j] * down
				if x >= vk {
					e = neg[j] * up
				}
				s := c * math.Abs(x-vk)
				if m.p.Kernel == Matern32 {
					sum[j] += (1 + s) * e
				} else {
					sum[j] += (1 + s + s*s/3) * e
				}
			}
			continue
		}
		inv := m.invLen[k]
		for j := range a {
			dd := (m.x[lo+j][k] - vk) * inv
			a[j] = dd * dd
		}
		m.p.Kernel.corrRow(a, a, arg)
		for j, c := range a {
			sum[j] += c
		}
	}
}
