package tune

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sync/atomic"
	"time"

	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/cleave-seg/cleave/segment/score"
)

// Sample is what one setting scored on one image.
type Sample struct {
	Report score.Report // every measure against the image's truth
	// Cost is the cost model of the segmentation (Cost), never the clock:
	// the tie-break compares it.
	Cost float64
	// Used are the parameters as the segmentation resolved them
	// (automatic values filled in).
	Used segment.Params
}

// Objective segments image (an index into the tuner's images) with p and
// scores it against its truth. It runs on one thread, so that results do
// not depend on how many run at once, and stops when ctx is done.
type Objective func(ctx context.Context, p segment.Params, image int) (Sample, error)

// Timer times one segmentation of image with p, for the report only
// (Tuner.TimeTies): the seconds never change the choice.
type Timer func(ctx context.Context, p segment.Params, image int) (seconds float64, err error)

// Progress is told how far a search is. Plan adds n settings to those
// planned; SettingDone counts one evaluated setting with its mean score
// on all images (NaN when it failed on one); Stage reports the end of a
// stage. Calls may come from several goroutines at once.
type Progress interface {
	Plan(n int)
	SettingDone(mean float64)
	Stage(name string)
}

// Evaluation is one setting scored on every image.
type Evaluation struct {
	Point Point
	Key   string // Space.Key of Point, or the key given to EvaluateParams
	Stage string // grid, refine, widen, or the stage given to EvaluateParams
	// Reports, Errs (per image, "" when it segmented), Costs and Used are
	// indexed by image.
	Reports []score.Report
	Errs    []string
	Costs   []float64
	Used    []segment.Params
	// Seconds is the segmentation wall time summed over the images
	// (information only).
	Seconds float64
	// ImageSeconds are the seconds of one segmentation per image by the
	// Timer (TimeTies); nil until timed. TimeErr is the first timing error.
	ImageSeconds []float64
	TimeErr      string
}

// Tuner runs searches. Every setting is evaluated on every image and
// remembered by its key, so the folds of the cross-validation and the final
// search share evaluations. Set the exported fields, then call the methods
// from one goroutine.
type Tuner struct {
	Space Space
	// Base holds the parameters not searched.
	Base segment.Params
	// Names of the images (their count is the number of images).
	Names []string
	// Metric decides; a metric that is lower-better is minimized.
	Metric score.Metric
	// Workers is the number of segmentations run at once (< 1: GOMAXPROCS).
	Workers int
	// SmootherTies keeps ties on the search's best (the smoother setting)
	// instead of the cheapest by the cost model.
	SmootherTies bool
	// Automatic, when set, is the evaluation of the settings the user
	// would run without tuning (the kernel widths left to each image):
	// a search keeps it unless a searched setting beats it by more than
	// a tie (see Search).
	Automatic *Evaluation
	Objective Objective
	Timer     Timer
	Progress  Progress // nil: none

	cache map[string]*Evaluation
	// Order lists the evaluations in the order they finished.
	Order []*Evaluation
}

// TieRelative: two objectives whose difference is at most this fraction
// of the larger magnitude (and at least 1e-12 apart absolutely) are a tie.
// 1e-4 is far below what a few annotated images can tell apart (one
// object in 100 changes F1 by about 1e-2).
const TieRelative = 1e-4

// MaxWidenings is the most times one parameter's range is widened.
const MaxWidenings = 2

// MaxTimed is the most tied settings timed for information (the chosen one
// first).
const MaxTimed = 4

// CostMargin: tied settings whose mean cost is at most CostMargin times the
// lowest count as equally fast, and the smoother of them wins. The model
// counts work, not seconds, so a difference of a few per cent is within
// what it cannot tell apart.
const CostMargin = 1.1

func (t *Tuner) numImages() int { return len(t.Names) }

// All is the index of every image.
func (t *Tuner) All() []int {
	all := make([]int, t.numImages())
	for i := range all {
		all[i] = i
	}
	return all
}

// Cached returns the evaluation of p, if it was evaluated.
func (t *Tuner) Cached(p Point) (*Evaluation, bool) {
	e, ok := t.cache[t.Space.Key(p)]
	return e, ok
}

func (t *Tuner) newEvaluation(p Point, key, stage string) *Evaluation {
	n := t.numImages()
	return &Evaluation{Point: p, Key: key, Stage: stage, Reports: make([]score.Report, n), Errs: make([]string, n),
		Costs: make([]float64, n), Used: make([]segment.Params, n)}
}

// Evaluate scores the points not yet evaluated, in parallel over images
// and settings, and returns the evaluations of all points.
func (t *Tuner) Evaluate(ctx context.Context, points []Point, stage string) ([]*Evaluation, error) {
	if t.cache == nil {
		t.cache = map[string]*Evaluation{}
	}
	out := make([]*Evaluation, len(points))
	var fresh []*Evaluation
	for i, p := range points {
		k := t.Space.Key(p)
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
		params[i] = t.Space.Apply(t.Base, e.Point)
		if err := params[i].Validate(); err != nil {
			return nil, fmt.Errorf("setting %s: %w", e.Key, err)
		}
	}
	if err := t.run(ctx, fresh, params); err != nil {
		return nil, err
	}
	return out, nil
}

// EvaluateParams scores one full parameter set outside the search space
// (the automatic settings, say) under the given key and stage; it is
// listed in Order but never found by a search.
func (t *Tuner) EvaluateParams(ctx context.Context, p segment.Params, key, stage string) (*Evaluation, error) {
	e := t.newEvaluation(Point{}, key, stage)
	if err := t.run(ctx, []*Evaluation{e}, []segment.Params{p}); err != nil {
		return nil, err
	}
	return e, nil
}

// run segments every image with every parameter set into es, in parallel;
// each Objective call runs on one thread, so results do not depend on the
// number of workers.
func (t *Tuner) run(ctx context.Context, es []*Evaluation, params []segment.Params) error {
	nImg := t.numImages()
	nTasks := len(es) * nImg
	secs := make([]float64, nTasks)
	left := make([]atomic.Int32, len(es))
	for i := range left {
		left[i].Store(int32(nImg))
	}
	// A canceled context starts no further task (parallel.ForErr).
	_ = parallel.ForErr(nTasks, t.Workers, func(_, k int) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		i, j := k/nImg, k%nImg
		start := time.Now()
		s, err := t.Objective(ctx, params[i], j)
		if err != nil {
			es[i].Errs[j] = err.Error()
		} else {
			es[i].Reports[j], es[i].Costs[j], es[i].Used[j] = s.Report, s.Cost, s.Used
		}
		secs[k] = time.Since(start).Seconds()
		if left[i].Add(-1) == 0 && t.Progress != nil {
			t.Progress.SettingDone(t.Value(es[i], t.All()))
		}
		return nil
	})
	if err := ctx.Err(); err != nil {
		return err
	}
	for i, e := range es {
		for j := range nImg {
			e.Seconds += secs[i*nImg+j]
		}
		t.Order = append(t.Order, e)
	}
	return nil
}

// Cost is the cost model of one segmentation, computed from its result and
// never from the clock, so that the speed tie-break is the same on every
// run and machine:
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
// of the sparse products). The re-cut of touching objects is left out:
// segment.Result does not report the pixel counts of the objects it
// re-cut.
func Cost(res *segment.Result) float64 {
	if res == nil || res.Graph == nil {
		return 0
	}
	return float64(res.Graph.NNZ()) * (1 + math.Log2(float64(max(res.NumRegions, 1))))
}

// CostPerImage is the mean of the cost model over imgs; NaN when an image
// failed.
func (t *Tuner) CostPerImage(e *Evaluation, imgs []int) float64 {
	var s float64
	for _, j := range imgs {
		if e.Errs[j] != "" {
			return math.NaN()
		}
		s += e.Costs[j]
	}
	return s / float64(len(imgs))
}

// Value is the mean of the metric over the images imgs, as scored (a
// lower-better metric stays lower-better); NaN when an image failed.
func (t *Tuner) Value(e *Evaluation, imgs []int) float64 {
	var s float64
	for _, j := range imgs {
		if e.Errs[j] != "" {
			return math.NaN()
		}
		s += e.Reports[j].Get(t.Metric)
	}
	return s / float64(len(imgs))
}

// Score is Value turned so that higher is better; failures are -Inf.
func (t *Tuner) Score(e *Evaluation, imgs []int) float64 {
	return t.scoreOf(t.Value(e, imgs))
}

// scoreOf turns a mean of the metric (as Value reports it) so that higher
// is better; NaN (a failure) becomes -Inf.
func (t *Tuner) scoreOf(v float64) float64 {
	switch {
	case math.IsNaN(v):
		return math.Inf(-1)
	case t.Metric.LowerIsBetter():
		return -v
	}
	return v
}

// Tied reports whether two scores are equal within TieRelative.
func Tied(a, b float64) bool {
	if math.IsInf(a, 0) || math.IsInf(b, 0) {
		return a == b
	}
	return math.Abs(a-b) <= math.Max(1e-12, TieRelative*math.Max(math.Abs(a), math.Abs(b)))
}

// better reports whether a beats b on imgs: a higher score, or an equal
// one (within TieRelative) and a smoother setting.
func (t *Tuner) better(a, b *Evaluation, imgs []int) bool {
	oa, ob := t.Score(a, imgs), t.Score(b, imgs)
	if !Tied(oa, ob) {
		return oa > ob
	}
	return smoother(a.Point, b.Point)
}

// improves reports whether a is better than b by more than a tie.
func (t *Tuner) improves(a, b *Evaluation, imgs []int) bool {
	oa, ob := t.Score(a, imgs), t.Score(b, imgs)
	return oa > ob && !Tied(oa, ob)
}

// bestOf returns the best evaluation of es on imgs.
func (t *Tuner) bestOf(es []*Evaluation, imgs []int) *Evaluation {
	var best *Evaluation
	for _, e := range es {
		if best == nil || t.better(e, best, imgs) {
			best = e
		}
	}
	return best
}

// refine is a pattern search in log space around start (Hooke and Jeeves
// 1961, Direct search solution of numerical and statistical problems, J.
// ACM 8, the exploratory moves): every refinable parameter is tried one
// step up and one step down at once; the best move is taken if it improves
// the score, else the steps halve. Steps start at half the grid spacing
// and values stay within the grid range widened by one grid step, and
// within the parameter's bounds. At most budget new settings are
// evaluated. It returns the best and every setting it looked at.
func (t *Tuner) refine(ctx context.Context, start *Evaluation, space *Space, imgs []int, budget int) (*Evaluation, []*Evaluation, error) {
	var step, lo, hi [NumParams]float64
	var dims []Param
	for d := range NumParams {
		if space[d].Refinable() {
			dims = append(dims, d)
			g := space[d].logStep()
			step[d] = g / 2
			blo, bhi := d.Bounds()
			lo[d] = max(math.Log(space[d].Values[0])-g, math.Log(blo))
			hi[d] = min(math.Log(space[d].Values[len(space[d].Values)-1])+g, math.Log(bhi))
		}
	}
	var visited []*Evaluation
	cur, used := start, 0
	for len(dims) > 0 && used < budget {
		var cands []Point
		seen := map[string]bool{cur.Key: true}
		for _, d := range dims {
			for _, s := range []float64{-1, 1} {
				x := math.Log(cur.Point[d]) + s*step[d]
				if x < lo[d]-1e-12 || x > hi[d]+1e-12 {
					continue
				}
				q := cur.Point
				q[d] = Sig4(math.Exp(x))
				if k := t.Space.Key(q); !seen[k] {
					seen[k] = true
					cands = append(cands, q)
				}
			}
		}
		// Cached candidates are free; new ones count against the budget.
		var keep []Point
		for _, q := range cands {
			if _, ok := t.Cached(q); ok {
				keep = append(keep, q)
			} else if used < budget {
				keep = append(keep, q)
				used++
			}
		}
		es, err := t.Evaluate(ctx, keep, "refine")
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

// Widening is one widening of a parameter's range: the best setting sat on
// an end of it.
type Widening struct {
	Parameter string  `json:"parameter"`
	Side      string  `json:"side"` // "low" or "high"
	Edge      float64 `json:"edge"` // the end the best sat on
	Added     float64 `json:"added"`
	Score     float64 `json:"score_before"`
}

// Result is one search's outcome.
type Result struct {
	GridBest *Evaluation // best of the initial grid
	Top      *Evaluation // best score (the smoother setting on ties)
	Best     *Evaluation // the choice: among settings tied with Top, the cheapest by the cost model
	Space    Space       // the space as widened
	Widened  []Widening
	Ties     []*Evaluation // settings tied with Top (Best first; see chooseFaster)
	Visited  []*Evaluation
	// KeptAutomatic: Best is Tuner.Automatic, because no searched
	// setting beat it by more than a tie or (Unvalidated) because the
	// search's choices did not carry over to held-out images.
	KeptAutomatic bool
	// Unvalidated: Validate kept the automatic settings; Validated is the
	// cross-validated score it compared, as Value reports it.
	Unvalidated bool
	Validated   float64
}

// Search is the coarse grid then refinement, judged on the images imgs.
// When the best sits on an end of the range of a continuous parameter (at
// or beyond its first or last grid value), that range is widened by one
// grid step outward (a new grid value; the grid is completed) and the
// search runs again, at most MaxWidenings times per parameter, and again
// only while widening improves the score. say, when set, tells the user.
// Among the settings tied with the best, the cheapest by the cost model is
// chosen (chooseFaster). When Tuner.Automatic is set and that choice does
// not beat it by more than a tie, the automatic settings are kept: with a
// few annotated images many settings tie, often at the ends of the
// ranges, and a fixed value chosen among them generalizes worse than
// widths each image sets for itself (measured: DEVELOPERS.md, "Measured
// choices").
func (t *Tuner) Search(ctx context.Context, imgs []int, budget int, say func(string)) (*Result, error) {
	r := &Result{Space: cloneSpace(&t.Space)}
	var step [NumParams]float64
	for d := range NumParams {
		if t.Space[d].Refinable() {
			step[d] = t.Space[d].logStep()
		}
	}
	seen := map[*Evaluation]bool{}
	visit := func(es []*Evaluation) {
		for _, e := range es {
			if !seen[e] {
				seen[e] = true
				r.Visited = append(r.Visited, e)
			}
		}
	}
	var count [NumParams]int
	stage := "grid"
	for round := 0; ; round++ {
		grid, err := t.Evaluate(ctx, r.Space.Grid(), stage)
		if err != nil {
			return nil, err
		}
		visit(grid)
		gb := t.bestOf(grid, imgs)
		if round == 0 {
			r.GridBest = gb
		}
		top, vis, err := t.refine(ctx, gb, &r.Space, imgs, budget)
		if err != nil {
			return nil, err
		}
		visit(vis)
		if round > 0 && !t.improves(top, r.Top, imgs) {
			if t.better(top, r.Top, imgs) {
				r.Top = top
			}
			break
		}
		r.Top = top
		if math.IsInf(t.Score(top, imgs), -1) {
			break
		}
		// The settings tied with the best: a parameter is widened only when
		// all of them sit on the same end of its range (on a plateau that
		// reaches inside the range the optimum is not pinned to the end).
		var best []*Evaluation
		for _, e := range r.Visited {
			if Tied(t.Score(e, imgs), t.Score(top, imgs)) {
				best = append(best, e)
			}
		}
		var added []Widening
		for d := range NumParams {
			ax := r.Space[d]
			if !ax.Refinable() || count[d] >= MaxWidenings {
				continue
			}
			v, lo, hi := top.Point[d], ax.Values[0], ax.Values[len(ax.Values)-1]
			atLow, atHigh := true, true
			for _, e := range best {
				atLow = atLow && e.Point[d] <= lo*(1+1e-9)
				atHigh = atHigh && e.Point[d] >= hi*(1-1e-9)
			}
			w := Widening{Parameter: d.String(), Score: t.Value(top, imgs)}
			switch {
			case atLow:
				w.Side, w.Edge, w.Added = "low", lo, Sig4(lo*math.Exp(-step[d]))
			case atHigh:
				w.Side, w.Edge, w.Added = "high", hi, Sig4(hi*math.Exp(step[d]))
			default:
				continue
			}
			// Never past the parameter's bounds (a normalized cut never
			// exceeds 2: no max-ncut above it).
			if blo, bhi := d.Bounds(); w.Added == w.Edge || w.Added < blo || w.Added > bhi {
				continue
			}
			vals := append(slices.Clone(ax.Values), w.Added)
			slices.Sort(vals)
			r.Space[d].Values = vals
			count[d]++
			added = append(added, w)
			if say != nil {
				say(fmt.Sprintf("best %s %s lies on the %s end of its range; widened to %s..%s (widening %d of at most %d) and searching again",
					d, FormatValue(v), w.Side, FormatValue(vals[0]), FormatValue(vals[len(vals)-1]), count[d], MaxWidenings))
			}
		}
		if len(added) == 0 {
			break
		}
		r.Widened = append(r.Widened, added...)
		if t.Progress != nil {
			t.Progress.Plan(len(r.Space.Grid()) - len(t.Space.Grid()) + budget)
		}
		stage = "widen"
	}
	r.Best, r.Ties = t.chooseFaster(r.Visited, r.Top, imgs)
	if a := t.Automatic; a != nil && !math.IsInf(t.Score(a, imgs), -1) && !t.improves(r.Best, a, imgs) {
		r.Best, r.KeptAutomatic = a, true
	}
	return r, nil
}

// Validate keeps the automatic settings (Tuner.Automatic) when the search
// does not carry over to images it has not seen: cv is the
// cross-validated score of the same search over the images imgs
// (CrossValidate: each image scored by the choice of a search made
// without it). When cv does not beat the automatic settings' score on
// imgs by more than a tie, a setting chosen on a few images was fitted to
// them; r.Best becomes the automatic evaluation (r.KeptAutomatic,
// r.Unvalidated). This is the usual guard of model selection by held-out
// data (common practice); it catches only what the folds see, and with
// three images they see little (DEVELOPERS.md, "Measured choices"). A NaN
// cv (a fold failed) or a missing or failed automatic evaluation leaves r
// as it is.
func (t *Tuner) Validate(r *Result, cv float64, imgs []int) {
	a := t.Automatic
	if a == nil || r.KeptAutomatic || math.IsNaN(cv) || math.IsInf(t.Score(a, imgs), -1) {
		return
	}
	if sc, sa := t.scoreOf(cv), t.Score(a, imgs); sc > sa && !Tied(sc, sa) {
		return
	}
	r.Best, r.KeptAutomatic, r.Unvalidated, r.Validated = a, true, true, cv
}

// PointStrings are the searched parameters of an evaluation as text, by
// name; the automatic evaluation (Tuner.Automatic) has no point and
// reads "automatic" for each.
func (t *Tuner) PointStrings(e *Evaluation) map[string]string {
	if e != nil && e == t.Automatic {
		m := map[string]string{}
		for d := range NumParams {
			m[d.String()] = "automatic"
		}
		return m
	}
	return t.Space.Strings(e.Point)
}

func cloneSpace(s *Space) Space {
	c := *s
	for d := range c {
		c[d].Values = slices.Clone(c[d].Values)
	}
	return c
}

// chooseFaster breaks ties toward speed without the clock: of the settings
// in es whose score on imgs ties with top's (within TieRelative), it
// returns the smoothest of those whose mean cost per image on imgs is
// within CostMargin of the lowest, and every tied setting, the chosen
// first, then by cost and smoothness. With SmootherTies, top alone.
// Nothing is timed here (see TimeTies).
func (t *Tuner) chooseFaster(es []*Evaluation, top *Evaluation, imgs []int) (*Evaluation, []*Evaluation) {
	ot := t.Score(top, imgs)
	if math.IsInf(ot, -1) {
		return top, nil
	}
	cands := []*Evaluation{top}
	if !t.SmootherTies {
		for _, e := range es {
			if e != top && Tied(t.Score(e, imgs), ot) {
				cands = append(cands, e)
			}
		}
	}
	cheapest := math.Inf(1)
	for _, e := range cands {
		if c := t.CostPerImage(e, imgs); !math.IsNaN(c) {
			cheapest = math.Min(cheapest, c)
		}
	}
	best := top
	if !t.SmootherTies && !math.IsInf(cheapest, 1) {
		best = nil
		for _, e := range cands {
			c := t.CostPerImage(e, imgs)
			if !math.IsNaN(c) && c <= CostMargin*cheapest && (best == nil || smoother(e.Point, best.Point)) {
				best = e
			}
		}
	}
	slices.SortStableFunc(cands, func(a, b *Evaluation) int {
		switch {
		case a == b:
			return 0
		case a == best:
			return -1
		case b == best:
			return 1
		}
		if ca, cb := t.CostPerImage(a, imgs), t.CostPerImage(b, imgs); ca != cb {
			return cmpNaNLast(ca, cb)
		}
		switch {
		case smoother(a.Point, b.Point):
			return -1
		case smoother(b.Point, a.Point):
			return 1
		}
		return 0
	})
	return best, cands
}

// cmpNaNLast orders a before b when a is smaller; NaN last.
func cmpNaNLast(a, b float64) int {
	switch {
	case a < b || (!math.IsNaN(a) && math.IsNaN(b)):
		return -1
	case a > b || (math.IsNaN(a) && !math.IsNaN(b)):
		return 1
	}
	return 0
}

// TimeTies times the chosen setting of a search and up to MaxTimed-1 more
// of its ties (in the order of r.Ties) with the Timer, for the report
// only: the seconds never change the choice. Without a Timer it does
// nothing.
func (t *Tuner) TimeTies(ctx context.Context, r *Result) error {
	es := r.Ties
	if len(es) == 0 || r.KeptAutomatic {
		es = append([]*Evaluation{r.Best}, r.Ties...)
	}
	return t.timeSettings(ctx, es[:min(len(es), MaxTimed)])
}

// timeSettings times one segmentation of every image with each setting
// not yet timed, as many at once as the workers.
func (t *Tuner) timeSettings(ctx context.Context, es []*Evaluation) error {
	if t.Timer == nil {
		return nil
	}
	var pending []*Evaluation
	for _, e := range es {
		if e.ImageSeconds == nil {
			pending = append(pending, e)
		}
	}
	nImg := t.numImages()
	params := make([]segment.Params, len(pending))
	for i, e := range pending {
		params[i] = t.Space.Apply(t.Base, e.Point)
		if e == t.Automatic {
			params[i] = t.Base
		}
	}
	secs := make([]float64, len(pending)*nImg)
	errs := make([]string, len(pending)*nImg)
	_ = parallel.ForErr(len(secs), t.Workers, func(_, k int) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		i, j := k/nImg, k%nImg
		if pending[i].Errs[j] != "" {
			secs[k] = math.NaN()
			return nil
		}
		s, err := t.Timer(ctx, params[i], j)
		secs[k] = s
		if err != nil {
			errs[k], secs[k] = t.Names[j]+": "+err.Error(), math.NaN()
		}
		return nil
	})
	if err := ctx.Err(); err != nil {
		return err
	}
	for i, e := range pending {
		e.ImageSeconds = secs[i*nImg : (i+1)*nImg]
		for _, m := range errs[i*nImg : (i+1)*nImg] {
			if m != "" && e.TimeErr == "" {
				e.TimeErr = m
			}
		}
	}
	return nil
}

// SecondsPerImage is the median of the timed seconds over imgs; NaN when
// not timed or an image failed.
func (t *Tuner) SecondsPerImage(e *Evaluation, imgs []int) float64 {
	if e.ImageSeconds == nil {
		return math.NaN()
	}
	v := make([]float64, 0, len(imgs))
	for _, j := range imgs {
		if math.IsNaN(e.ImageSeconds[j]) {
			return math.NaN()
		}
		v = append(v, e.ImageSeconds[j])
	}
	return Median(v)
}

// Median of a non-empty slice (of a sorted copy).
func Median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// Fold is one fold of the cross-validation.
type Fold struct {
	Held      []string          `json:"held_out"`
	Params    map[string]string `json:"params"`
	Train     float64           `json:"train_score"`
	HeldScore *float64          `json:"held_out_score"`  // null when the choice failed on a held-out image
	Error     string            `json:"error,omitempty"` // why held_out_score is null
	Widened   []Widening        `json:"widenings,omitempty"`
}

// Finite returns &v, or nil when v is NaN (JSON has no NaN).
func Finite(v float64) *float64 {
	if math.IsNaN(v) {
		return nil
	}
	return &v
}

// CrossValidate runs K-fold cross-validation over the images (image i is
// held out in fold i mod K; leave-one-out when there are fewer images than
// K): each fold searches on the other images and scores its choice on the
// held-out ones. The cross-validated score is the mean over all images of
// their held-out values; it is NaN when a fold's choice failed to segment
// a held-out image.
func (t *Tuner) CrossValidate(ctx context.Context, k, budget int) ([]Fold, float64, error) {
	n := t.numImages()
	k = min(k, n)
	held := make([]float64, n)
	var folds []Fold
	for f := range k {
		var train, test []int
		for i := range n {
			if i%k == f {
				test = append(test, i)
			} else {
				train = append(train, i)
			}
		}
		res, err := t.Search(ctx, train, budget, nil)
		if err != nil {
			return nil, 0, err
		}
		best := res.Best
		fr := Fold{Params: t.PointStrings(best), Train: t.Value(best, train), HeldScore: Finite(t.Value(best, test)), Widened: res.Widened}
		for _, i := range test {
			fr.Held = append(fr.Held, t.Names[i])
			held[i] = t.Value(best, []int{i})
			if best.Errs[i] != "" && fr.Error == "" {
				fr.Error = fmt.Sprintf("the fold's choice failed on held-out %s: %s", t.Names[i], best.Errs[i])
			}
		}
		if fr.Error == "" && math.IsNaN(fr.Train) {
			for _, i := range train {
				if best.Errs[i] != "" {
					fr.Error = fmt.Sprintf("every setting failed on training image %s; first error: %s", t.Names[i], best.Errs[i])
					break
				}
			}
		}
		folds = append(folds, fr)
		if t.Progress != nil {
			t.Progress.Stage(fmt.Sprintf("fold %d of %d", f+1, k))
		}
	}
	var s float64
	for _, v := range held {
		s += v
	}
	return folds, s / float64(n), nil
}
