package tune

import (
	"context"
	"errors"
	"math"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/score"
)

// necksTuner searches sigma-x (grid 4, 8, 16) and the necks switch (both
// values) on two images whose F1 is f(sigma-x, necks on) and whose cost is
// 1 for every setting: an objective known in closed form.
func necksTuner(f func(sx float64, necks bool) float64) *Tuner {
	tn := synthTuner([]float64{4, 8, 16}, nil, func(float64, int) float64 { return 1 })
	tn.Space[Necks] = NewAxis(Necks, []float64{On, Off}, "on,off")
	tn.Objective = func(_ context.Context, p segment.Params, _ int) (Sample, error) {
		v := f(p.SigmaX, !p.SeamsOnly)
		if math.IsNaN(v) {
			return Sample{}, errors.New("synthetic failure")
		}
		return Sample{Report: score.Report{F1: v}, Cost: 1}, nil
	}
	return tn
}

// The necks switch as a searched parameter: its axis holds off and on
// (sorted, 0 and 1), it is never refined nor widened, it is printed on
// and off, and it reaches segment.Params as SeamsOnly (off = seams only).
// On F1 = g(sigma-x) + b(necks) with g = 1/(1 + ln(sx/10)^2) (one maximum
// at sigma-x 10, inside the grid) the search finds the better switch
// value whichever it is, and refines sigma-x alone; on a tie (b = 0 for
// both) the choice is on, the library's default (smoother's last rule).
func TestNecksSearched(t *testing.T) {
	ax := NewAxis(Necks, []float64{On, Off, On}, "on,off")
	if !slices.Equal(ax.Values, []float64{Off, On}) || ax.Refinable() || !slices.Equal(ax.Texts(), []string{"off", "on"}) {
		t.Fatalf("axis %+v, refinable %v, texts %v", ax, ax.Refinable(), ax.Texts())
	}
	if d := DefaultAxis(Necks, []float64{On}); d.Spec != "on (default)" || !slices.Equal(d.Values, []float64{On}) {
		t.Errorf("default axis %+v", d)
	}
	var s Space
	s[Necks] = ax
	if s.Text(Point{Necks: On}, Necks) != "on" || s.Text(Point{Necks: Off}, Necks) != "off" {
		t.Error("necks text")
	}
	if p := With(base(), Necks, Off, false); !p.SeamsOnly {
		t.Error("necks off must set SeamsOnly")
	}
	if p := With(base(), Necks, On, false); p.SeamsOnly {
		t.Error("necks on must clear SeamsOnly")
	}
	g := func(sx float64) float64 { l := math.Log(sx / 10); return 1 / (1 + l*l) }
	for _, c := range []struct {
		name  string
		bonus func(necks bool) float64
		want  float64
	}{
		{"on_better", func(n bool) float64 { return map[bool]float64{true: 0.1, false: 0}[n] }, On},
		{"off_better", func(n bool) float64 { return map[bool]float64{true: 0, false: 0.1}[n] }, Off},
		{"tie_keeps_default", func(bool) float64 { return 0 }, On},
	} {
		for _, smootherTies := range []bool{false, true} {
			tn := necksTuner(func(sx float64, n bool) float64 { return g(sx) + c.bonus(n) })
			tn.SmootherTies = smootherTies
			res, err := tn.Search(ctx, tn.All(), 8, nil)
			if err != nil {
				t.Fatal(err)
			}
			if got := res.Best.Point[Necks]; got != c.want {
				t.Errorf("%s (smoother ties %v): necks %s, want %s", c.name, smootherTies, OnOff(got), OnOff(c.want))
			}
			if sx := res.Best.Point[SigmaX]; sx < 8 || sx > 12.5 {
				t.Errorf("%s: sigma-x %v, want near 10", c.name, sx)
			}
			for _, e := range res.Visited {
				if v := e.Point[Necks]; v != On && v != Off {
					t.Errorf("%s: visited necks value %v", c.name, v)
				}
			}
			for _, w := range res.Widened {
				if w.Parameter == "necks" {
					t.Errorf("%s: necks widened: %+v", c.name, w)
				}
			}
			// The grid is 3 x 2; refinement moves sigma-x only, each step
			// one new setting per necks value at most.
			grid := 0
			for _, e := range res.Visited {
				if e.Stage == "grid" {
					grid++
				}
			}
			if grid != 6 {
				t.Errorf("%s: %d grid settings, want 3 sigma-x x 2 necks", c.name, grid)
			}
		}
	}
}

// A single value keeps the switch fixed: the grid is that of sigma-x
// alone and every setting carries the value given.
func TestNecksFixed(t *testing.T) {
	for _, v := range []float64{On, Off} {
		tn := necksTuner(func(sx float64, n bool) float64 { return 1 / (1 + math.Abs(math.Log(sx/8))) })
		tn.Space[Necks] = NewAxis(Necks, []float64{v}, OnOff(v))
		res, err := tn.Search(ctx, tn.All(), 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Visited) != 3 {
			t.Errorf("necks %s: %d settings, want the 3 of sigma-x", OnOff(v), len(res.Visited))
		}
		for _, e := range res.Visited {
			if e.Point[Necks] != v {
				t.Errorf("necks %s: setting %s", OnOff(v), e.Key)
			}
		}
	}
}
