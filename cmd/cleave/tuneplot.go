package main

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"io"
	"math"
	"strings"

	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"golang.org/x/image/math/fixed"
)

// Heatmap layout in pixels.
const (
	plotW, plotH                    = 720, 560
	marginL, marginR, marginT, marB = 110, 140, 70, 80
)

// rampAnchors is the colour scale, low to high: navy, mid blue, pale cyan,
// cream; linear between anchors, lightness rising throughout so the order
// reads in gray too.
var rampAnchors = [][3]float64{{0.05, 0.12, 0.32}, {0.18, 0.42, 0.70}, {0.58, 0.80, 0.86}, {0.99, 0.95, 0.78}}

func ramp(f float64) color.RGBA {
	f = math.Max(0, math.Min(1, f))
	x := f * float64(len(rampAnchors)-1)
	i := int(math.Min(math.Floor(x), float64(len(rampAnchors)-2)))
	u := x - float64(i)
	var c [3]uint8
	for k := 0; k < 3; k++ {
		c[k] = uint8(math.Round(255 * ((1-u)*rampAnchors[i][k] + u*rampAnchors[i+1][k])))
	}
	return color.RGBA{c[0], c[1], c[2], 255}
}

// writeHeatmap draws tune.png: the mean score over the sigma-i x sigma-x
// grid with the other parameters at the best grid setting, the best grid
// cell outlined and the refined best marked.
func (t *tuner) writeHeatmap(w io.Writer, gridBest, best *evaluation, imgs []int) error {
	xs, ys := t.axisValues(dimSigmaI), t.axisValues(dimSigmaX)
	vals := make([][]float64, len(ys))
	lo, hi := math.Inf(1), math.Inf(-1)
	for iy, y := range ys {
		vals[iy] = make([]float64, len(xs))
		for ix, x := range xs {
			p := gridBest.pt
			p[dimSigmaI], p[dimSigmaX] = x, y
			v := math.NaN()
			if e, ok := t.cache[t.key(p)]; ok {
				v = t.value(e, imgs)
			}
			vals[iy][ix] = v
			if !math.IsNaN(v) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	if math.IsInf(lo, 1) {
		lo, hi = 0, 1
	}
	if hi-lo < 1e-9 {
		lo, hi = lo-0.5e-3, hi+0.5e-3
	}
	img := image.NewRGBA(image.Rect(0, 0, plotW, plotH))
	draw.Draw(img, img.Bounds(), image.White, image.Point{}, draw.Src)
	black := color.RGBA{0, 0, 0, 255}
	areaW, areaH := plotW-marginL-marginR, plotH-marginT-marB
	cw, ch := areaW/len(xs), areaH/len(ys)
	areaW, areaH = cw*len(xs), ch*len(ys)
	cellRect := func(ix, iy int) image.Rectangle {
		x0 := marginL + ix*cw
		y0 := marginT + (len(ys)-1-iy)*ch // sigma-x grows upward
		return image.Rect(x0, y0, x0+cw, y0+ch)
	}
	for iy := range ys {
		for ix := range xs {
			r := cellRect(ix, iy)
			v := vals[iy][ix]
			if math.IsNaN(v) {
				fillRect(img, r, color.RGBA{200, 200, 200, 255})
				text(img, "failed", r.Min.X+cw/2, r.Min.Y+ch/2+4, black, true)
				continue
			}
			c := ramp((v - lo) / (hi - lo))
			fillRect(img, r, c)
			if cw >= 48 && ch >= 16 {
				tc := black
				if 0.299*float64(c.R)+0.587*float64(c.G)+0.114*float64(c.B) < 128 {
					tc = color.RGBA{255, 255, 255, 255}
				}
				text(img, fmt.Sprintf("%.4f", v), r.Min.X+cw/2, r.Min.Y+ch/2+4, tc, true)
			}
		}
	}
	// Outline the best grid cell.
	for iy, y := range ys {
		for ix, x := range xs {
			if x == gridBest.pt[dimSigmaI] && y == gridBest.pt[dimSigmaX] || (t.dims[dimSigmaI].auto && y == gridBest.pt[dimSigmaX]) {
				r := cellRect(ix, iy)
				for k := 0; k < 3; k++ {
					outline(img, r.Inset(k), color.RGBA{255, 255, 255, 255})
				}
				outline(img, r.Inset(3), black)
			}
		}
	}
	// Mark the refined best at its log position when it left the grid.
	if best != gridBest && len(xs) > 1 && len(ys) > 1 && !t.dims[dimSigmaI].auto && !t.dims[dimSigmaX].auto {
		pos := func(v float64, vs []float64, cell, n int) float64 {
			f := math.Log(v/vs[0]) / math.Log(vs[len(vs)-1]/vs[0]) // 0 at the first centre, 1 at the last
			return float64(cell)/2 + f*float64(cell*(n-1))
		}
		px := marginL + int(math.Round(pos(best.pt[dimSigmaI], xs, cw, len(xs))))
		py := marginT + areaH - int(math.Round(pos(best.pt[dimSigmaX], ys, ch, len(ys))))
		for d := -7; d <= 7; d++ {
			for k := -1; k <= 1; k++ {
				set(img, px+d, py+k, black)
				set(img, px+k, py+d, black)
			}
		}
		for d := -6; d <= 6; d++ {
			set(img, px+d, py, color.RGBA{255, 255, 255, 255})
			set(img, px, py+d, color.RGBA{255, 255, 255, 255})
		}
	}
	outline(img, image.Rect(marginL-1, marginT-1, marginL+areaW+1, marginT+areaH+1), black)
	// Ticks and tick labels.
	for ix, x := range xs {
		cx := marginL + ix*cw + cw/2
		for k := 0; k < 5; k++ {
			set(img, cx, marginT+areaH+1+k, black)
		}
		text(img, t.tickText(dimSigmaI, x), cx, marginT+areaH+19, black, true)
	}
	for iy, y := range ys {
		cy := marginT + (len(ys)-1-iy)*ch + ch/2
		for k := 0; k < 5; k++ {
			set(img, marginL-2-k, cy, black)
		}
		s := t.tickText(dimSigmaX, y)
		text(img, s, marginL-10-7*len(s), cy+4, black, false)
	}
	text(img, "sigma-i (intensity kernel width, normalized units)", marginL+areaW/2, marginT+areaH+45, black, true)
	vertical(img, "sigma-x (spatial kernel width, pixels)", 22, marginT+areaH/2, black)
	// Title.
	name := t.metric
	if t.metric == "vi" {
		name += " (lower is better)"
	}
	text(img, fmt.Sprintf("mean %s over %s", name, plural(len(imgs), "image")), plotW/2, 22, black, true)
	var fixedParts []string
	for d := dimMaxNcut; d < numDims; d++ {
		fixedParts = append(fixedParts, dimNames[d]+" "+t.tickText(d, gridBest.pt[d]))
	}
	text(img, "at "+strings.Join(fixedParts, ", "), plotW/2, 40, black, true)
	legend := "outlined: best of the grid"
	if best != gridBest {
		legend += ";  cross: refined best"
	}
	text(img, legend, plotW/2, 58, black, true)
	// Colour scale.
	bx := marginL + areaW + 40
	for y := 0; y < areaH; y++ {
		c := ramp(1 - float64(y)/float64(areaH-1))
		for x := 0; x < 22; x++ {
			img.Set(bx+x, marginT+y, c)
		}
	}
	outline(img, image.Rect(bx-1, marginT-1, bx+23, marginT+areaH+1), black)
	for k := 0; k <= 4; k++ {
		v := lo + (hi-lo)*float64(k)/4
		y := marginT + areaH - 1 - int(math.Round(float64(areaH-1)*float64(k)/4))
		for d := 0; d < 5; d++ {
			set(img, bx+23+d, y, black)
		}
		text(img, fmt.Sprintf("%.4f", v), bx+32, y+4, black, false)
	}
	text(img, t.metric, bx+11, marginT-8, black, true)
	return png.Encode(w, img)
}

// axisValues are the grid values of a heatmap axis (one NaN for auto).
func (t *tuner) axisValues(d int) []float64 {
	if t.dims[d].auto {
		return []float64{math.NaN()}
	}
	return t.dims[d].values
}

func (t *tuner) tickText(d int, v float64) string {
	if t.dims[d].auto || math.IsNaN(v) {
		return "auto"
	}
	return strings.TrimSuffix(fmt.Sprintf("%.4g", v), ".")
}

func set(img *image.RGBA, x, y int, c color.RGBA) {
	if image.Pt(x, y).In(img.Bounds()) {
		img.SetRGBA(x, y, c)
	}
}

func fillRect(img *image.RGBA, r image.Rectangle, c color.RGBA) {
	draw.Draw(img, r, &image.Uniform{c}, image.Point{}, draw.Src)
}

func outline(img *image.RGBA, r image.Rectangle, c color.RGBA) {
	for x := r.Min.X; x < r.Max.X; x++ {
		set(img, x, r.Min.Y, c)
		set(img, x, r.Max.Y-1, c)
	}
	for y := r.Min.Y; y < r.Max.Y; y++ {
		set(img, r.Min.X, y, c)
		set(img, r.Max.X-1, y, c)
	}
}

// text draws s with its baseline at y, starting at x or centred on x.
func text(img draw.Image, s string, x, y int, c color.Color, centre bool) {
	face := basicfont.Face7x13
	d := &font.Drawer{Dst: img, Src: image.NewUniform(c), Face: face}
	if centre {
		x -= d.MeasureString(s).Round() / 2
	}
	d.Dot = fixed.P(x, y)
	d.DrawString(s)
}

// vertical draws s rotated a quarter turn counter-clockwise, centred on
// (cx, cy).
func vertical(img *image.RGBA, s string, cx, cy int, c color.RGBA) {
	w := 7*len(s) + 2
	tmp := image.NewRGBA(image.Rect(0, 0, w, 16))
	text(tmp, s, 1, 12, c, false)
	for y := 0; y < 16; y++ {
		for x := 0; x < w; x++ {
			if tmp.RGBAAt(x, y).A > 0 {
				set(img, cx-8+y, cy+w/2-x, tmp.RGBAAt(x, y))
			}
		}
	}
}
