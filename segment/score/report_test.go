package score

import (
	"encoding/json"
	"slices"
	"strings"
	"testing"
)

// names are the names of ms.
func names(ms []Metric) string {
	s := make([]string, len(ms))
	for i, m := range ms {
		s[i] = m.String()
	}
	return strings.Join(s, " ")
}

// Each metric's name is the json tag of the Report field that Get reads:
// a Report whose field i holds i, marshalled, has i under Metrics()[i]'s
// name, and Values lists the fields in that order.
func TestMetricNamesMatchFields(t *testing.T) {
	var r Report
	for i, p := range r.fields() {
		*p = float64(i)
	}
	b, err := json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	var byName map[string]float64
	if err := json.Unmarshal(b, &byName); err != nil {
		t.Fatal(err)
	}
	if len(byName) != int(numMetrics) {
		t.Errorf("%d json keys, %d metrics", len(byName), numMetrics)
	}
	seen := map[string]bool{}
	for i, m := range Metrics() {
		name := m.String()
		if seen[name] {
			t.Errorf("name %q twice", name)
		}
		seen[name] = true
		if v, ok := byName[name]; !ok || v != float64(i) || r.Get(m) != float64(i) || r.Values()[i] != float64(i) {
			t.Errorf("%s: json %v (present %v), Get %v, Values %v; want %d", name, v, ok, r.Get(m), r.Values()[i], i)
		}
		got, err := ParseMetric(name)
		if err != nil || got != m {
			t.Errorf("ParseMetric(%q) = %v, %v", name, got, err)
		}
		var u Metric
		text, err := m.MarshalText()
		if err != nil || u.UnmarshalText(text) != nil || u != m {
			t.Errorf("%s: text %q %v, back %v", name, text, err, u)
		}
	}
}

func TestMetricOutOfRange(t *testing.T) {
	for _, m := range []Metric{-1, numMetrics} {
		if _, err := m.MarshalText(); err == nil {
			t.Errorf("%d: MarshalText accepted it", int(m))
		}
		if m.Column() || m.Objective() || m.Headline() || m.LowerIsBetter() {
			t.Errorf("%d: has a property", int(m))
		}
	}
	if _, err := ParseMetric("mAP"); err == nil || !strings.Contains(err.Error(), `"mAP"`) {
		t.Errorf("ParseMetric(mAP): %v, want an error naming it", err)
	}
}

// The properties as the command prints them (checked against its output
// before the lists moved here): the columns of cleave score's folder
// table, the values of tune's --metric in its help and
// errors, the means of tune.csv and the measures tune's summary shows
// beside the best. Changing one of these lists changes those outputs.
func TestMetricProperties(t *testing.T) {
	var cols, objField, head, lower []Metric
	for _, m := range Metrics() {
		if m.Column() {
			cols = append(cols, m)
		}
		if m.Objective() {
			objField = append(objField, m)
		}
		if m.LowerIsBetter() {
			lower = append(lower, m)
		}
	}
	for _, m := range Objectives() {
		if m.Headline() {
			head = append(head, m)
		}
	}
	for _, c := range []struct {
		what string
		got  []Metric
		want string
	}{
		{"columns in field order", cols, "ari vi dice f1 mean_iou map bf covering"},
		{"Columns", Columns(), "ari vi dice f1 map mean_iou bf covering"},
		{"objectives in field order", objField, "ari vi dice f1 map bf covering"},
		{"Objectives", Objectives(), "f1 map ari dice bf covering vi"},
		{"headlines in the order of Objectives", head, "f1 map ari"},
		{"lower is better", lower, "vi vi_split vi_merge"},
	} {
		if got := names(c.got); got != c.want {
			t.Errorf("%s: %q, want %q", c.what, got, c.want)
		}
	}
	for _, m := range Metrics() {
		if m.Headline() && !m.Objective() {
			t.Errorf("%s: a headline that is not an objective is never shown", m)
		}
	}
	// The column and objective ranks are 1..n, each once, so that the
	// orders of Columns and Objectives are total.
	for _, c := range []struct {
		what string
		rank func(metricInfo) int
	}{{"column", func(i metricInfo) int { return i.column }}, {"objective", func(i metricInfo) int { return i.objective }}} {
		var ranks []int
		for _, i := range metrics {
			if r := c.rank(i); r != 0 {
				ranks = append(ranks, r)
			}
		}
		slices.Sort(ranks)
		for i, r := range ranks {
			if r != i+1 {
				t.Errorf("%s ranks %v, want 1..%d each once", c.what, ranks, len(ranks))
				break
			}
		}
	}
}

// Metrics, Columns and Objectives return new slices: a caller's change does not
// reach the next caller.
func TestMetricListsFresh(t *testing.T) {
	for _, f := range []func() []Metric{Metrics, Columns, Objectives} {
		a := f()
		want := names(a)
		a[0] = a[len(a)-1]
		if got := names(f()); got != want {
			t.Errorf("after a change to a returned slice: %q, want %q", got, want)
		}
	}
}
