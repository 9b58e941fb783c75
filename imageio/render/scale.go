package render

import (
	"image/color"
	"math"
)

// Cividis is the colour of f in [0, 1] (clipped) on the cividis scale
// (Nuñez, Anderton and Renslow 2018): a scale whose lightness rises
// evenly from dark blue to yellow, designed to read the same for viewers
// with red-green colour-vision deficiency; linear between the 256
// entries of its published table.
func Cividis(f float64) color.RGBA {
	if !(f > 0) { // also NaN
		f = 0
	}
	f = math.Min(f, 1)
	x := f * 255
	i := min(int(x), 254)
	u := x - float64(i)
	var c [3]uint8
	for k := range 3 {
		c[k] = uint8(math.Round(255 * ((1-u)*cividisTable[i][k] + u*cividisTable[i+1][k])))
	}
	return color.RGBA{c[0], c[1], c[2], 255}
}
