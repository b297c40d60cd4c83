package spdla

// kc is the depth of the slices the product is cut into: a B strip of
// kc×8 values (16 KiB) stays in the first-level cache while it meets
// every A strip of the slice.
const kc = 256

// product is C += sign·AᵀB, with A k×m, B k×n and C m×n, all row major
// with the strides given. When tri is set, only the entries C[i][j] with
// i ≤ j+shift are wanted (the upper triangle of a symmetric matrix whose
// rows and columns C starts shift apart): tiles wholly below that line are
// skipped and the entries below it are left as they were.
type product struct {
	m, n, k int
	a       []float64
	lda     int
	b       []float64
	ldb     int
	c       []float64
	ldc     int
	sign    float64
	tri     bool
	shift   int
}

// Work holds the scratch of the routines, so that repeated calls on
// matrices of one size allocate little. The zero value is ready to use; a
// Work is not safe for concurrent use.
type Work struct {
	pa, pb []float64 // the last, narrow strips of A and B, zero padded
	v      []float64 // U⁻ᵀ, for Inverse
	// tiles is how tiles are computed: the zero value, the widest way
	// the processor has.
	tiles tiler
}

func (w *Work) multiply(p product) {
	if p.m <= 0 || p.n <= 0 || p.k <= 0 {
		return
	}
	if len(w.pa) < kc*mr {
		w.pa, w.pb = make([]float64, kc*mr), make([]float64, kc*nr)
	}
	var t [mr * nr]float64
	for k0 := 0; k0 < p.k; k0 += kc {
		kk := min(kc, p.k-k0)
		a, b := p.a[k0*p.lda:], p.b[k0*p.ldb:]
		// The narrow last strips, copied into padded ones the tile can
		// read whole.
		if i := p.m / mr * mr; i < p.m {
			pad(w.pa, mr, a, p.lda, kk, i, p.m)
		}
		if j := p.n / nr * nr; j < p.n {
			pad(w.pb, nr, b, p.ldb, kk, j, p.n)
		}
		for js := 0; js < p.n; js += nr {
			bs, ldb := b[js:], p.ldb
			if js+nr > p.n {
				bs, ldb = w.pb, nr
			}
			for is := 0; is < p.m; is += mr {
				if p.tri && is > js+nr-1+p.shift {
					break
				}
				as, lda := a[is:], p.lda
				if is+mr > p.m {
					as, lda = w.pa, mr
				}
				if is+mr <= p.m && js+nr <= p.n && (!p.tri || is+mr-1 <= js+p.shift) {
					w.tile(kk, as, lda, bs, ldb, p.c[is*p.ldc+js:], p.ldc, p.sign)
					continue
				}
				t = [mr * nr]float64{}
				w.tile(kk, as, lda, bs, ldb, t[:], nr, 1)
				p.add(&t, is, js)
			}
		}
	}
}

// add adds sign times the tile t into C at row i, column j, clipped to C
// and, with tri, to the wanted triangle.
func (p *product) add(t *[mr * nr]float64, i, j int) {
	rows, cols := min(mr, p.m-i), min(nr, p.n-j)
	for r := 0; r < rows; r++ {
		c0 := 0
		if p.tri {
			c0 = max(0, i+r-j-p.shift) // first column with i+r ≤ j+c+shift
		}
		dst := p.c[(i+r)*p.ldc+j:]
		src := t[r*nr:]
		for c := c0; c < cols; c++ {
			dst[c] += p.sign * src[c]
		}
	}
}

// pad copies columns c0..c1 of the first k rows of x (stride ldx) into dst
// as k rows of width values, zero past c1.
func pad(dst []float64, width int, x []float64, ldx, k, c0, c1 int) {
	for p := 0; p < k; p++ {
		out := dst[p*width : p*width+width]
		n := copy(out, x[p*ldx+c0:p*ldx+c1])
		clear(out[n:])
	}
}
