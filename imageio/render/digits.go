package render

import (
	"image"
	"strconv"
)

// digitGlyphs is cleave's own bitmap font of the ten digits, 5 pixels
// wide and 7 high, one string per row, '#' for ink.
var digitGlyphs = [10][7]string{
	{" ### ", "#   #", "#  ##", "# # #", "##  #", "#   #", " ### "},
	{"  #  ", " ##  ", "# #  ", "  #  ", "  #  ", "  #  ", "#####"},
	{" ### ", "#   #", "    #", "   # ", "  #  ", " #   ", "#####"},
	{"#### ", "    #", "    #", " ### ", "    #", "    #", "#### "},
	{"   # ", "  ## ", " # # ", "#  # ", "#####", "   # ", "   # "},
	{"#####", "#    ", "#### ", "    #", "    #", "#   #", " ### "},
	{"  ## ", " #   ", "#    ", "#### ", "#   #", "#   #", " ### "},
	{"#####", "    #", "   # ", "   # ", "  #  ", "  #  ", "  #  "},
	{" ### ", "#   #", "#   #", " ### ", "#   #", "#   #", " ### "},
	{" ### ", "#   #", "#   #", " ####", "    #", "   # ", " ##  "},
}

// Glyph size in font pixels: 5 x 7 with one column between digits.
const (
	glyphW, glyphH, glyphGap = 5, 7, 1
)

// NumberSize is the size in image pixels of n drawn at the given scale
// (each font pixel a scale x scale square), without the halo.
func NumberSize(n, scale int) (w, h int) {
	d := len(strconv.Itoa(n))
	return scale * (d*(glyphW+glyphGap) - glyphGap), scale * glyphH
}

// DrawNumber draws the decimal digits of n (n >= 0) into img with the
// top-left corner of the text at (x0, y0): ink in fg, and a halo one
// image pixel wide around the ink (8-connected) in bg, so the number
// reads on any background. Pixels outside img are skipped.
func DrawNumber(img *image.RGBA, n, x0, y0, scale int, fg, bg [3]uint8) {
	s := strconv.Itoa(n)
	w, h := NumberSize(n, scale)
	ink := make([]bool, w*h)
	for k, ch := range s {
		g := digitGlyphs[ch-'0']
		for gy, row := range g {
			for gx, c := range row {
				if c != '#' {
					continue
				}
				for dy := range scale {
					for dx := range scale {
						ink[(gy*scale+dy)*w+(k*(glyphW+glyphGap)+gx)*scale+dx] = true
					}
				}
			}
		}
	}
	put := func(x, y int, c [3]uint8) {
		if !image.Pt(x, y).In(img.Bounds()) {
			return
		}
		i := img.PixOffset(x, y)
		img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3] = c[0], c[1], c[2], 255
	}
	for y := -1; y <= h; y++ {
		for x := -1; x <= w; x++ {
			if x >= 0 && y >= 0 && x < w && y < h && ink[y*w+x] {
				continue
			}
			near := false
			for dy := -1; dy <= 1 && !near; dy++ {
				for dx := -1; dx <= 1; dx++ {
					u, v := x+dx, y+dy
					if u >= 0 && v >= 0 && u < w && v < h && ink[v*w+u] {
						near = true
						break
					}
				}
			}
			if near {
				put(x0+x, y0+y, bg)
			}
		}
	}
	for y := range h {
		for x := range w {
			if ink[y*w+x] {
				put(x0+x, y0+y, fg)
			}
		}
	}
}

// DigitInk reports whether font pixel (x, y) of digit d (0..9) is ink,
// for tests that read numbers back from a picture.
func DigitInk(d, x, y int) bool {
	return digitGlyphs[d][y][x] == '#'
}
