package tuning

import (
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// Report is tune.json.
type Report struct {
	Tool            string            `json:"tool"`
	Version         string            `json:"version"`
	Metric          score.Metric      `json:"metric"`
	MetricChoice    string            `json:"metric_chosen_by"`
	Score           float64           `json:"score"`
	BestMetrics     *score.Report     `json:"best_mean_metrics"`
	SecondsPerImage *float64          `json:"seconds_per_image"`
	Timing          string            `json:"timing"`
	CostPerImage    *float64          `json:"cost_per_image"`
	CostModel       string            `json:"cost_model"`
	TieRelative     float64           `json:"tie_tolerance_relative"`
	TieBreak        string            `json:"tie_break"`
	Tied            []TiedSetting     `json:"tied_settings"`
	GridScore       *float64          `json:"grid_score"`
	Baseline        *float64          `json:"automatic_score"`
	BaselineMetrics *score.Report     `json:"automatic_mean_metrics"`
	CVScore         *float64          `json:"cross_validated_score"`
	CVFolds         int               `json:"folds"`
	CVError         string            `json:"cross_validation_error,omitempty"`
	Folds           []tune.Fold       `json:"fold_results,omitempty"`
	Best            map[string]string `json:"best"`
	// AutomaticKept: best.json holds the automatic settings
	// (tune.Tuner.Automatic); KeptBy says why: "tie" (no searched setting
	// beat them by more than a tie) or "cross-validation" (the
	// cross-validated score of the search did not, tune.Tuner.Validate).
	AutomaticKept   bool            `json:"automatic_kept"`
	KeptBy          string          `json:"automatic_kept_by,omitempty"`
	Space           map[string]any  `json:"search_space"`
	Widenings       []tune.Widening `json:"widenings"`
	Evaluations     int             `json:"evaluations"`
	GridSize        int             `json:"grid_settings"`
	Refined         int             `json:"refined_settings"`
	WidenedSettings int             `json:"widened_settings"`
	Budget          int             `json:"budget"`
	Images          []string        `json:"images"`
	TruthMaps       []TruthMap      `json:"truth_maps"`
	Unpaired        []string        `json:"unpaired_images"`
	Seconds         float64         `json:"seconds"`
}

// TruthMap says how one truth image was read: as labels or as a binary
// mask, split into its components or not (scoring.Reading).
type TruthMap struct {
	Name  string `json:"name"`
	Truth string `json:"truth"`
	scoring.Reading
}

// TiedSetting is a setting tied with the best: its cost (which decides
// the tie) and, when timed, its seconds (information only).
type TiedSetting struct {
	Params          map[string]string `json:"params"`
	Score           float64           `json:"score"`
	CostPerImage    *float64          `json:"cost_per_image"`
	SecondsPerImage *float64          `json:"seconds_per_image"` // null when not timed
	Chosen          bool              `json:"chosen"`
}

// TieBreak is the report's name of the tie-break: "smoother" or "faster".
func TieBreak(smoother bool) string {
	if smoother {
		return "smoother"
	}
	return "faster"
}

// timingNote says how seconds_per_image is measured.
const timingNote = "median over the images of one segmentation's seconds on one thread (as many at once as `workers`), without the search's shared work, decoding excluded; information only, never used for the choice"

// costNote says what cost_per_image is (tune.Cost).
var costNote = fmt.Sprintf("mean over the images of graph nonzeros x (1 + log2 regions), the work of a balanced recursive two-way cut (object re-cuts not counted); of tied settings within %.0f%% of the lowest cost the smoother is chosen", 100*(tune.CostMargin-1))

// meanOf is the mean of every metric of e over the images, or nil when an
// image failed.
func meanOf(e *tune.Evaluation) *score.Report {
	for _, m := range e.Errs {
		if m != "" {
			return nil
		}
	}
	m := score.Mean(e.Reports)
	return &m
}

// Reported lists the searched parameters the files and the report name:
// every one but the necks switch and the faint level, each named only
// when two or more of its values are searched, so that a run that keeps
// it as given writes the files it wrote before it could be searched
// (best.json names it always, as every parameter).
func Reported(s *tune.Space) []tune.Param {
	var ps []tune.Param
	for _, d := range tune.Params() {
		if (d == tune.Necks || d == tune.Faint) && len(s[d].Values) < 2 {
			continue
		}
		ps = append(ps, d)
	}
	return ps
}

// stringsOf are the reported parameters of p as text, by name.
func stringsOf(s *tune.Space, p tune.Point) map[string]string {
	m := map[string]string{}
	for _, d := range Reported(s) {
		m[d.String()] = s.Text(p, d)
	}
	return m
}

// trim removes from m the parameters not reported.
func trim(s *tune.Space, m map[string]string) {
	keep := map[string]bool{}
	for _, d := range Reported(s) {
		keep[d.String()] = true
	}
	for k := range m {
		if !keep[k] {
			delete(m, k)
		}
	}
}

func newReport(cfg *Config, t *tune.Tuner, res *tune.Result, baseline *tune.Evaluation, folds []tune.Fold, cv *float64, k, gridSize int) Report {
	all := t.All()
	best := res.Best
	bv := t.Value(baseline, all)
	rep := Report{
		Tool: "cleave", Version: cfg.Voice.Version, Metric: cfg.Metric, MetricChoice: cfg.MetricChoice, Score: t.Value(best, all),
		BestMetrics: meanOf(best), SecondsPerImage: tune.Finite(t.SecondsPerImage(best, all)), Timing: cfg.Voice.Msg(timingNote),
		CostPerImage: tune.Finite(t.CostPerImage(best, all)), CostModel: costNote,
		TieRelative: tune.TieRelative, TieBreak: TieBreak(cfg.SmootherTies), GridScore: tune.Finite(t.Value(res.GridBest, all)), BaselineMetrics: meanOf(baseline),
		CVScore: cv, CVFolds: k, Folds: folds, Best: stringsOf(&t.Space, best.Point), Space: map[string]any{},
		Widenings: res.Widened, GridSize: gridSize, Budget: cfg.Budget, Images: t.Names, Unpaired: cfg.Unpaired,
	}
	for _, im := range cfg.Images {
		rep.TruthMaps = append(rep.TruthMaps, TruthMap{Name: im.Name, Truth: im.Pair.Truth, Reading: im.Truth.Reading})
	}
	if rep.Unpaired == nil {
		rep.Unpaired = []string{}
	}
	if rep.Widenings == nil {
		rep.Widenings = []tune.Widening{}
	}
	for _, e := range res.Ties {
		rep.Tied = append(rep.Tied, TiedSetting{Params: stringsOf(&t.Space, e.Point), Score: t.Value(e, all),
			CostPerImage: tune.Finite(t.CostPerImage(e, all)), SecondsPerImage: tune.Finite(t.SecondsPerImage(e, all)), Chosen: e == best})
	}
	for i := range rep.Folds {
		f := &rep.Folds[i]
		trim(&t.Space, f.Params)
		if f.Error != "" && rep.CVError == "" {
			rep.CVError = f.Error
		}
	}
	if !math.IsNaN(bv) {
		rep.Baseline = &bv
	}
	if k < 2 {
		rep.CVFolds = 0
	}
	for _, d := range Reported(&t.Space) {
		ax := t.Space[d]
		if ax.Auto {
			rep.Space[d.String()] = "auto"
			continue
		}
		n := 0
		for _, w := range res.Widened {
			if w.Parameter == d.String() {
				n++
			}
		}
		var grid any = ax.Values
		if d.Switch() {
			grid = ax.Texts() // on, off as in a params file
		}
		rep.Space[d.String()] = map[string]any{"spec": ax.Spec, "grid": grid, "refined": ax.Refinable(), "widened": n}
	}
	for _, e := range t.Order {
		switch e.Stage {
		case "baseline":
			continue
		case "refine":
			rep.Refined++
		case "widen":
			rep.WidenedSettings++
		}
		rep.Evaluations++
	}
	return rep
}
