package score

import (
	"context"
	"fmt"

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

var metricNames = [numMetrics]string{"ari", "rand", "vi", "vi_split", "vi_merge", "dice", "iou", "precision", "recall", "f1", "mean_iou", "map", "bf", "bp", "br", "covering"}

// Metrics lists every metric in the order of the Report's fields.
func Metrics() []Metric {
	m := make([]Metric, numMetrics)
	for i := range m {
		m[i] = Metric(i)
	}
	return m
}

// String is the metric's name, the json tag of its Report field.
func (m Metric) String() string {
	if m < 0 || m >= numMetrics {
		return fmt.Sprintf("Metric(%d)", int(m))
	}
	return metricNames[m]
}

// LowerIsBetter reports whether smaller values of the metric are better
// (the variation of information and its parts are distances).
func (m Metric) LowerIsBetter() bool {
	return m == MetricVI || m == MetricVISplit || m == MetricVIMerge
}

// ParseMetric returns the metric of the given name.
func ParseMetric(name string) (Metric, error) {
	for i, n := range metricNames {
		if n == name {
			return Metric(i), nil
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
	if m < 0 || m >= numMetrics {
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
