package progress

import (
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"sync"
	"time"

	"github.com/cleave-seg/cleave/segment/score"
	"golang.org/x/term"
)

// Tune reports how far a search is on stderr: settings evaluated
// out of those planned (grid, refinement budgets and widenings; an upper
// bound, since refinement may stop early) and the best mean score so far
// on all images. On a terminal it is one line rewritten in place at most
// five times a second; otherwise one line per stage.
type Tune struct {
	mu      sync.Mutex
	w       io.Writer
	term    bool
	metric  score.Metric
	minimum bool // the metric is minimized (vi)
	done    int
	planned int
	best    float64
	have    bool
	last    time.Time
	width   int // length of the last terminal line
}

// NewTune reports on w the best mean of metric so far.
func NewTune(w io.Writer, metric score.Metric) *Tune {
	p := &Tune{w: w, metric: metric, minimum: metric.LowerIsBetter()}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		p.term = true
	}
	return p
}

// Plan adds n settings to those planned.
func (p *Tune) Plan(n int) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.planned += n
}

// SettingDone counts one evaluated setting with its mean score v (NaN
// when it failed on an image).
func (p *Tune) SettingDone(v float64) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.done++
	if p.done > p.planned {
		p.planned = p.done
	}
	if !math.IsNaN(v) && (!p.have || (p.minimum && v < p.best) || (!p.minimum && v > p.best)) {
		p.best, p.have = v, true
	}
	if p.term && time.Since(p.last) > 200*time.Millisecond {
		p.redraw("")
	}
}

func (p *Tune) text() string {
	s := fmt.Sprintf("cleave tune: %d/%d settings evaluated", p.done, p.planned)
	if p.have {
		s += fmt.Sprintf(", best mean %s so far %.4f", p.metric, p.best)
	}
	return s
}

// redraw rewrites the terminal line (caller holds mu).
func (p *Tune) redraw(stage string) {
	s := p.text()
	if stage != "" {
		s += " (" + stage + " done)"
	}
	pad := ""
	if n := p.width - len(s); n > 0 {
		pad = strings.Repeat(" ", n)
	}
	fmt.Fprintf(p.w, "\r%s%s", s, pad)
	p.width, p.last = len(s), time.Now()
}

// Stage reports the end of a stage: a line of its own off a terminal.
func (p *Tune) Stage(name string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.term {
		p.redraw(name)
		return
	}
	fmt.Fprintf(p.w, "%s (%s done)\n", p.text(), name)
}

// Say prints a message on a line of its own.
func (p *Tune) Say(msg string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.clear()
	fmt.Fprintf(p.w, "cleave tune: %s\n", msg)
}

// clear removes the terminal line (caller holds mu).
func (p *Tune) clear() {
	if p.term && p.width > 0 {
		fmt.Fprintf(p.w, "\r%s\r", strings.Repeat(" ", p.width))
		p.width = 0
	}
}

// Finish removes the terminal line before the summary.
func (p *Tune) Finish() {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.clear()
}
