// Package vexp computes the exponential of many numbers at once: the
// kernel matrix of a Gaussian-process fit needs one per pair of runs, at
// every evaluation of the likelihood. On amd64 with AVX2 and FMA four
// values go through each step together (exp_amd64.s); elsewhere, and for
// the last few values, it is math.Exp.
package vexp
