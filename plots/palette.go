package plots

import (
	"image/color"

	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
)

// densityStops shade density maps: from white through pale sand to deep
// ochre, so that empty regions stay white and the runs' teal marks stand
// out.
var densityStops = []color.Color{
	color.RGBA{0xff, 0xff, 0xff, 0xff}, color.RGBA{0xf6, 0xe8, 0xcf, 0xff}, color.RGBA{0xe2, 0xb2, 0x6a, 0xff},
	color.RGBA{0xa8, 0x5d, 0x12, 0xff}, color.RGBA{0x5a, 0x2c, 0x05, 0xff},
}

// densityMap is the colour map of density maps over [0, 1] (share of the
// peak): the map's shading and its colour scale are drawn from it, so
// they agree.
func densityMap() (palette.ColorMap, error) {
	// The luminance map wants its stops from dark to light; reversed,
	// white is 0.
	dark := make([]color.Color, len(densityStops))
	for i, c := range densityStops {
		dark[len(dark)-1-i] = c
	}
	lum, err := moreland.NewLuminance(dark)
	if err != nil {
		return nil, err
	}
	cm := palette.Reverse(lum)
	cm.SetMin(0)
	cm.SetMax(1)
	return cm, nil
}
