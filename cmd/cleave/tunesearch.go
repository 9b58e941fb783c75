package main

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/cleave-seg/cleave/segment"
)

// The searched parameters, in this order in every point, table and file.
const (
	dimSigmaI = iota
	dimSigmaX
	dimMaxNcut
	dimRadius
	dimSuperpixels
	dimCompactness
	numDims
)

var dimNames = [numDims]string{"sigma-i", "sigma-x", "max-ncut", "radius", "superpixels", "compactness"}

// dim is one searched parameter: its grid values (ascending), or "auto".
type dim struct {
	name    string
	values  []float64
	integer bool
	auto    bool // fixed at "auto" (sigma-i, sigma-x, superpixels only)
	spec    string
}

// refinable reports whether local refinement moves this parameter: a
// continuous parameter with at least two grid values.
func (d dim) refinable() bool { return !d.integer && !d.auto && len(d.values) > 1 }

// logStep is the mean spacing of the grid values in log space.
func (d dim) logStep() float64 {
	n := len(d.values)
	return math.Log(d.values[n-1]/d.values[0]) / float64(n-1)
}

// point is one setting of the searched parameters (unused for auto dims).
type point [numDims]float64

// sig4 rounds to 4 significant digits, so that every evaluated value is
// short in files and exactly the value a params file reproduces.
func sig4(v float64) float64 {
	x, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 4, 64), 64)
	return x
}

func fmtValue(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// parseSpec reads a search space: A:B:N (N values log-spaced from A to B,
// both included), a list a,b,c, a single value, or auto where allowed.
func parseSpec(name, text string, integer, allowAuto, allowZero bool) (dim, error) {
	d := dim{name: name, integer: integer, spec: text}
	t := strings.TrimSpace(text)
	if strings.EqualFold(t, "auto") {
		if !allowAuto {
			return d, usagef("--%s cannot be auto", name)
		}
		d.auto = true
		return d, nil
	}
	num := func(s string) (float64, error) {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		switch {
		case err != nil || math.IsNaN(v) || math.IsInf(v, 0):
			return 0, usagef("--%s: %q is not a number (want A:B:N, a list a,b,c or one value)", name, s)
		case integer && v != math.Trunc(v):
			return 0, usagef("--%s: %q is not a whole number", name, s)
		case v < 0 || (v == 0 && !allowZero):
			return 0, usagef("--%s: %q must be positive", name, s)
		case v > 1e9:
			return 0, usagef("--%s: %q is too large", name, s)
		}
		return v, nil
	}
	var vals []float64
	switch {
	case strings.Contains(t, ":"):
		parts := strings.Split(t, ":")
		if len(parts) != 3 {
			return d, usagef("--%s: %q is not A:B:N", name, text)
		}
		a, err := num(parts[0])
		if err != nil {
			return d, err
		}
		b, err := num(parts[1])
		if err != nil {
			return d, err
		}
		n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
		if err != nil || n < 1 || n > 50 {
			return d, usagef("--%s: N in %q must be a whole number from 1 to 50", name, text)
		}
		if a == 0 || b == 0 {
			return d, usagef("--%s: %q: log-spaced values need A and B above 0 (give 0 in a list)", name, text)
		}
		for k := 0; k < n; k++ {
			v := a
			if n > 1 {
				v = a * math.Pow(b/a, float64(k)/float64(n-1))
			}
			vals = append(vals, v)
		}
	default:
		for _, s := range strings.Split(t, ",") {
			v, err := num(s)
			if err != nil {
				return d, err
			}
			vals = append(vals, v)
		}
	}
	for i, v := range vals {
		if integer {
			vals[i] = math.Round(v)
		} else {
			vals[i] = sig4(v)
		}
	}
	slices.Sort(vals)
	d.values = slices.Compact(vals)
	return d, nil
}

// defaultDim is the search of a parameter whose flag was not given.
func defaultDim(name string, values []float64, integer bool) dim {
	parts := make([]string, len(values))
	for i, v := range values {
		if !integer {
			v = sig4(v)
			values[i] = v
		}
		parts[i] = fmtValue(v)
	}
	return dim{name: name, values: values, integer: integer, spec: strings.Join(parts, ",") + " (default)"}
}

// logSpaced returns n values log-spaced from a to b.
func logSpaced(a, b float64, n int) []float64 {
	v := make([]float64, n)
	for k := range v {
		v[k] = a * math.Pow(b/a, float64(k)/float64(n-1))
	}
	return v
}

// evaluation is one setting scored on every image.
type evaluation struct {
	pt       point
	key      string
	stage    string
	perImage []metrics
	errs     []string // per image, "" when it segmented
	seconds  float64  // segmentation wall time summed over images
}

// tuner runs the search. Every setting is evaluated on every image and
// cached by its key, so folds and the final search share evaluations.
type tuner struct {
	ctx     context.Context
	base    settings
	dims    [numDims]dim
	images  []*loaded
	truths  [][]int32
	names   []string
	workers int
	metric  string
	tol     float64
	cache   map[string]*evaluation
	order   []*evaluation
}

// settingsAt is the full settings of a point: the fixed settings with the
// searched parameters replaced.
func (t *tuner) settingsAt(p point) settings {
	s := t.base
	f := func(d int) string {
		if t.dims[d].auto {
			return "auto"
		}
		return fmtValue(p[d])
	}
	s.SigmaI, s.SigmaX, s.Superpixels = f(dimSigmaI), f(dimSigmaX), f(dimSuperpixels)
	s.MaxNcut, s.Radius, s.Compactness = p[dimMaxNcut], int(p[dimRadius]), p[dimCompactness]
	return s
}

func (t *tuner) key(p point) string {
	parts := make([]string, numDims)
	for d := range parts {
		if t.dims[d].auto {
			parts[d] = "auto"
		} else {
			parts[d] = fmtValue(p[d])
		}
	}
	return strings.Join(parts, " ")
}

// evaluate scores the points not yet cached, in parallel over images and
// settings; each segmentation runs on one thread, so results do not depend
// on the number of workers. It returns the evaluations of all points.
func (t *tuner) evaluate(points []point, stage string) ([]*evaluation, error) {
	out := make([]*evaluation, len(points))
	var fresh []*evaluation
	for i, p := range points {
		k := t.key(p)
		e, ok := t.cache[k]
		if !ok {
			e = t.newEvaluation(p, k, stage)
			t.cache[k] = e
			fresh = append(fresh, e)
		}
		out[i] = e
	}
	if len(fresh) == 0 {
		return out, nil
	}
	params := make([]segment.Params, len(fresh))
	for i, e := range fresh {
		r, err := t.settingsAt(e.pt).resolve(1)
		if err != nil {
			return nil, fmt.Errorf("setting %s: %w", e.key, err)
		}
		params[i] = r.params
	}
	if _, err := t.run(fresh, params); err != nil {
		return nil, err
	}
	return out, nil
}

// run segments every image with every parameter set and scores it into
// es, in parallel; each segmentation runs on one thread, so results do not
// depend on the number of workers. It returns the parameters as resolved
// per setting and image (automatic values filled in).
func (t *tuner) run(es []*evaluation, params []segment.Params) ([][]segment.Params, error) {
	nImg := len(t.images)
	nTasks := len(es) * nImg
	secs := make([]float64, nTasks)
	used := make([][]segment.Params, len(es))
	for i := range used {
		used[i] = make([]segment.Params, nImg)
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < min(t.workers, nTasks); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				k := int(next.Add(1)) - 1
				if k >= nTasks || t.ctx.Err() != nil {
					return
				}
				i, j := k/nImg, k%nImg
				start := time.Now()
				res, err := segmentInput(t.ctx, t.images[j], params[i])
				if err != nil {
					es[i].errs[j] = err.Error()
				} else {
					f := t.images[j].features
					es[i].perImage[j] = scoreMaps(res.Labels, t.truths[j], f.Width, f.Height, t.tol)
					used[i][j] = res.Params
				}
				secs[k] = time.Since(start).Seconds()
			}
		}()
	}
	wg.Wait()
	if err := t.ctx.Err(); err != nil {
		return nil, err
	}
	for i, e := range es {
		for j := range t.images {
			e.seconds += secs[i*nImg+j]
		}
		t.order = append(t.order, e)
	}
	return used, nil
}

// newEvaluation is an empty evaluation of a point.
func (t *tuner) newEvaluation(p point, key, stage string) *evaluation {
	return &evaluation{pt: p, key: key, stage: stage, perImage: make([]metrics, len(t.images)), errs: make([]string, len(t.images))}
}

// value is the mean of the tuned metric over the images imgs (as scored,
// VI lower is better).
func (t *tuner) value(e *evaluation, imgs []int) float64 {
	var s float64
	for _, j := range imgs {
		if e.errs[j] != "" {
			return math.NaN()
		}
		s += e.perImage[j].get(t.metric)
	}
	return s / float64(len(imgs))
}

// objective is value turned so that higher is better; failures are -Inf.
func (t *tuner) objective(e *evaluation, imgs []int) float64 {
	v := t.value(e, imgs)
	switch {
	case math.IsNaN(v):
		return math.Inf(-1)
	case t.metric == "vi":
		return -v
	}
	return v
}

// tieTolerance: objectives closer than this are equal and the smoother
// setting wins.
const tieTolerance = 1e-12

// better reports whether a beats b on imgs: a higher objective, or an
// equal one and a smoother setting.
func (t *tuner) better(a, b *evaluation, imgs []int) bool {
	oa, ob := t.objective(a, imgs), t.objective(b, imgs)
	if math.Abs(oa-ob) > tieTolerance || math.IsInf(oa, 0) || math.IsInf(ob, 0) {
		return oa > ob
	}
	return smoother(a.pt, b.pt)
}

// smoother orders settings from the smoothest: wider kernels (a larger
// sigma-x, then a larger sigma-i make affinities vary less), a stricter
// stop threshold (smaller max-ncut: fewer splits), fewer superpixels, a
// larger radius, rounder superpixels (larger compactness).
func smoother(a, b point) bool {
	for _, c := range []struct {
		d    int
		sign float64
	}{{dimSigmaX, 1}, {dimSigmaI, 1}, {dimMaxNcut, -1}, {dimSuperpixels, -1}, {dimRadius, 1}, {dimCompactness, 1}} {
		if a[c.d] != b[c.d] {
			return c.sign*(a[c.d]-b[c.d]) > 0
		}
	}
	return false
}

// bestOf returns the best evaluation of es on imgs.
func (t *tuner) bestOf(es []*evaluation, imgs []int) *evaluation {
	var best *evaluation
	for _, e := range es {
		if best == nil || t.better(e, best, imgs) {
			best = e
		}
	}
	return best
}

// gridPoints is the coarse grid: every combination of the grid values.
func (t *tuner) gridPoints() []point {
	pts := []point{{}}
	for d := 0; d < numDims; d++ {
		if t.dims[d].auto {
			continue
		}
		var next []point
		for _, p := range pts {
			for _, v := range t.dims[d].values {
				q := p
				q[d] = v
				next = append(next, q)
			}
		}
		pts = next
	}
	return pts
}

// refine is a pattern search in log space around start (Hooke and Jeeves
// 1961, Direct search solution of numerical and statistical problems, J.
// ACM 8, the exploratory moves): every refinable parameter is tried one
// step up and one step down at once; the best move is taken if it
// improves the score, else the steps halve. (A parameter flat across the
// grid is still refined: on the plates, sigma-x scored the same at all
// three grid values and better between them.) Steps start at half the grid spacing and
// values stay within the grid range widened by one grid step. At most
// budget new settings are evaluated.
func (t *tuner) refine(start *evaluation, imgs []int, budget int) (*evaluation, error) {
	var step, lo, hi [numDims]float64
	var dims []int
	for d := 0; d < numDims; d++ {
		if t.dims[d].refinable() {
			dims = append(dims, d)
			g := t.dims[d].logStep()
			step[d] = g / 2
			lo[d] = math.Log(t.dims[d].values[0]) - g
			hi[d] = math.Log(t.dims[d].values[len(t.dims[d].values)-1]) + g
		}
	}
	cur, used := start, 0
	for len(dims) > 0 && used < budget {
		var cands []point
		seen := map[string]bool{cur.key: true}
		for _, d := range dims {
			for _, s := range []float64{-1, 1} {
				x := math.Log(cur.pt[d]) + s*step[d]
				if x < lo[d]-1e-12 || x > hi[d]+1e-12 {
					continue
				}
				q := cur.pt
				q[d] = sig4(math.Exp(x))
				if k := t.key(q); !seen[k] {
					seen[k] = true
					cands = append(cands, q)
				}
			}
		}
		// Cached candidates are free; new ones count against the budget.
		var keep []point
		for _, q := range cands {
			if _, ok := t.cache[t.key(q)]; ok {
				keep = append(keep, q)
			} else if used < budget {
				keep = append(keep, q)
				used++
			}
		}
		es, err := t.evaluate(keep, "refine")
		if err != nil {
			return nil, err
		}
		// Only a strict improvement moves the search: on a plateau of equal
		// scores it would otherwise drift toward the smoothest corner.
		if b := t.bestOf(es, imgs); b != nil && t.objective(b, imgs) > t.objective(cur, imgs)+tieTolerance {
			cur = b
			continue
		}
		small := true
		for _, d := range dims {
			step[d] /= 2
			if step[d] > 0.01 {
				small = false
			}
		}
		if small {
			break
		}
	}
	return cur, nil
}

// search is the coarse grid (already evaluated in grid) then refinement,
// judged on the images imgs.
func (t *tuner) search(grid []*evaluation, imgs []int, budget int) (gridBest, best *evaluation, err error) {
	gridBest = t.bestOf(grid, imgs)
	best, err = t.refine(gridBest, imgs, budget)
	return gridBest, best, err
}

// foldResult is one fold of the cross-validation.
type foldResult struct {
	Held      []string          `json:"held_out"`
	Params    map[string]string `json:"params"`
	Train     float64           `json:"train_score"`
	HeldScore *float64          `json:"held_out_score"` // null when the choice failed on a held-out image
}

// finite returns &v, or nil when v is NaN (JSON has no NaN).
func finite(v float64) *float64 {
	if math.IsNaN(v) {
		return nil
	}
	return &v
}

// crossValidate runs K-fold cross-validation over the images (image i in
// name order is held out in fold i mod K; leave-one-out when there are
// fewer images than K): each fold searches on the other images and scores
// its choice on the held-out ones. The cross-validated score is the mean
// over all images of their held-out scores; it is NaN when a fold's choice
// failed to segment a held-out image.
func (t *tuner) crossValidate(grid []*evaluation, k, budget int) ([]foldResult, float64, error) {
	n := len(t.images)
	if k > n {
		k = n
	}
	held := make([]float64, n)
	var folds []foldResult
	for f := 0; f < k; f++ {
		var train, test []int
		for i := 0; i < n; i++ {
			if i%k == f {
				test = append(test, i)
			} else {
				train = append(train, i)
			}
		}
		_, best, err := t.search(grid, train, budget)
		if err != nil {
			return nil, 0, err
		}
		fr := foldResult{Params: t.paramStrings(best.pt), Train: t.value(best, train), HeldScore: finite(t.value(best, test))}
		for _, i := range test {
			fr.Held = append(fr.Held, t.names[i])
			held[i] = t.value(best, []int{i})
		}
		folds = append(folds, fr)
	}
	var s float64
	for _, v := range held {
		s += v
	}
	return folds, s / float64(n), nil
}

// paramStrings are the searched parameters of a point as text.
func (t *tuner) paramStrings(p point) map[string]string {
	m := map[string]string{}
	for d := 0; d < numDims; d++ {
		if t.dims[d].auto {
			m[dimNames[d]] = "auto"
		} else {
			m[dimNames[d]] = fmtValue(p[d])
		}
	}
	return m
}

// defaultWorkers is the number of concurrent segmentations.
func defaultWorkers(n int) int {
	if n > 0 {
		return n
	}
	return runtime.NumCPU()
}

// median of a non-empty slice (sorted copy).
func median(v []float64) float64 {
	s := slices.Clone(v)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
