package score

import (
	"context"
	"fmt"
	"slices"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// Report holds every measure of one prediction against its truth. The json
// tags are the metric names (Metric.String); the score command, the tuner
// and the demo all print and store this one type.
type Report struct {
	ARI       float64 `json:"ari"`
	Rand      float64 `json:"rand"`
	VI        float64 `json:"vi"`
	VISplit   float64 `json:"vi_split"`
	VIMerge   float64 `json:"vi_merge"`
	Dice      float64 `json:"dice"`
	IoU       float64 `json:"iou"`
	Precision float64 `json:"precision"`
	Recall    float64 `json:"recall"`
	F1        float64 `json:"f1"`
	MeanIoU   float64 `json:"mean_iou"`
	MAP       float64 `json:"map"`
	BF        float64 `json:"bf"`
	BP        float64 `json:"bp"`
	BR        float64 `json:"br"`
	Covering  float64 `json:"covering"`
}

// Metric names one measure of a Report.
type Metric int

// The metrics of a Report, in the order of its fields.
const (
	MetricARI Metric = iota
	MetricRand
	MetricVI
	MetricVISplit
	MetricVIMerge
	MetricDice
	MetricIoU
	MetricPrecision
	MetricRecall
	MetricF1
	MetricMeanIoU
	MetricMAP
	MetricBF
	MetricBP
	MetricBR
	MetricCovering
	numMetrics
)

// metricInfo is what the package knows of a metric beside its Report
// field: its name and the roles a summary or a parameter search gives it.
type metricInfo struct {
	name string
	// lower: smaller values are better (Metric.LowerIsBetter).
	lower bool
	// column: 0 when the metric is not one of the few measures a table of
	// one row per image shows, else its place among them, 1 first
	// (Metric.Column, Columns).
	column int
	// objective: 0 when the metric is not worth optimizing on, else its
	// place among the objectives, 1 first (Metric.Objective, Objectives).
	objective int
	// headline: shown beside whatever objective was optimized
	// (Metric.Headline).
	headline bool
}

// metrics is the one list of the metrics' properties. Adding a metric
// means a Report field, a constant above, an entry here, a pointer in
// fields and its computation in Compare.
var metrics = [numMetrics]metricInfo{
	MetricARI:       {name: "ari", column: 1, objective: 3, headline: true},
	MetricRand:      {name: "rand"},
	MetricVI:        {name: "vi", lower: true, column: 2, objective: 7},
	MetricVISplit:   {name: "vi_split", lower: true},
	MetricVIMerge:   {name: "vi_merge", lower: true},
	MetricDice:      {name: "dice", column: 3, objective: 4},
	MetricIoU:       {name: "iou"},
	MetricPrecision: {name: "precision"},
	MetricRecall:    {name: "recall"},
	MetricF1:        {name: "f1", column: 4, objective: 1, headline: true},
	MetricMeanIoU:   {name: "mean_iou", column: 6},
	MetricMAP:       {name: "map", column: 5, objective: 2, headline: true},
	MetricBF:        {name: "bf", column: 7, objective: 5},
	MetricBP:        {name: "bp"},
	MetricBR:        {name: "br"},
	MetricCovering:  {name: "covering", column: 8, objective: 6},
}

// Metrics lists every metric in the order of the Report's fields (a new
// slice on each call).
func Metrics() []Metric {
	m := make([]Metric, numMetrics)
	for i := range m {
		m[i] = Metric(i)
	}
	return m
}

// Columns lists the measures a table of one row per image shows
// (Metric.Column), in its order (a new slice on each call).
func Columns() []Metric { return ranked(func(i metricInfo) int { return i.column }) }

// Objectives lists the metrics worth optimizing a segmentation on
// (Metric.Objective), most preferred first (a new slice on each call).
func Objectives() []Metric { return ranked(func(i metricInfo) int { return i.objective }) }

// ranked lists the metrics of positive rank, by rank.
func ranked(rank func(metricInfo) int) []Metric {
	var o []Metric
	for _, m := range Metrics() {
		if rank(metrics[m]) > 0 {
			o = append(o, m)
		}
	}
	slices.SortFunc(o, func(a, b Metric) int { return rank(metrics[a]) - rank(metrics[b]) })
	return o
}

// valid reports whether m is one of the constants above.
func (m Metric) valid() bool { return m >= 0 && m < numMetrics }

// String is the metric's name, the json tag of its Report field.
func (m Metric) String() string {
	if !m.valid() {
		return fmt.Sprintf("Metric(%d)", int(m))
	}
	return metrics[m].name
}

// LowerIsBetter reports whether smaller values of the metric are better
// (the variation of information and its parts are distances).
func (m Metric) LowerIsBetter() bool { return m.valid() && metrics[m].lower }

// Column reports whether m is one of the measures a table too narrow for
// all of them shows: the main measure of each family (ARI; VI; Dice;
// object F1, mAP and the mean IoU of the matches; boundary F; covering).
func (m Metric) Column() bool { return m.valid() && metrics[m].column > 0 }

// Objective reports whether m is worth optimizing a segmentation's
// parameters on: a measure of both errors, splits and merges or misses
// and false alarms. The one-sided parts (precision, recall, bp, br,
// vi_split, vi_merge) are not, nor are the Rand index (not corrected for
// chance; ARI is, Hubert and Arabie 1985), the IoU (a function of Dice:
// IoU = Dice/(2-Dice)) and the mean IoU (of the matched objects only).
func (m Metric) Objective() bool { return m.valid() && metrics[m].objective > 0 }

// Headline reports whether m is one of the few objectives a one-line
// summary shows beside the one optimized, in the order of Objectives.
func (m Metric) Headline() bool { return m.valid() && metrics[m].headline }

// ParseMetric returns the metric of the given name.
func ParseMetric(name string) (Metric, error) {
	for _, m := range Metrics() {
		if metrics[m].name == name {
			return m, nil
		}
	}
	return 0, fmt.Errorf("score: unknown metric %q", name)
}

// fields are pointers to the measures in the order of the metrics.
func (r *Report) fields() *[numMetrics]*float64 {
	return &[numMetrics]*float64{&r.ARI, &r.Rand, &r.VI, &r.VISplit, &r.VIMerge, &r.Dice, &r.IoU, &r.Precision, &r.Recall, &r.F1, &r.MeanIoU, &r.MAP, &r.BF, &r.BP, &r.BR, &r.Covering}
}

// Get returns one measure.
func (r Report) Get(m Metric) float64 { return *r.fields()[m] }

// Values lists the measures in the order of Metrics.
func (r Report) Values() []float64 {
	f := r.fields()
	v := make([]float64, numMetrics)
	for i, p := range f {
		v[i] = *p
	}
	return v
}

// Compare computes every measure of pred against truth (label maps of one
// size; tol is the boundary matching distance in pixels). It stops when
// ctx is done, between measures and inside the boundary matching (the
// long part), returning ctx's error.
func Compare(ctx context.Context, pred, truth labelmap.Map, tol float64) (Report, error) {
	if err := ctx.Err(); err != nil {
		return Report{}, err
	}
	t := Contingency(pred.Pix, truth.Pix)
	var r Report
	r.ARI, r.Rand = t.ARI(), t.RandIndex()
	r.VI, r.VISplit, r.VIMerge = t.VI()
	r.Dice, r.IoU = Dice(pred.Pix, truth.Pix)
	om := MatchObjects(pred.Pix, truth.Pix)
	r.Precision, r.Recall, r.F1, r.MeanIoU = om.Precision, om.Recall, om.F1, om.MeanIoU
	r.MAP = t.MeanAP()
	b, err := BoundaryContext(ctx, pred, truth, tol)
	if err != nil {
		return Report{}, err
	}
	r.BF, r.BP, r.BR = b.F, b.Precision, b.Recall
	r.Covering = t.Covering()
	return r, nil
}

// Mean is the mean of each measure over rs, summed in the given order (so
// that the result does not depend on anything but the order of rs).
func Mean(rs []Report) Report {
	var mean Report
	f := mean.fields()
	for _, r := range rs {
		for i, v := range r.Values() {
			*f[i] += v
		}
	}
	for _, p := range f {
		*p /= float64(len(rs))
	}
	return mean
}

// MarshalText encodes the metric as its name.
func (m Metric) MarshalText() ([]byte, error) {
	if !m.valid() {
		return nil, fmt.Errorf("score: unknown metric %d", int(m))
	}
	return []byte(m.String()), nil
}

// UnmarshalText reads a metric's name.
func (m *Metric) UnmarshalText(text []byte) error {
	v, err := ParseMetric(string(text))
	if err != nil {
		return err
	}
	*m = v
	return nil
}
