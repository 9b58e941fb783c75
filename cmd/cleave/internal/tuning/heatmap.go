package tuning

import (
	"fmt"
	"image/png"
	"io"
	"math"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// HeatmapRange is the colour range of tune.png, fixed in advance so that
// a small difference of scores looks small: the metric's whole range 0..1
// for the scores bounded by 1 (ARI below 0 takes the low end), and for
// VI (0 best, no fixed top) 0 up to the largest grid value vmax rounded
// up to 1, 2 or 5 times a power of ten.
func HeatmapRange(metric score.Metric, vmax float64) (lo, hi float64, note string) {
	if !metric.LowerIsBetter() {
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
func (o *Outcome) writeHeatmap(w io.Writer) error {
	h := o.heatmap()
	return png.Encode(w, h.Draw())
}

// heatmap is tune.png's content.
func (o *Outcome) heatmap() render.Heatmap {
	t, gridBest, best := o.tuner, o.gridBest, o.best
	imgs := t.All()
	xs, ys := axisValues(t, tune.SigmaI), axisValues(t, tune.SigmaX)
	h := render.Heatmap{Values: make([][]float64, len(ys))}
	vmax := math.Inf(-1)
	for iy, y := range ys {
		h.Values[iy] = make([]float64, len(xs))
		for ix, x := range xs {
			p := gridBest.Point
			p[tune.SigmaI], p[tune.SigmaX] = x, y
			v := math.NaN()
			if e, ok := t.Cached(p); ok {
				v = t.Value(e, imgs)
			}
			h.Values[iy][ix] = v
			if !math.IsNaN(v) {
				vmax = math.Max(vmax, v)
			}
			if x == gridBest.Point[tune.SigmaI] && y == gridBest.Point[tune.SigmaX] || (t.Space[tune.SigmaI].Auto && y == gridBest.Point[tune.SigmaX]) {
				h.Best = append(h.Best, [2]int{ix, iy})
			}
		}
	}
	h.Lo, h.Hi, h.RangeNote = HeatmapRange(t.Metric, vmax)
	for _, x := range xs {
		h.ColTicks = append(h.ColTicks, tickText(t, tune.SigmaI, x))
	}
	for _, y := range ys {
		h.RowTicks = append(h.RowTicks, tickText(t, tune.SigmaX, y))
	}
	h.ColLabel = "sigma-i (intensity kernel width, normalized units)"
	h.RowLabel = "sigma-x (spatial kernel width, pixels)"
	name := t.Metric.String()
	if t.Metric.LowerIsBetter() {
		name += " (lower is better)"
	}
	h.Title = fmt.Sprintf("mean %s over %s", name, pipeline.Plural(len(imgs), "image"))
	var fixedParts []string
	for _, d := range Reported(&t.Space) {
		if d == tune.SigmaI || d == tune.SigmaX {
			continue
		}
		fixedParts = append(fixedParts, d.String()+" "+tickText(t, d, gridBest.Point[d]))
	}
	h.Caption = "at " + strings.Join(fixedParts, ", ")
	// The refined best at its log position when it left the grid.
	switch {
	case o.unvalidated:
		h.Caption += "; automatic settings kept (the search did not carry over to held-out images)"
	case o.kept:
		h.Caption += "; automatic settings kept (none here beat them by more than a tie)"
	}
	if best != gridBest && !o.kept && len(xs) > 1 && len(ys) > 1 && !t.Space[tune.SigmaI].Auto && !t.Space[tune.SigmaX].Auto {
		pos := func(v float64, vs []float64) float64 {
			return float64(len(vs)-1) * math.Log(v/vs[0]) / math.Log(vs[len(vs)-1]/vs[0])
		}
		h.Refined = &[2]float64{pos(best.Point[tune.SigmaI], xs), pos(best.Point[tune.SigmaX], ys)}
	}
	return h
}

// axisValues are the grid values of a heatmap axis (one NaN for auto).
func axisValues(t *tune.Tuner, d tune.Param) []float64 {
	if t.Space[d].Auto {
		return []float64{math.NaN()}
	}
	return t.Space[d].Values
}

func tickText(t *tune.Tuner, d tune.Param, v float64) string {
	if t.Space[d].Auto || math.IsNaN(v) {
		return "auto"
	}
	if d.Switch() {
		return tune.OnOff(v)
	}
	return strings.TrimSuffix(fmt.Sprintf("%.4g", v), ".")
}
