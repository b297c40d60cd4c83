package vexp

import "math"

// Exp writes e^x for each x of src into dst (len(dst) ≥ len(src); dst may
// be src). Results agree with math.Exp to a few units in the last place;
// an x below −708.39 (where e^x is no longer a normal number) gives 0.
func Exp(dst, src []float64) {
	dst = dst[:len(src)]
	i := 0
	if hasFMA {
		i = len(src) / 4 * 4
		if i > 0 {
			expFMA(&dst[0], &src[0], i)
		}
	}
	for ; i < len(src); i++ {
		dst[i] = portable(src[i])
	}
}

// portable is math.Exp, with the assembly's floor.
func portable(x float64) float64 {
	if x < lowest {
		return 0
	}
	return math.Exp(x)
}

// lowest is ln of the smallest normal float64.
const lowest = -708.3964185322641
