package planner

import (
	"math"

	"gonum.org/v1/gonum/floats"
)

// A simplex minimises a function of the unit box's points by the
// Nelder-Mead method (J. A. Nelder and R. Mead 1965, "A simplex method for
// function minimization", The Computer Journal 7(4), 308-313), with the
// coefficients that depend on the dimension d from F. Gao and L. Han 2012,
// "Implementing the Nelder-Mead simplex algorithm with adaptive
// parameters", Computational Optimization and Applications 51, 259-277:
// reflection 1, expansion 1 + 2/d, contraction 3/4 − 1/(2d), shrink
// 1 − 1/d (2, 1/2 and 1/2 at d = 1).
//
// It asks for one value at a time and is told it (ask, tell), so a caller
// can run many side by side and score their points together in one batch,
// with no goroutine. Its steps are those of gonum's optimize.NelderMead
// under optimize.Minimize with a FunctionConverge and an evaluation limit,
// the pair it replaces, value for value (TestSimplexAgainstGonum): the
// start is evaluated, the first simplex is the start and a step of size
// along each axis, and the search ends after evals values or once the best
// vertex has not improved by more than tol over iters iterations in a row
// (an iteration ends whenever the simplex takes a new best vertex or makes
// a reflection that is kept). The answer is the best vertex at the last
// iteration.
type simplex struct {
	size, tol   float64
	iters       int // iterations without improvement that end the search
	evals, used int // the limit on values, and the values told so far

	refl, exp, contr, shrink float64

	vertices [][]float64 // sorted by value, best first
	values   []float64
	centroid []float64 // of every vertex but the worst
	x        []float64 // the point asked for
	step     step
	fill     int // the vertex being built (step first or shrink)
	reflX    []float64
	reflF    float64

	best      []float64 // the best vertex at the last iteration
	convBest  float64   // the value the improvement test measures against
	convIter  int       // iterations since it improved
	convFirst bool
	done      bool
}

// step is what the value asked for will be used for.
type step int

const (
	stepStart step = iota
	stepFirst      // a vertex of the first simplex
	stepReflect
	stepExpand
	stepOutside // contraction outside
	stepInside  // contraction inside
	stepShrink
)

// newSimplex starts a search at start (copied).
func newSimplex(start []float64, size float64, evals int, tol float64, iters int) *simplex {
	d := len(start)
	s := &simplex{size: size, tol: tol, iters: iters, evals: evals, convFirst: true}
	s.refl, s.exp, s.contr, s.shrink = 1, 1+2/float64(d), 0.75-1/(2*float64(d)), 1-1/float64(d)
	if d == 1 {
		s.exp, s.contr, s.shrink = 2, 0.5, 0.5
	}
	s.vertices = make([][]float64, d+1)
	for i := range s.vertices {
		s.vertices[i] = make([]float64, d)
	}
	s.values = make([]float64, d+1)
	s.centroid = make([]float64, d)
	s.reflX = make([]float64, d)
	s.x = append([]float64(nil), start...)
	s.step = stepStart
	return s
}

// ask returns the point whose value the search wants next (the simplex's
// own buffer: the caller must not keep or change it), or nil once the
// search has ended.
func (s *simplex) ask() []float64 {
	if s.done {
		return nil
	}
	return s.x
}

// result returns the best vertex at the last iteration, nil if the search
// ended before its first.
func (s *simplex) result() []float64 { return s.best }

// tell gives the value at the point ask returned.
func (s *simplex) tell(f float64) {
	if s.done {
		panic("planner: a value told to a finished simplex")
	}
	s.used++
	if s.used >= s.evals {
		s.done = true
		return
	}
	d := len(s.x)
	switch s.step {
	case stepStart:
		if math.IsInf(f, 1) || math.IsNaN(f) {
			s.done = true
			return
		}
		if s.iteration(s.x, f) {
			return
		}
		copy(s.vertices[d], s.x)
		s.values[d] = f
		s.fill = 0
		s.x[0] += s.size
		s.step = stepFirst
	case stepFirst:
		s.values[s.fill] = f
		copy(s.vertices[s.fill], s.x)
		s.fill++
		if s.fill == d {
			s.sort()
			s.major()
			return
		}
		copy(s.x, s.vertices[d])
		s.x[s.fill] += s.size
	case stepReflect:
		s.reflF = f
		switch {
		case f >= s.values[0] && f < s.values[d-1]:
			s.replaceWorst(s.x, f)
			s.major()
		case f < s.values[0]:
			s.move(stepExpand)
		case f < s.values[d]:
			s.move(stepOutside)
		default:
			s.move(stepInside)
		}
	case stepExpand:
		if f < s.reflF {
			s.replaceWorst(s.x, f)
		} else {
			s.replaceWorst(s.reflX, s.reflF)
		}
		s.major()
	case stepOutside, stepInside:
		if (s.step == stepOutside && f <= s.reflF) || (s.step == stepInside && f < s.values[d]) {
			s.replaceWorst(s.x, f)
			s.major()
			return
		}
		s.fill = 1
		s.move(stepShrink)
	case stepShrink:
		copy(s.vertices[s.fill], s.x)
		s.values[s.fill] = f
		s.fill++
		if s.fill != d+1 {
			s.move(stepShrink)
			return
		}
		s.sort()
		s.major()
	}
}

// major ends an iteration at the best vertex and, unless that ends the
// search, asks for the next reflection.
func (s *simplex) major() {
	if s.iteration(s.vertices[0], s.values[0]) {
		return
	}
	s.move(stepReflect)
}

// iteration records an iteration's best point and reports whether the
// search has ended: at −∞, or after iters iterations in a row without an
// improvement of more than tol.
func (s *simplex) iteration(x []float64, f float64) bool {
	s.best = append(s.best[:0], x...)
	switch {
	case math.IsInf(f, -1):
		s.done = true
	case s.convFirst:
		s.convBest, s.convFirst = f, false
	case f < s.convBest && s.convBest-f > s.tol:
		s.convBest, s.convIter = f, 0
	default:
		s.convIter++
		s.done = s.convIter >= s.iters
	}
	return s.done
}

// move sets the point to ask for at a step: along the line from the worst
// vertex through the centroid, or halfway (by the shrink coefficient) from
// the best vertex to the one being rebuilt.
func (s *simplex) move(st step) {
	s.step = st
	d := len(s.x)
	if st == stepShrink {
		floats.SubTo(s.x, s.vertices[s.fill], s.vertices[0])
		floats.Scale(s.shrink, s.x)
		floats.Add(s.x, s.vertices[0])
		return
	}
	var scale float64
	switch st {
	case stepReflect:
		scale = s.refl
	case stepExpand:
		scale = s.refl * s.exp
	case stepOutside:
		scale = s.refl * s.contr
	case stepInside:
		scale = -s.contr
	}
	floats.SubTo(s.x, s.centroid, s.vertices[d])
	floats.Scale(scale, s.x)
	floats.Add(s.x, s.centroid)
	if st == stepReflect {
		copy(s.reflX, s.x)
	}
}

// sort orders the vertices by value, keeping the order of equal values,
// and works out the centroid afresh.
func (s *simplex) sort() {
	for i := 1; i < len(s.values); i++ {
		for j := i; j > 0 && s.values[j] < s.values[j-1]; j-- {
			s.values[j], s.values[j-1] = s.values[j-1], s.values[j]
			s.vertices[j], s.vertices[j-1] = s.vertices[j-1], s.vertices[j]
		}
	}
	d := len(s.centroid)
	for k := range s.centroid {
		s.centroid[k] = 0
	}
	for _, v := range s.vertices[:d] {
		for k, x := range v {
			s.centroid[k] += x
		}
	}
	for k := range s.centroid {
		s.centroid[k] /= float64(d)
	}
}

// replaceWorst puts x, of value f, in the worst vertex's place, moves it
// up to its rank, and updates the centroid by the vertex that left it and
// the one that joined.
func (s *simplex) replaceWorst(x []float64, f float64) {
	d := len(x)
	copy(s.vertices[d], x)
	s.values[d] = f
	for i := d - 1; i >= 0 && s.values[i] >= f; i-- {
		s.vertices[i], s.vertices[i+1] = s.vertices[i+1], s.vertices[i]
		s.values[i], s.values[i+1] = s.values[i+1], s.values[i]
	}
	floats.AddScaled(s.centroid, -1/float64(d), s.vertices[d])
	floats.AddScaled(s.centroid, 1/float64(d), x)
}
