package spdla

import "golang.org/x/sys/cpu"

// hasFMA reports whether the assembly tile can run here. It is set once,
// when the package loads, from the processor's feature flags.
var hasFMA = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// tileFMA is tileGo with AVX2 and fused multiply-adds (kernel_amd64.s).
// The caller checks that every element it touches is in its slice.
//
//go:noescape
func tileFMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)
