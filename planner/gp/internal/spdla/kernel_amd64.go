package spdla

import "golang.org/x/sys/cpu"

// hasFMA and hasAVX512 report which assembly tiles can run here. They are
// set once, when the package loads, from the processor's feature flags
// (which also say whether the operating system saves the wider
// registers).
var (
	hasFMA    = cpu.X86.HasAVX2 && cpu.X86.HasFMA
	hasAVX512 = hasFMA && cpu.X86.HasAVX512F
)

// tileFMA is tileGo with AVX2 and fused multiply-adds (kernel_amd64.s).
// The caller checks that every element it touches is in its slice.
//
//go:noescape
func tileFMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)

// tileAVX512 is tileFMA with 512-bit registers (kernel_amd64.s), for
// processors with AVX-512: twice the arithmetic an instruction.
//
//go:noescape
func tileAVX512(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)
