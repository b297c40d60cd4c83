package plots

import "image/color"

// ramp is the shading of density maps: from white through pale sand to
// deep ochre, so that empty regions stay white and the runs' teal marks
// stand out.
type ramp struct{}

func (ramp) Colors() []color.Color {
	stops := []color.RGBA{{0xff, 0xff, 0xff, 0xff}, {0xf6, 0xe8, 0xcf, 0xff}, {0xe2, 0xb2, 0x6a, 0xff}, {0xa8, 0x5d, 0x12, 0xff}, {0x5a, 0x2c, 0x05, 0xff}}
	const n = 64
	out := make([]color.Color, n)
	for i := range out {
		t := float64(i) / float64(n-1) * float64(len(stops)-1)
		k := int(t)
		if k >= len(stops)-1 {
			k = len(stops) - 2
		}
		f := t - float64(k)
		a, b := stops[k], stops[k+1]
		mix := func(x, y uint8) uint8 { return uint8(float64(x) + f*(float64(y)-float64(x)) + 0.5) }
		out[i] = color.RGBA{mix(a.R, b.R), mix(a.G, b.G), mix(a.B, b.B), 0xff}
	}
	return out
}
