package render

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"math"
	"strconv"

	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"golang.org/x/image/math/fixed"
)

// HeatmapWidth and HeatmapHeight are the size of the picture Heatmap.Draw
// makes.
const HeatmapWidth, HeatmapHeight = 760, 620

// Heatmap is a score over a grid of two parameters, drawn as tiles with
// gaps between them on the cividis scale (Cividis) over a stated,
// anchored range, with a horizontal colour bar that marks where the
// grid's values lie on it.
type Heatmap struct {
	// Values[row][col]; row 0 is drawn at the bottom. NaN marks a cell
	// that failed.
	Values         [][]float64
	ColTicks       []string // one per column
	RowTicks       []string // one per row
	ColLabel       string   // below the grid
	RowLabel       string   // left of the grid, rotated
	Title, Caption string   // above the grid
	// Lo..Hi is the colour range, fixed by the caller so that the same
	// difference of scores looks the same on every run (for example the
	// metric's whole range 0..1); values outside it take the end colours.
	Lo, Hi float64
	// RangeNote says where the range comes from, printed under the bar.
	RangeNote string
	// Best are the winning cells [col, row], marked with a ring.
	Best [][2]int
	// Refined, when not nil, is a position between cell centres (in
	// column and row units, 0 at the first centre) marked with a small
	// cross: a best found off the grid.
	Refined *[2]float64
	// Format prints a value (tick labels, the spread); nil: %.4f.
	Format func(float64) string
}

var (
	ink   = color.RGBA{30, 30, 30, 255}
	paper = color.RGBA{250, 250, 247, 255}
	faded = color.RGBA{120, 120, 120, 255}
)

// Grid area and colour bar, in pixels.
const (
	hmLeft, hmRight, hmTop = 110, 40, 96
	hmGridBottom           = 440 // the grid's lower edge
	hmGap                  = 4   // gutter between tiles
	hmBarTop, hmBarH       = 520, 16
)

// Draw renders the heat map.
func (h *Heatmap) Draw() *image.RGBA {
	format := h.Format
	if format == nil {
		format = func(v float64) string { return fmt.Sprintf("%.4f", v) }
	}
	img := image.NewRGBA(image.Rect(0, 0, HeatmapWidth, HeatmapHeight))
	draw.Draw(img, img.Bounds(), &image.Uniform{paper}, image.Point{}, draw.Src)
	rows := len(h.Values)
	cols := 0
	if rows > 0 {
		cols = len(h.Values[0])
	}
	lo, hi := h.Lo, h.Hi
	if !(hi > lo) {
		hi = lo + 1
	}
	areaW, areaH := HeatmapWidth-hmLeft-hmRight, hmGridBottom-hmTop
	cw, ch := areaW, areaH
	if cols > 0 && rows > 0 {
		cw, ch = areaW/cols, areaH/rows
	}
	cell := func(c, r int) image.Rectangle {
		x0 := hmLeft + c*cw
		y0 := hmTop + (rows-1-r)*ch
		return image.Rect(x0+hmGap/2, y0+hmGap/2, x0+cw-hmGap/2, y0+ch-hmGap/2)
	}
	vmin, vmax := math.Inf(1), math.Inf(-1)
	failed := false
	for r, row := range h.Values {
		for c, v := range row {
			rect := cell(c, r)
			if math.IsNaN(v) {
				fill(img, rect, color.RGBA{215, 215, 210, 255})
				hatch(img, rect, faded)
				failed = true
				continue
			}
			vmin, vmax = math.Min(vmin, v), math.Max(vmax, v)
			fill(img, rect, Cividis((v-lo)/(hi-lo)))
		}
	}
	for _, b := range h.Best {
		rect := cell(b[0], b[1])
		cx, cy := (rect.Min.X+rect.Max.X)/2, (rect.Min.Y+rect.Max.Y)/2
		rad := max(5, min(rect.Dx(), rect.Dy())/5)
		ring(img, cx, cy, float64(rad)+2.5, 2, ink)
		ring(img, cx, cy, float64(rad), 2.5, color.RGBA{255, 255, 255, 255})
	}
	if h.Refined != nil && cols > 1 && rows > 1 {
		px := hmLeft + int(math.Round(float64(cw)/2+h.Refined[0]*float64(cw)))
		py := hmGridBottom - int(math.Round(float64(ch)/2+h.Refined[1]*float64(ch)))
		for d := -5; d <= 5; d++ {
			for k := -1; k <= 1; k++ {
				set(img, px+d+k, py+d, ink)
				set(img, px+d+k, py-d, ink)
			}
		}
		for d := -4; d <= 4; d++ {
			set(img, px+d, py+d, color.RGBA{255, 255, 255, 255})
			set(img, px+d, py-d, color.RGBA{255, 255, 255, 255})
		}
	}
	// Ticks: labels only, no tick marks, under each column and left of
	// each row.
	for c, s := range h.ColTicks {
		Text(img, s, hmLeft+c*cw+cw/2, hmGridBottom+18, ink, true)
	}
	for r, s := range h.RowTicks {
		cy := hmTop + (rows-1-r)*ch + ch/2
		Text(img, s, hmLeft-10-7*len(s), cy+4, ink, false)
	}
	Text(img, h.ColLabel, hmLeft+areaW/2, hmGridBottom+42, ink, true)
	vertical(img, h.RowLabel, 24, hmTop+areaH/2, ink)
	Text(img, h.Title, HeatmapWidth/2, 26, ink, true)
	Text(img, h.Caption, HeatmapWidth/2, 46, faded, true)
	legend := "ring: best of the grid"
	if h.Refined != nil && cols > 1 && rows > 1 {
		legend += ";  x: refined best between grid points"
	}
	if failed {
		legend += ";  hatched: failed"
	}
	Text(img, legend, HeatmapWidth/2, 66, faded, true)
	// Colour bar with the grid's span marked above it.
	barW := areaW
	for x := 0; x < barW; x++ {
		c := Cividis(float64(x) / float64(barW-1))
		for y := 0; y < hmBarH; y++ {
			img.SetRGBA(hmLeft+x, hmBarTop+y, c)
		}
	}
	for k := 0; k <= 4; k++ {
		v := lo + (hi-lo)*float64(k)/4
		x := hmLeft + int(math.Round(float64(barW-1)*float64(k)/4))
		for d := 0; d < 4; d++ {
			set(img, x, hmBarTop+hmBarH+d, ink)
		}
		Text(img, strconv.FormatFloat(v, 'g', 4, 64), x, hmBarTop+hmBarH+18, ink, true)
	}
	if !math.IsInf(vmin, 1) {
		pos := func(v float64) int {
			f := math.Max(0, math.Min(1, (v-lo)/(hi-lo)))
			return hmLeft + int(math.Round(f*float64(barW-1)))
		}
		x0, x1 := pos(vmin), pos(vmax)
		if x1-x0 < 3 {
			x0, x1 = x0-1, x1+1
		}
		y := hmBarTop - 6
		for x := x0; x <= x1; x++ {
			for k := 0; k < 3; k++ {
				set(img, x, y+k, ink)
			}
		}
		for k := -3; k < 6; k++ {
			set(img, x0, y+k, ink)
			set(img, x1, y+k, ink)
		}
		note := fmt.Sprintf("grid values %s to %s (spread %s)", format(vmin), format(vmax), format(vmax-vmin))
		nx := (x0 + x1) / 2
		half := 7 * len(note) / 2
		nx = max(hmLeft+half, min(nx, hmLeft+barW-half))
		Text(img, note, nx, y-8, ink, true)
	}
	Text(img, h.RangeNote, hmLeft+barW/2, hmBarTop+hmBarH+42, faded, true)
	return img
}

func fill(img *image.RGBA, r image.Rectangle, c color.RGBA) {
	draw.Draw(img, r, &image.Uniform{c}, image.Point{}, draw.Src)
}

// hatch draws diagonal lines over a failed cell.
func hatch(img *image.RGBA, r image.Rectangle, c color.RGBA) {
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if (x+y)%8 == 0 {
				img.SetRGBA(x, y, c)
			}
		}
	}
}

// ring draws a circle of radius rad and the given line width, centred on
// (cx, cy), anti-aliased by the pixel centre's distance to the circle.
func ring(img *image.RGBA, cx, cy int, rad, width float64, c color.RGBA) {
	n := int(rad + width + 2)
	for dy := -n; dy <= n; dy++ {
		for dx := -n; dx <= n; dx++ {
			d := math.Abs(math.Hypot(float64(dx), float64(dy)) - rad)
			a := math.Max(0, math.Min(1, width/2+0.5-d))
			if a <= 0 {
				continue
			}
			x, y := cx+dx, cy+dy
			if !image.Pt(x, y).In(img.Bounds()) {
				continue
			}
			o := img.RGBAAt(x, y)
			img.SetRGBA(x, y, color.RGBA{
				uint8(math.Round(a*float64(c.R) + (1-a)*float64(o.R))),
				uint8(math.Round(a*float64(c.G) + (1-a)*float64(o.G))),
				uint8(math.Round(a*float64(c.B) + (1-a)*float64(o.B))),
				255})
		}
	}
}

func set(img *image.RGBA, x, y int, c color.RGBA) {
	if image.Pt(x, y).In(img.Bounds()) {
		img.SetRGBA(x, y, c)
	}
}

// Text draws s in the 7 x 13 fixed font of golang.org/x/image with its
// baseline at y, starting at x or centred on x.
func Text(img draw.Image, s string, x, y int, c color.Color, centre bool) {
	d := &font.Drawer{Dst: img, Src: image.NewUniform(c), Face: basicfont.Face7x13}
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
	Text(tmp, s, 1, 12, c, false)
	for y := 0; y < 16; y++ {
		for x := 0; x < w; x++ {
			if tmp.RGBAAt(x, y).A > 0 {
				set(img, cx-8+y, cy+w/2-x, tmp.RGBAAt(x, y))
			}
		}
	}
}
