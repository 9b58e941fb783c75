package progress

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/segment/score"
)

// Off a terminal, batch prints one plain line per tick that changed the
// count, and nothing when quiet.
func TestBatchLines(t *testing.T) {
	var buf bytes.Buffer
	p := NewBatch(&buf, 3, false)
	p.Line(0, 0)
	p.Line(0, 0) // unchanged: no line
	p.Add(2, 1, 2)
	p.Line(2, 1) // within the first second: no rate yet (see TestProgressRate)
	p.Finish()
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	if len(lines) != 2 || lines[0] != "cleave batch: 0/3 images done, 0 failed" || lines[1] != "cleave batch: 2/3 images done, 1 failed" {
		t.Errorf("lines %q", lines)
	}
	var quiet bytes.Buffer
	q := NewBatch(&quiet, 3, true)
	q.Line(1, 0)
	q.Finish()
	if quiet.Len() != 0 {
		t.Errorf("quiet printed %q", quiet.String())
	}
}

// Off a terminal, tune prints a line per stage with the settings evaluated
// of those planned and the best mean so far: the largest for f1, the
// smallest for vi (lower is better); a failed setting (NaN) is counted
// but is never the best.
func TestTuneLines(t *testing.T) {
	for _, c := range []struct {
		metric score.Metric
		want   string
	}{{score.MetricF1, "0.9000"}, {score.MetricVI, "0.2000"}} {
		var buf bytes.Buffer
		p := NewTune(&buf, c.metric)
		p.Plan(4)
		for _, v := range []float64{0.5, 0.9, math.NaN(), 0.2} {
			p.SettingDone(v)
		}
		p.Stage("grid")
		p.Say("widened")
		p.Finish()
		want := "cleave tune: 4/4 settings evaluated, best mean " + c.metric.String() + " so far " + c.want + " (grid done)\ncleave tune: widened\n"
		if buf.String() != want {
			t.Errorf("%v: %q, want %q", c.metric, buf.String(), want)
		}
	}
}
