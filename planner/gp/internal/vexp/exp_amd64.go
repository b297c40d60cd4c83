package vexp

import "golang.org/x/sys/cpu"

// hasFMA reports whether the assembly can run here. It is set once, when
// the package loads, from the processor's feature flags.
var hasFMA = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// expFMA is Exp for n values, n a multiple of 4 (exp_amd64.s).
//
//go:noescape
func expFMA(dst, src *float64, n int)
