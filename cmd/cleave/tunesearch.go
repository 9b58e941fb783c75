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

// searchBounds is the range a searched parameter's values must keep (the
// ranges of segment.Params.Validate; the lower end of max-ncut is
// exclusive, checked as "positive"). Parsing, refinement and widening all
// stay within it, so no setting of the search is refused.
func searchBounds(name string) (lo, hi float64) {
	switch name {
	case "sigma-i":
		return segment.MinSigmaI, segment.MaxSigmaI
	case "sigma-x":
		return segment.MinSigmaX, segment.MaxSigmaX
	case "max-ncut":
		return 0, segment.MaxNcutLimit
	case "radius":
		return 1, segment.MaxRadius
	case "superpixels":
		return 0, segment.MaxSuperpixels
	case "compactness":
		return 0, segment.MaxCompactness
	}
	panic("cleave: no bounds for " + name)
}

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
		}
		if lo, hi := searchBounds(name); v < lo || v > hi {
			return 0, usagef("--%s: %q is outside the range %g to %g", name, s, lo, hi)
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
// Values outside the parameter's range (an automatic value times the
// default spread can leave it) are clamped to its ends.
func defaultDim(name string, values []float64, integer bool) dim {
	lo, hi := searchBounds(name)
	for i, v := range values {
		if !integer {
			v = sig4(v)
		}
		values[i] = min(max(v, lo), hi)
	}
	values = slices.Compact(values)
	parts := make([]string, len(values))
	for i, v := range values {
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
	seconds  float64  // segmentation wall time summed over images (with the shared cache)
	// cost is the cost model of each image's segmentation (segCost),
	// recorded when it runs; 0 where the image failed. The speed
	// tie-break compares it; it never depends on the clock.
	cost []float64
	// imgSeconds are the seconds of one segmentation per image without the
	// shared cache (see timeSettings); nil until timed. Information only.
	imgSeconds []float64
	timeErr    string
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
	prog    *tuneProgress // nil: no progress lines
	// smootherTies keeps ties on the smoother setting (--tie-break
	// smoother) instead of the cheapest by the cost model.
	smootherTies bool

	// evalFn, costFn and timeFn, when set, replace segmentation, its cost
	// model and its timing by given functions (the tests' synthetic
	// searches). Without costFn a synthetic cost is 0.
	evalFn func(p point, img int) (metrics, error)
	costFn func(p point, img int) float64
	timeFn func(p point, img int) (float64, error)
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
	if t.evalFn != nil {
		for _, e := range fresh {
			for j := range t.images {
				m, err := t.evalFn(e.pt, j)
				if err != nil {
					e.errs[j] = err.Error()
				} else if t.costFn != nil {
					e.cost[j] = t.costFn(e.pt, j)
				}
				e.perImage[j] = m
			}
			t.order = append(t.order, e)
			t.settingDone(e)
		}
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
	left := make([]atomic.Int32, len(es))
	for i := range left {
		left[i].Store(int32(nImg))
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
				var m metrics
				if err == nil {
					f := t.images[j].features
					m, err = scoreMapsContext(t.ctx, res.Labels, t.truths[j], f.Width, f.Height, t.tol)
				}
				if err != nil {
					es[i].errs[j] = withFlags(err).Error()
				} else {
					es[i].perImage[j] = m
					es[i].cost[j] = segCost(res)
					used[i][j] = res.Params
				}
				secs[k] = time.Since(start).Seconds()
				if left[i].Add(-1) == 0 {
					t.settingDone(es[i])
				}
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

// settingDone reports an evaluated setting to the progress line.
func (t *tuner) settingDone(e *evaluation) {
	if t.prog == nil {
		return
	}
	all := make([]int, len(t.images))
	for i := range all {
		all[i] = i
	}
	t.prog.settingDone(t.value(e, all))
}

// newEvaluation is an empty evaluation of a point.
func (t *tuner) newEvaluation(p point, key, stage string) *evaluation {
	n := len(t.images)
	return &evaluation{pt: p, key: key, stage: stage, perImage: make([]metrics, n), errs: make([]string, n), cost: make([]float64, n)}
}

// segCost is the cost model of one segmentation, computed from its result
// and never from the clock, so that the speed tie-break is the same on
// every run and machine:
//
//	cost = nnz(W) * (1 + log2(R))
//
// with nnz(W) the stored nonzeros of the top-level affinity graph
// (len(Graph.Col): the work of one Lanczos sweep of the eigensolver, whose
// sparse products dominate, scales with it) and R the number of regions.
// A balanced recursive two-way cut into R regions has log2(R) levels of
// accepted splits, and the subgraphs of one level together hold at most
// nnz(W) entries; each final region is solved once more for the split
// refused by max-ncut: 1 + log2(R) levels of nnz(W) each (Shi and Malik
// 2000, Normalized cuts and image segmentation, IEEE TPAMI 22(8): the
// recursive two-way cut, solved by Lanczos iterations whose cost is that
// of the sparse products). The re-cut of touching objects is left
// out: segment.Result does not report the pixel counts of the objects it
// re-cut.
func segCost(res *segment.Result) float64 {
	if res == nil || res.Graph == nil {
		return 0
	}
	return float64(res.Graph.NNZ()) * (1 + math.Log2(float64(max(res.NumRegions, 1))))
}

// costPerImage is the mean of the cost model over imgs; NaN when an image
// failed.
func (t *tuner) costPerImage(e *evaluation, imgs []int) float64 {
	var s float64
	for _, j := range imgs {
		if e.errs[j] != "" {
			return math.NaN()
		}
		s += e.cost[j]
	}
	return s / float64(len(imgs))
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

// tieRelative: two objectives whose difference is at most this fraction
// of the larger magnitude (and at least 1e-12 apart absolutely) are a tie.
// 1e-4 is far below what a few annotated images can tell apart (one
// object in 100 changes F1 by about 1e-2).
const tieRelative = 1e-4

// tied reports whether two objectives are equal within tieRelative.
func tied(a, b float64) bool {
	if math.IsInf(a, 0) || math.IsInf(b, 0) {
		return a == b
	}
	return math.Abs(a-b) <= math.Max(1e-12, tieRelative*math.Max(math.Abs(a), math.Abs(b)))
}

// better reports whether a beats b on imgs: a higher objective, or an
// equal one (within tieRelative) and a smoother setting.
func (t *tuner) better(a, b *evaluation, imgs []int) bool {
	oa, ob := t.objective(a, imgs), t.objective(b, imgs)
	if !tied(oa, ob) {
		return oa > ob
	}
	return smoother(a.pt, b.pt)
}

// improves reports whether a is better than b by more than a tie.
func (t *tuner) improves(a, b *evaluation, imgs []int) bool {
	oa, ob := t.objective(a, imgs), t.objective(b, imgs)
	return oa > ob && !tied(oa, ob)
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

// gridPoints is the coarse grid of dims: every combination of the grid
// values.
func gridPoints(dims *[numDims]dim) []point {
	pts := []point{{}}
	for d := 0; d < numDims; d++ {
		if dims[d].auto {
			continue
		}
		var next []point
		for _, p := range pts {
			for _, v := range dims[d].values {
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
// values stay within the grid range widened by one grid step, and within
// the parameter's range (searchBounds). At most
// budget new settings are evaluated. It returns the best and every
// setting it looked at.
func (t *tuner) refine(start *evaluation, space *[numDims]dim, imgs []int, budget int) (*evaluation, []*evaluation, error) {
	var step, lo, hi [numDims]float64
	var dims []int
	for d := 0; d < numDims; d++ {
		if space[d].refinable() {
			dims = append(dims, d)
			g := space[d].logStep()
			step[d] = g / 2
			blo, bhi := searchBounds(space[d].name)
			lo[d] = max(math.Log(space[d].values[0])-g, math.Log(blo))
			hi[d] = min(math.Log(space[d].values[len(space[d].values)-1])+g, math.Log(bhi))
		}
	}
	var visited []*evaluation
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
			return nil, nil, err
		}
		visited = append(visited, es...)
		// Only an improvement beyond a tie moves the search: on a plateau
		// of equal scores it would otherwise drift toward the smoothest
		// corner.
		if b := t.bestOf(es, imgs); b != nil && t.improves(b, cur, imgs) {
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
	return cur, visited, nil
}

// maxWidenings is the most times one parameter's range is widened.
const maxWidenings = 2

// widening is one widening of a parameter's range: the best setting sat on
// an end of it.
type widening struct {
	Parameter string  `json:"parameter"`
	Side      string  `json:"side"` // "low" or "high"
	Edge      float64 `json:"edge"` // the end the best sat on
	Added     float64 `json:"added"`
	Score     float64 `json:"score_before"`
}

// searchResult is one search's outcome.
type searchResult struct {
	gridBest *evaluation // best of the initial grid
	top      *evaluation // best objective (the smoother setting on ties)
	best     *evaluation // the choice: among settings tied with top, the cheapest by the cost model
	dims     [numDims]dim
	widened  []widening
	ties     []*evaluation // settings tied with top (best first; see chooseFaster)
	visited  []*evaluation
}

// search is the coarse grid then refinement, judged on the images imgs.
// When the best sits on an end of the range of a continuous parameter
// (at or beyond its first or last grid value), that range is widened by
// one grid step outward (a new grid value; the grid is completed) and the
// search runs again, at most maxWidenings times per parameter, and again
// only while widening improves the score. say, when set, tells the user.
// Among the settings tied with the best, the cheapest by the cost model
// is chosen (chooseFaster).
func (t *tuner) search(imgs []int, budget int, say func(string)) (*searchResult, error) {
	r := &searchResult{dims: t.dims}
	var step [numDims]float64
	for d := range step {
		if t.dims[d].refinable() {
			step[d] = t.dims[d].logStep()
		}
	}
	seen := map[*evaluation]bool{}
	visit := func(es []*evaluation) {
		for _, e := range es {
			if !seen[e] {
				seen[e] = true
				r.visited = append(r.visited, e)
			}
		}
	}
	var count [numDims]int
	stage := "grid"
	for round := 0; ; round++ {
		grid, err := t.evaluate(gridPoints(&r.dims), stage)
		if err != nil {
			return nil, err
		}
		visit(grid)
		gb := t.bestOf(grid, imgs)
		if round == 0 {
			r.gridBest = gb
		}
		top, vis, err := t.refine(gb, &r.dims, imgs, budget)
		if err != nil {
			return nil, err
		}
		visit(vis)
		if round > 0 && !t.improves(top, r.top, imgs) {
			if t.better(top, r.top, imgs) {
				r.top = top
			}
			break
		}
		r.top = top
		if math.IsInf(t.objective(top, imgs), -1) {
			break
		}
		// The settings tied with the best: a parameter is widened only when
		// all of them sit on the same end of its range (on a plateau that
		// reaches inside the range the optimum is not pinned to the end).
		var best []*evaluation
		for _, e := range r.visited {
			if tied(t.objective(e, imgs), t.objective(top, imgs)) {
				best = append(best, e)
			}
		}
		var added []widening
		for d := 0; d < numDims; d++ {
			dm := r.dims[d]
			if !dm.refinable() || count[d] >= maxWidenings {
				continue
			}
			v, lo, hi := top.pt[d], dm.values[0], dm.values[len(dm.values)-1]
			atLow, atHigh := true, true
			for _, e := range best {
				atLow = atLow && e.pt[d] <= lo*(1+1e-9)
				atHigh = atHigh && e.pt[d] >= hi*(1-1e-9)
			}
			w := widening{Parameter: dm.name, Score: t.value(top, imgs)}
			switch {
			case atLow:
				w.Side, w.Edge, w.Added = "low", lo, sig4(lo*math.Exp(-step[d]))
			case atHigh:
				w.Side, w.Edge, w.Added = "high", hi, sig4(hi*math.Exp(step[d]))
			default:
				continue
			}
			// Never past the parameter's range (a normalized cut never
			// exceeds 2: no max-ncut above it).
			if blo, bhi := searchBounds(dm.name); w.Added == w.Edge || w.Added < blo || w.Added > bhi {
				continue
			}
			vals := append(slices.Clone(dm.values), w.Added)
			slices.Sort(vals)
			r.dims[d].values = vals
			count[d]++
			added = append(added, w)
			if say != nil {
				say(fmt.Sprintf("best %s %s lies on the %s end of its range; widened to %s..%s (widening %d of at most %d) and searching again",
					dm.name, fmtValue(v), w.Side, fmtValue(vals[0]), fmtValue(vals[len(vals)-1]), count[d], maxWidenings))
			}
		}
		if len(added) == 0 {
			break
		}
		r.widened = append(r.widened, added...)
		if t.prog != nil {
			t.prog.plan(len(gridPoints(&r.dims)) - len(gridPoints(&t.dims)) + budget)
		}
		stage = "widen"
	}
	r.best, r.ties = t.chooseFaster(r.visited, r.top, imgs)
	return r, nil
}

// maxTimed is the most tied settings timed for information (the chosen
// one first).
const maxTimed = 4

// costMargin: tied settings whose mean cost (segCost) is at most
// costMargin times the lowest count as equally fast, and the smoother of
// them wins. The model counts work, not seconds, so a difference of a few
// per cent is within what it cannot tell apart.
const costMargin = 1.1

// chooseFaster breaks ties toward speed without the clock: of the settings
// in es whose objective on imgs ties with top's (within tieRelative), it
// returns the smoothest of those whose mean cost per image on imgs (segCost)
// is within costMargin of the lowest, and every tied setting, the chosen
// first, then by cost and smoothness. With --tie-break smoother, top alone.
// Nothing is timed here (see timeTies).
func (t *tuner) chooseFaster(es []*evaluation, top *evaluation, imgs []int) (*evaluation, []*evaluation) {
	ot := t.objective(top, imgs)
	if math.IsInf(ot, -1) {
		return top, nil
	}
	cands := []*evaluation{top}
	if !t.smootherTies {
		for _, e := range es {
			if e != top && tied(t.objective(e, imgs), ot) {
				cands = append(cands, e)
			}
		}
	}
	cheapest := math.Inf(1)
	for _, e := range cands {
		if c := t.costPerImage(e, imgs); !math.IsNaN(c) {
			cheapest = math.Min(cheapest, c)
		}
	}
	best := top
	if !t.smootherTies && !math.IsInf(cheapest, 1) {
		best = nil
		for _, e := range cands {
			c := t.costPerImage(e, imgs)
			if !math.IsNaN(c) && c <= costMargin*cheapest && (best == nil || smoother(e.pt, best.pt)) {
				best = e
			}
		}
	}
	slices.SortStableFunc(cands, func(a, b *evaluation) int {
		switch {
		case a == b:
			return 0
		case a == best:
			return -1
		case b == best:
			return 1
		}
		if ca, cb := t.costPerImage(a, imgs), t.costPerImage(b, imgs); ca != cb {
			return cmpFloat(ca, cb)
		}
		switch {
		case smoother(a.pt, b.pt):
			return -1
		case smoother(b.pt, a.pt):
			return 1
		}
		return 0
	})
	return best, cands
}

// timeTies times the chosen setting of a search and up to maxTimed-1 more
// of its ties (in the order of r.ties), for the report only: the seconds
// never change the choice.
func (t *tuner) timeTies(r *searchResult) error {
	es := r.ties
	if len(es) == 0 {
		es = []*evaluation{r.best}
	}
	return t.timeSettings(es[:min(len(es), maxTimed)])
}

// cmpFloat orders a before b when a is smaller; NaN last.
func cmpFloat(a, b float64) int {
	switch {
	case a < b || (!math.IsNaN(a) && math.IsNaN(b)):
		return -1
	case a > b || (math.IsNaN(a) && !math.IsNaN(b)):
		return 1
	}
	return 0
}

// timeSettings times one segmentation of every image with each setting
// not yet timed, on one thread each (as many at once as --workers) and
// without the search's shared cache, so that the seconds are those of
// 'cleave segment --params' on the decoded image.
func (t *tuner) timeSettings(es []*evaluation) error {
	var todo []*evaluation
	for _, e := range es {
		if e.imgSeconds == nil {
			todo = append(todo, e)
		}
	}
	nImg := len(t.images)
	if t.timeFn != nil {
		for _, e := range todo {
			e.imgSeconds = make([]float64, nImg)
			for j := range e.imgSeconds {
				s, err := t.timeFn(e.pt, j)
				if err != nil {
					e.timeErr, s = err.Error(), math.NaN()
				}
				e.imgSeconds[j] = s
			}
		}
		return nil
	}
	params := make([]segment.Params, len(todo))
	for i, e := range todo {
		r, err := t.settingsAt(e.pt).resolve(1)
		if err != nil {
			return fmt.Errorf("setting %s: %w", e.key, err)
		}
		params[i] = r.params
	}
	secs := make([]float64, len(todo)*nImg)
	errs := make([]string, len(todo)*nImg)
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < min(t.workers, len(secs)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				k := int(next.Add(1)) - 1
				if k >= len(secs) || t.ctx.Err() != nil {
					return
				}
				i, j := k/nImg, k%nImg
				if todo[i].errs[j] != "" {
					secs[k] = math.NaN()
					continue
				}
				plain := *t.images[j]
				plain.cache = nil
				start := time.Now()
				_, err := segmentInput(t.ctx, &plain, params[i])
				secs[k] = time.Since(start).Seconds()
				if err != nil {
					errs[k], secs[k] = t.names[j]+": "+withFlags(err).Error(), math.NaN()
				}
			}
		}()
	}
	wg.Wait()
	if err := t.ctx.Err(); err != nil {
		return err
	}
	for i, e := range todo {
		e.imgSeconds = secs[i*nImg : (i+1)*nImg]
		for _, m := range errs[i*nImg : (i+1)*nImg] {
			if m != "" && e.timeErr == "" {
				e.timeErr = m
			}
		}
	}
	return nil
}

// secondsPerImage is the median of the timed seconds over imgs; NaN when
// not timed or an image failed.
func (t *tuner) secondsPerImage(e *evaluation, imgs []int) float64 {
	if e.imgSeconds == nil {
		return math.NaN()
	}
	v := make([]float64, 0, len(imgs))
	for _, j := range imgs {
		if math.IsNaN(e.imgSeconds[j]) {
			return math.NaN()
		}
		v = append(v, e.imgSeconds[j])
	}
	return median(v)
}

// foldResult is one fold of the cross-validation.
type foldResult struct {
	Held      []string          `json:"held_out"`
	Params    map[string]string `json:"params"`
	Train     float64           `json:"train_score"`
	HeldScore *float64          `json:"held_out_score"`  // null when the choice failed on a held-out image
	Error     string            `json:"error,omitempty"` // why held_out_score is null
	Widened   []widening        `json:"widenings,omitempty"`
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
func (t *tuner) crossValidate(k, budget int) ([]foldResult, float64, error) {
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
		res, err := t.search(train, budget, nil)
		if err != nil {
			return nil, 0, err
		}
		best := res.best
		fr := foldResult{Params: t.paramStrings(best.pt), Train: t.value(best, train), HeldScore: finite(t.value(best, test)), Widened: res.widened}
		for _, i := range test {
			fr.Held = append(fr.Held, t.names[i])
			held[i] = t.value(best, []int{i})
			if best.errs[i] != "" && fr.Error == "" {
				fr.Error = fmt.Sprintf("the fold's choice failed on held-out %s: %s", t.names[i], best.errs[i])
			}
		}
		if fr.Error == "" && math.IsNaN(fr.Train) {
			for _, i := range train {
				if best.errs[i] != "" {
					fr.Error = fmt.Sprintf("every setting failed on training image %s; first error: %s", t.names[i], best.errs[i])
					break
				}
			}
		}
		folds = append(folds, fr)
		if t.prog != nil {
			t.prog.stage(fmt.Sprintf("fold %d of %d", f+1, k))
		}
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
