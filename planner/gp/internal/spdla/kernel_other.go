//go:build !amd64

package spdla

const (
	hasFMA    = false
	hasAVX512 = false
)

func tileFMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64) {
	panic("spdla: no assembly tile here")
}

func tileAVX512(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64) {
	panic("spdla: no assembly tile here")
}
