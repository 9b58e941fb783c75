package main

import (
	"fmt"
	"image/png"
	"io"
	"math"
	"strings"

	"github.com/cleave-seg/cleave/imageio/render"
)

// Heatmap size in pixels (render's).
const plotW, plotH = render.HeatmapWidth, render.HeatmapHeight

// heatmapRange is the colour range of tune.png, fixed in advance so that
// a small difference of scores looks small: the metric's whole range 0..1
// for the scores bounded by 1 (ARI below 0 takes the low end), and for
// VI (0 best, no fixed top) 0 up to the largest grid value rounded up to
// 1, 2 or 5 times a power of ten.
func heatmapRange(metric string, vmax float64) (lo, hi float64, note string) {
	if metric != "vi" {
		return 0, 1, fmt.Sprintf("colour: %s from 0 to 1, its whole range, on the cividis scale", metric)
	}
	hi = 1
	if vmax > 0 && !math.IsInf(vmax, 0) {
		p := math.Pow(10, math.Floor(math.Log10(vmax)))
		for _, m := range []float64{1, 2, 5, 10} {
			if m*p >= vmax {
				hi = m * p
				break
			}
		}
	}
	return 0, hi, fmt.Sprintf("colour: vi from 0 (best) to %g, the largest grid value rounded up, on the cividis scale", hi)
}

// writeHeatmap draws tune.png: the mean score over the sigma-i x sigma-x
// grid with the other parameters at the best grid setting, the best grid
// cell ringed and the refined best crossed (render.Heatmap).
func (t *tuner) writeHeatmap(w io.Writer, gridBest, best *evaluation, imgs []int) error {
	xs, ys := t.axisValues(dimSigmaI), t.axisValues(dimSigmaX)
	h := render.Heatmap{Values: make([][]float64, len(ys))}
	vmax := math.Inf(-1)
	for iy, y := range ys {
		h.Values[iy] = make([]float64, len(xs))
		for ix, x := range xs {
			p := gridBest.pt
			p[dimSigmaI], p[dimSigmaX] = x, y
			v := math.NaN()
			if e, ok := t.cache[t.key(p)]; ok {
				v = t.value(e, imgs)
			}
			h.Values[iy][ix] = v
			if !math.IsNaN(v) {
				vmax = math.Max(vmax, v)
			}
			if x == gridBest.pt[dimSigmaI] && y == gridBest.pt[dimSigmaX] || (t.dims[dimSigmaI].auto && y == gridBest.pt[dimSigmaX]) {
				h.Best = append(h.Best, [2]int{ix, iy})
			}
		}
	}
	h.Lo, h.Hi, h.RangeNote = heatmapRange(t.metric, vmax)
	for _, x := range xs {
		h.ColTicks = append(h.ColTicks, t.tickText(dimSigmaI, x))
	}
	for _, y := range ys {
		h.RowTicks = append(h.RowTicks, t.tickText(dimSigmaX, y))
	}
	h.ColLabel = "sigma-i (intensity kernel width, normalized units)"
	h.RowLabel = "sigma-x (spatial kernel width, pixels)"
	name := t.metric
	if t.metric == "vi" {
		name += " (lower is better)"
	}
	h.Title = fmt.Sprintf("mean %s over %s", name, plural(len(imgs), "image"))
	var fixedParts []string
	for d := dimMaxNcut; d < numDims; d++ {
		fixedParts = append(fixedParts, dimNames[d]+" "+t.tickText(d, gridBest.pt[d]))
	}
	h.Caption = "at " + strings.Join(fixedParts, ", ")
	// The refined best at its log position when it left the grid.
	if best != gridBest && len(xs) > 1 && len(ys) > 1 && !t.dims[dimSigmaI].auto && !t.dims[dimSigmaX].auto {
		pos := func(v float64, vs []float64) float64 {
			return float64(len(vs)-1) * math.Log(v/vs[0]) / math.Log(vs[len(vs)-1]/vs[0])
		}
		h.Refined = &[2]float64{pos(best.pt[dimSigmaI], xs), pos(best.pt[dimSigmaX], ys)}
	}
	return png.Encode(w, h.Draw())
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
