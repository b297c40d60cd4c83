package planner

import (
	"errors"
	"math"
	"sort"
)

// Piece is one interval of a highest-density region, the share of the
// distribution in it, and the densest value in it.
type Piece struct {
	Lo, Hi, Mass, Mode float64
}

// HighestDensity returns the highest-density region holding the share
// mass (0 < mass < 1) of the distribution the samples come from, as
// disjoint pieces in increasing order. The density is a Gaussian kernel
// estimate on a grid over [lo, hi] (bandwidth chosen by leave-one-out
// likelihood cross-validation, at least 1% of the range; kernels
// reflected at the bounds so that mass piled at a bound stays inside);
// the grid cells of highest density are taken until they hold mass
// (Hyndman 1996, "Computing and graphing highest density regions", The
// American Statistician 50(2)). Gaps narrower than the bandwidth or 4% of
// the range are closed: with a few dozen samples they are noise, not
// modes. A distribution with two separate modes gives two pieces where a
// central interval would span the empty space between them.
func HighestDensity(samples []float64, lo, hi, mass float64) ([]Piece, error) {
	if len(samples) < 2 || !(hi > lo) || !(mass > 0 && mass < 1) {
		return nil, errors.New("planner: highest density region needs two samples, a range and a share in (0, 1)")
	}
	const cells = 400
	dx := (hi - lo) / cells
	h := crossValidatedWidth(samples, lo, hi)
	dens := make([]float64, cells)
	for i := range dens {
		x := lo + (float64(i)+0.5)*dx
		s := 0.0
		for _, v := range samples {
			for _, c := range [3]float64{v, 2*lo - v, 2*hi - v} {
				if u := (x - c) / h; u > -6 && u < 6 {
					s += math.Exp(-0.5 * u * u)
				}
			}
		}
		dens[i] = s
	}
	total := 0.0
	for _, d := range dens {
		total += d
	}
	if !(total > 0) {
		return nil, errors.New("planner: highest density region of samples outside the range")
	}
	order := make([]int, cells)
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return dens[order[a]] > dens[order[b]] })
	in := make([]bool, cells)
	for acc, k := 0.0, 0; acc < mass*total && k < cells; k++ {
		in[order[k]] = true
		acc += dens[order[k]]
	}
	gap := int(math.Ceil(math.Max(h, (hi-lo)/25) / dx))
	var runs [][2]int // cell ranges, inclusive
	for i := 0; i < cells; {
		if !in[i] {
			i++
			continue
		}
		j := i
		for j+1 < cells && in[j+1] {
			j++
		}
		if n := len(runs); n > 0 && i-runs[n-1][1]-1 < gap {
			runs[n-1][1] = j
		} else {
			runs = append(runs, [2]int{i, j})
		}
		i = j + 1
	}
	pieces := make([]Piece, len(runs))
	for k, r := range runs {
		p := Piece{Lo: lo + float64(r[0])*dx, Hi: lo + float64(r[1]+1)*dx}
		top := r[0]
		for i := r[0]; i <= r[1]; i++ {
			p.Mass += dens[i] / total
			if dens[i] > dens[top] {
				top = i
			}
		}
		p.Mode = lo + (float64(top)+0.5)*dx
		pieces[k] = p
	}
	return pieces, nil
}

// Heaviest is the piece holding the most mass: its mode is the most
// likely value in the sense that matters to a person choosing a setpoint
// (a few draws piled at a bound make a tall, narrow peak there that holds
// less of the distribution).
func Heaviest(pieces []Piece) Piece {
	best := Piece{Mass: -1}
	for _, p := range pieces {
		if p.Mass > best.Mass {
			best = p
		}
	}
	return best
}

// crossValidatedWidth chooses the kernel's bandwidth that maximises the
// leave-one-out likelihood of the samples (Habbema, Hermans and van den
// Broek 1974; Duin 1976), on samples binned to 1/400 of the range, among
// widths from 1% of the range to twice Silverman's rule of thumb. The rule
// of thumb alone (0.9 min(sd, IQR/1.34) n^(-1/5)) assumes one mode and
// smears two separate modes into each other.
func crossValidatedWidth(v []float64, lo, hi float64) float64 {
	const bins = 400
	span := hi - lo
	dx := span / bins
	counts := make([]float64, bins)
	for _, x := range v {
		i := int((x - lo) / dx)
		counts[min(max(i, 0), bins-1)]++
	}
	n := float64(len(v))
	floor := span / 100
	top := math.Max(2*silvermanWidth(v, span), 1.5*floor)
	best, bestLL := floor, math.Inf(-1)
	const tries = 24
	for t := 0; t < tries; t++ {
		h := floor * math.Pow(top/floor, float64(t)/(tries-1))
		// Kernel weights by bin distance, reflected at both bounds.
		reach := min(int(6*h/dx)+1, bins)
		w := make([]float64, reach)
		for d := range w {
			u := float64(d) * dx / h
			w[d] = math.Exp(-0.5 * u * u)
		}
		ll := 0.0
		for i, c := range counts {
			if c == 0 {
				continue
			}
			s := -1.0 // leave the sample itself out
			for j := max(0, i-reach+1); j < min(bins, i+reach); j++ {
				s += counts[j] * w[abs(i-j)]
			}
			// Reflections: bin j mirrored at lo lies at -j-1, at hi at
			// 2*bins-1-j.
			for j := 0; j < min(bins, reach-i-1); j++ {
				s += counts[j] * w[i+j+1]
			}
			for j := max(0, 2*bins-i-reach); j < bins; j++ {
				if d := 2*bins - 1 - j - i; d < reach {
					s += counts[j] * w[d]
				}
			}
			if s <= 0 {
				s = 1e-300
			}
			ll += c * math.Log(s/((n-1)*h))
		}
		if ll > bestLL {
			best, bestLL = h, ll
		}
	}
	return best
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// silvermanWidth is Silverman's rule of thumb for a Gaussian kernel's
// bandwidth, 0.9 min(sd, IQR/1.34) n^(-1/5), with a floor of 1/200 of the
// range for samples that all agree.
func silvermanWidth(v []float64, span float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	mean := 0.0
	for _, x := range s {
		mean += x
	}
	mean /= float64(len(s))
	ss := 0.0
	for _, x := range s {
		ss += (x - mean) * (x - mean)
	}
	sd := math.Sqrt(ss / float64(len(s)-1))
	iqr := s[len(s)*3/4] - s[len(s)/4]
	spread := sd
	if iqr > 0 {
		spread = math.Min(sd, iqr/1.34)
	}
	return math.Max(0.9*spread*math.Pow(float64(len(s)), -0.2), span/200)
}
