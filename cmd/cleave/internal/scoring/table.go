package scoring

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/segment/score"
)

// DefaultTolerance is the boundary matching tolerance in pixels: a
// choice for images a few hundred pixels wide (Martin, Fowlkes and Malik
// 2004 scale theirs with the image diagonal).
const DefaultTolerance = 2

// FormatMetric is a measure as the text table prints it: 4 decimals.
func FormatMetric(v float64) string { return strconv.FormatFloat(v, 'f', 4, 64) }

// WriteTable prints the scores as a readable table: for one pair (folders
// false) how each map was read and a measure per line; for folders a row
// per pair, the mean and the binary masks. tol is the boundary tolerance
// the scores used; v words parameter names as the command does.
func WriteTable(w io.Writer, r *Result, folders bool, tol float64, v pipeline.Voice) {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	scored := r.Pairs
	if !folders {
		fmt.Fprintf(w, "%s vs %s\n", scored[0].Pred, scored[0].Truth)
		fmt.Fprintf(w, "prediction: %s\n", describe(scored[0].PredMap, v))
		fmt.Fprintf(w, "truth:      %s\n", describe(scored[0].TruthMap, v))
		for _, m := range score.Metrics() {
			fmt.Fprintf(tw, "%s\t%s\t\n", m, FormatMetric(scored[0].Get(m)))
		}
		tw.Flush()
		fmt.Fprintf(w, "(boundary tolerance %g px; vi in nats, lower is better; the rest: higher is better, 1 best)\n", tol)
		return
	}
	cols := score.Columns()
	fmt.Fprintf(tw, "name\t%s\t\n", strings.Join(MetricNames(cols), "\t"))
	row := func(name string, m score.Report) {
		cells := make([]string, len(cols))
		for i, c := range cols {
			cells[i] = FormatMetric(m.Get(c))
		}
		fmt.Fprintf(tw, "%s\t%s\t\n", name, strings.Join(cells, "\t"))
	}
	for _, s := range scored {
		row(s.Name, s.Report)
	}
	row(fmt.Sprintf("mean of %d", len(scored)), r.Mean)
	tw.Flush()
	var masks []string
	for _, s := range scored {
		for _, side := range []struct {
			what string
			r    Reading
		}{{"prediction", s.PredMap}, {"truth", s.TruthMap}} {
			switch side.r.Kind {
			case KindMaskComponents:
				masks = append(masks, fmt.Sprintf("%s %s: binary mask, %s (8-connected components)", s.Name, side.what, pipeline.Plural(side.r.Objects, "object")))
			case KindMaskUnsplit:
				masks = append(masks, fmt.Sprintf("%s %s: binary mask, one label (%s)", s.Name, side.what, v.Msg("`split-masks` off")))
			}
		}
	}
	if len(masks) > 0 {
		fmt.Fprintf(w, "binary masks: %s\n", strings.Join(masks, "; "))
	}
	fmt.Fprintf(w, "(boundary tolerance %g px; %s)\n", tol, v.Msg("every metric in `json` and `csv`"))
}

// describe is a reading in words, for the text table.
func describe(r Reading, v pipeline.Voice) string {
	switch r.Kind {
	case KindMaskComponents:
		return fmt.Sprintf("a binary mask (0 and one other value): its %s, the 8-connected components, were scored (%s)", pipeline.Plural(r.Objects, "object"), v.Msg("`split-masks` off scores it as one label"))
	case KindMaskUnsplit:
		return fmt.Sprintf("a binary mask (0 and one other value), scored as one label (%s)", v.Msg("`split-masks` off"))
	}
	return fmt.Sprintf("a label map of %s", pipeline.Plural(r.Objects, "object"))
}

// UnpairedMessage describes the unpaired files of predDir and truthDir in
// one line.
func UnpairedMessage(u Unpaired, predDir, truthDir string) string {
	var msgs []string
	if len(u.NoTruth) > 0 {
		msgs = append(msgs, "predictions without a truth (want NAME, NAME.truth, NAME_mask or NAME_truth in "+truthDir+"): "+strings.Join(u.NoTruth, ", "))
	}
	if len(u.NoPred) > 0 {
		msgs = append(msgs, "truths without a prediction in "+predDir+": "+strings.Join(u.NoPred, ", "))
	}
	return strings.Join(msgs, "; ")
}
