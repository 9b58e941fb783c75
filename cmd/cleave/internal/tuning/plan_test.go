package tuning

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/segment/tune"
)

// testRequest is the default request with two classes on a dark
// background and 300 superpixels.
func testRequest() pipeline.Request {
	r := pipeline.DefaultRequest()
	r.Classes, r.Background, r.Superpixels = 2, "dark", "300"
	return r
}

// testPlan is a grid-only tune of the scenes in the folder of pairs,
// max-ncut and sigma-x fixed.
func testPlan(pairs []Pair, out string, log *bytes.Buffer) *Plan {
	m, why := DefaultMetric("dark")
	cfg := &Config{Metric: m, MetricChoice: why, Tolerance: 2, Workers: 1, Voice: testVoice, Start: time.Now()}
	cfg.Space[tune.MaxNcut] = tune.NewAxis(tune.MaxNcut, []float64{0.15}, "0.15")
	cfg.Space[tune.SigmaX] = tune.NewAxis(tune.SigmaX, []float64{6}, "6")
	dir := filepath.Dir(pairs[0].Image)
	return &Plan{Request: testRequest(), Config: cfg, Split: true, Images: dir, Truth: dir, Out: out, Log: log}
}

// A plan fixes the parameters given as one value, fills the default axes
// from the request (superpixels 300, radius and compactness as given,
// max-ncut as given; sigma-i's five values around the automatic one;
// faint off and DefaultFaintLevel),
// notes images without a truth, writes the files and
// refuses to replace them without Force; errors in what was asked are
// RequestErrors. On one generated nuclei scene (seed 13603).
func TestPlanRun(t *testing.T) {
	pairs := writeScenes(t, 13603)
	dir := filepath.Dir(pairs[0].Image)
	if err := os.WriteFile(filepath.Join(dir, "lonely.png"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "tuned")
	var log bytes.Buffer
	p := testPlan(pairs, out, &log)
	o, err := p.Run(ctx)
	if err != nil {
		t.Fatalf("%v\n%s", err, log.String())
	}
	sp := p.Config.Space
	if sp[tune.Superpixels].Values[0] != 300 || sp[tune.Radius].Values[0] != float64(testRequest().Radius) || len(sp[tune.MaxNcut].Values) != 1 {
		t.Errorf("space %+v", sp)
	}
	// Two classes on a dark background: faint off and the default level
	// are both tried (the grid doubles).
	if !slices.Equal(sp[tune.Faint].Values, []float64{0, DefaultFaintLevel}) {
		t.Errorf("faint axis %+v, want 0 and %d", sp[tune.Faint], DefaultFaintLevel)
	}
	if !strings.Contains(log.String(), "lonely.png has no truth") || len(p.Config.Unpaired) != 1 || filepath.Base(p.Config.Unpaired[0]) != "lonely.png" {
		t.Errorf("log %q, unpaired %v", log.String(), p.Config.Unpaired)
	}
	if r := o.Tuned(testRequest()); r.SigmaX != "6" || r.MaxNcut != 0.15 {
		t.Errorf("tuned request %+v", r)
	}
	for _, n := range Outputs() {
		if _, err := os.Stat(filepath.Join(out, n)); err != nil {
			t.Error(err)
		}
	}
	var sum bytes.Buffer
	o.WriteSummary(&sum, out)
	if !strings.Contains(sum.String(), "tuned on 1 image: 10 grid") || !strings.Contains(sum.String(), "metric:              f1 (default with `background`: objects counted)") {
		t.Errorf("summary:\n%s", sum.String())
	}
	if _, err := testPlan(pairs, out, &log).Run(ctx); err == nil || !strings.Contains(err.Error(), "tune.csv already exists") && !strings.Contains(err.Error(), "best.json already exists") {
		t.Errorf("rerun without Force: %v", err)
	}
	for name, set := range map[string]func(*Plan){
		"`planes`":   func(p *Plan) { p.Request.Planes = pipeline.PlanesAll },
		"sigma-i":    func(p *Plan) { p.Config.Space[tune.SigmaI] = tune.NewAxis(tune.SigmaI, []float64{-1}, "-1") },
		"background": func(p *Plan) { p.Request.Background = "grey" },
	} {
		p := testPlan(pairs, t.TempDir(), &log)
		set(p)
		var re *pipeline.RequestError
		if _, err := p.Run(ctx); !errors.As(err, &re) || !strings.Contains(err.Error(), name) {
			t.Errorf("%s: %v, want a RequestError naming it", name, err)
		}
	}
}

// Axes as text: lists, log-spaced A:B:N (values of tune.LogSpaced), auto,
// on/off; errors name the parameter in backquotes.
func TestParseAxis(t *testing.T) {
	ax, err := ParseAxis(tune.SigmaX, "2:8:3")
	if err != nil || len(ax.Values) != 3 || ax.Values[0] != 2 || ax.Values[2] != 8 || ax.Values[1] != tune.LogSpaced(2, 8, 3)[1] {
		t.Errorf("2:8:3: %+v, %v", ax, err)
	}
	if ax, err := ParseAxis(tune.Necks, "on,off"); err != nil || len(ax.Values) != 2 || !slices.Contains(ax.Values, tune.On) || !slices.Contains(ax.Values, tune.Off) {
		t.Errorf("on,off: %+v, %v", ax, err)
	}
	if ax, err := ParseAxis(tune.SigmaI, "auto"); err != nil || !ax.Auto {
		t.Errorf("auto: %+v, %v", ax, err)
	}
	for _, c := range []struct {
		d    tune.Param
		text string
	}{{tune.Radius, "auto"}, {tune.Radius, "2.5"}, {tune.SigmaX, "1:2"}, {tune.SigmaX, "0:4:3"}, {tune.SigmaX, "1:4:51"}, {tune.Necks, "maybe"}, {tune.MaxNcut, "x"}} {
		if _, err := ParseAxis(c.d, c.text); err == nil || !strings.Contains(err.Error(), "`"+c.d.String()+"`") {
			t.Errorf("%s %q: %v", c.d, c.text, err)
		}
	}
}
