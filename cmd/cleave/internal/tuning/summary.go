package tuning

import (
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// WriteSummary prints the short report of a finished tune that wrote
// into the folder out: what was searched, the metric, the automatic and
// the best settings with their other scores, ties, widenings, the
// cross-validated score and the files. Parameters are named in the
// command's words (Config.Voice).
func (o *Outcome) WriteSummary(w io.Writer, out string) {
	rep, nImages, v := o.Report, len(o.cfg.Images), o.cfg.Voice
	widened := ""
	if rep.WidenedSettings > 0 {
		widened = fmt.Sprintf(" + %d widened", rep.WidenedSettings)
	}
	fmt.Fprintf(w, "tuned on %s: %d grid + %d refined%s settings, %.1f s\n", pipeline.Plural(nImages, "image"), rep.GridSize, rep.Refined, widened, rep.Seconds)
	fmt.Fprintf(w, "metric:              %s (%s)\n", rep.Metric, rep.MetricChoice)
	var split, unsplit []string
	for _, m := range rep.TruthMaps {
		switch m.Kind {
		case scoring.KindMaskComponents:
			split = append(split, fmt.Sprintf("%s %d", m.Name, m.Objects))
		case scoring.KindMaskUnsplit:
			unsplit = append(unsplit, m.Name)
		}
	}
	truths := pipeline.Plural(len(rep.TruthMaps), "truth")
	if len(split) > 0 {
		fmt.Fprintf(w, "truth masks:         %d of %s %s, scored by their 8-connected components as objects (%s); %s\n", len(split), truths, isBinaryMasks(len(split)), strings.Join(split, ", "), v.Msg("`split-masks` off scores each as one label"))
	}
	if len(unsplit) > 0 {
		fmt.Fprintf(w, "truth masks:         %d of %s %s, each scored as one label (%s): %s\n", len(unsplit), truths, isBinaryMasks(len(unsplit)), v.Msg("`split-masks` off"), strings.Join(unsplit, ", "))
	}
	others := func(m *score.Report) string {
		if m == nil {
			return ""
		}
		var p []string
		for _, n := range score.Objectives() {
			if n.Headline() && n != rep.Metric {
				p = append(p, fmt.Sprintf("%s %.4f", n, m.Get(n)))
			}
		}
		return "; " + strings.Join(p, ", ")
	}
	if rep.Baseline != nil {
		fmt.Fprintf(w, "automatic settings:  mean %s %.4f%s\n", rep.Metric, *rep.Baseline, others(rep.BaselineMetrics))
	}
	var parts []string
	for _, d := range tune.Params() {
		if _, ok := rep.Best[d.String()]; !ok {
			continue
		}
		parts = append(parts, d.String()+" "+rep.Best[d.String()])
	}
	per := "time not measured"
	if rep.SecondsPerImage != nil {
		per = fmt.Sprintf("%.3f s per image", *rep.SecondsPerImage)
	}
	fmt.Fprintf(w, "best:                mean %s %.4f%s; %s\n", rep.Metric, rep.Score, others(rep.BestMetrics), per)
	fmt.Fprintf(w, "                     (%s)\n", strings.Join(parts, ", "))
	if rep.AutomaticKept && rep.KeptBy == "cross-validation" && rep.CVScore != nil && rep.Baseline != nil {
		fmt.Fprintf(w, "kept:                the automatic settings: the search's choices scored %s %.4f on images they were not chosen on (cross-validated), no better than the automatic settings' %.4f: the best setting on these images is fitted to them\n", rep.Metric, *rep.CVScore, *rep.Baseline)
	} else if rep.AutomaticKept {
		fmt.Fprintf(w, "kept:                the automatic settings: no searched setting beat them by more than a tie (relative %g), and widths each image sets for itself carry over to new images better than a value chosen among ties\n", rep.TieRelative)
	} else if n := len(rep.Tied); n > 1 {
		fmt.Fprintf(w, "ties:                %d settings tied (within a relative %g); the cheapest by the cost model, or the smoother within %.0f%% of its cost, chosen (see tune.json)\n", n, rep.TieRelative, 100*(tune.CostMargin-1))
	}
	for _, wd := range rep.Widenings {
		fmt.Fprintf(w, "widened:             %s beyond its %s end %s to %s\n", wd.Parameter, wd.Side, tune.FormatValue(wd.Edge), tune.FormatValue(wd.Added))
	}
	switch {
	case rep.CVScore != nil:
		kind := fmt.Sprintf("%d-fold", rep.CVFolds)
		if rep.CVFolds == nImages {
			kind = "leave-one-out"
		}
		fmt.Fprintf(w, "cross-validated:     held-out %s %.4f (%s; expect about this on new images)\n", rep.Metric, *rep.CVScore, kind)
	case rep.CVFolds >= 2:
		why := rep.CVError
		if why == "" {
			why = "a fold's choice failed (see tune.json)"
		}
		fmt.Fprintf(w, "cross-validated:     no score: %s\n", why)
	default:
		fmt.Fprintf(w, "cross-validated:     not run (%s)\n", v.Msg("needs `folds` >= 2 and at least 2 images"))
	}
	fmt.Fprintf(w, "wrote %s (%s)\n", out, strings.Join(Outputs(), ", "))
	fmt.Fprintf(w, "%s %s IMAGE...\n", v.Msg("next: cleave segment `params`"), filepath.Join(out, "best.json"))
}

// isBinaryMasks is the predicate of "N of M truths ...", agreeing with N.
func isBinaryMasks(n int) string {
	if n == 1 {
		return "is a binary mask"
	}
	return "are binary masks"
}
