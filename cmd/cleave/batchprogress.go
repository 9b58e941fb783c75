package main

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progress reports how far a batch is: a bar when stderr is a terminal, a
// plain line on each tick otherwise, nothing when quiet.
type progress struct {
	w     io.Writer
	total int
	start time.Time
	bar   *progressbar.ProgressBar // nil unless stderr is a terminal
	quiet bool
	last  int // finished count at the last plain line
}

func newProgress(w io.Writer, total int, quiet bool) *progress {
	p := &progress{w: w, total: total, start: time.Now(), quiet: quiet, last: -1}
	if quiet || total == 0 {
		return p
	}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		p.bar = progressbar.NewOptions(total,
			progressbar.OptionSetWriter(w),
			progressbar.OptionSetDescription("cleave batch"),
			progressbar.OptionShowCount(),
			progressbar.OptionShowIts(),
			progressbar.OptionSetItsString("images"),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
			progressbar.OptionSetWidth(30),
		)
	}
	return p
}

// add is called each time an image is finished.
func (p *progress) add(finished, failed int) {
	if p.bar != nil {
		_ = p.bar.Set(finished)
	}
}

// line prints the plain progress line (non-terminal stderr only), unless
// nothing changed since the last one.
func (p *progress) line(finished, failed int) {
	if p.quiet || p.bar != nil || p.total == 0 || finished == p.last {
		return
	}
	p.last = finished
	el := time.Since(p.start).Seconds()
	fmt.Fprintf(p.w, "cleave batch: %d/%d images done, %d failed", finished, p.total, failed)
	if finished > 0 && el > 0 {
		rate := float64(finished) / el
		left := float64(p.total-finished) / rate
		fmt.Fprintf(p.w, ", %.2f images/s, about %s left", rate, (time.Duration(left) * time.Second).Round(time.Second))
	}
	fmt.Fprintln(p.w)
}

// clear removes the bar before another line is printed.
func (p *progress) clear() {
	if p.bar != nil {
		_ = p.bar.Clear()
	}
}

func (p *progress) finish() {
	if p.bar != nil {
		_ = p.bar.Finish()
	}
}
