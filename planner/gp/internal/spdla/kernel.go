package spdla

// Tile sizes: a tile of C is mr rows by nr columns.
const (
	mr = 4
	nr = 8
)

// tileGo adds to the mr×nr tile C (c[r*ldc+j]) sign times Σ_p A[p][r]·B[p][j]
// over p < k, with A[p][r] = a[p*lda+r] and B[p][j] = b[p*ldb+j]. It is
// the portable twin of the assembly kernel and the reference the tests
// hold it to.
func tileGo(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int, sign float64) {
	var acc [mr * nr]float64
	for p := 0; p < k; p++ {
		ap := a[p*lda : p*lda+mr]
		bp := b[p*ldb : p*ldb+nr]
		for r, av := range ap {
			row := acc[r*nr : r*nr+nr]
			for j, bv := range bp {
				row[j] += av * bv
			}
		}
	}
	for r := 0; r < mr; r++ {
		row := c[r*ldc : r*ldc+nr]
		for j := range row {
			row[j] += sign * acc[r*nr+j]
		}
	}
}

// A tiler names one way of computing a tile: the widest the processor
// has by default; the tests ask for each in turn.
type tiler int

const (
	widest tiler = iota
	avx2
	portable
)

// tilers returns the ways of computing a tile that can run here, widest
// first.
func tilers() []tiler {
	var ts []tiler
	if hasAVX512 {
		ts = append(ts, widest)
	}
	if hasFMA {
		ts = append(ts, avx2)
	}
	return append(ts, portable)
}

func (t tiler) String() string {
	switch {
	case t == widest && hasAVX512:
		return "avx512"
	case t <= avx2 && hasFMA:
		return "avx2"
	}
	return "go"
}

// tile is tileGo with an assembly kernel where the processor has one,
// unless w asks for a narrower one (the tests compare them). It checks
// the bounds the assembly does not.
func (w *Work) tile(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int, sign float64) {
	if k <= 0 {
		return
	}
	if w.tiles != portable && hasFMA {
		_, _, _ = a[(k-1)*lda+mr-1], b[(k-1)*ldb+nr-1], c[(mr-1)*ldc+nr-1]
		if w.tiles == widest && hasAVX512 {
			tileAVX512(k, &a[0], lda, &b[0], ldb, &c[0], ldc, sign)
			return
		}
		tileFMA(k, &a[0], lda, &b[0], ldb, &c[0], ldc, sign)
		return
	}
	tileGo(k, a, lda, b, ldb, c, ldc, sign)
}
