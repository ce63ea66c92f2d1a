package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// Progress is the one progress display of filigree. On a terminal (and
// without --quiet) each step shows a progress bar with its elapsed time and
// an estimate of the time left (github.com/schollz/progressbar/v3; a
// spinner when the amount of work is unknown), cleared when the step ends.
// Otherwise each step that finishes writes one log line with its duration,
// unless --quiet. It is safe for concurrent use, so worker goroutines may
// call Add directly.
type Progress struct {
	mu    sync.Mutex
	w     io.Writer
	on    bool // terminal: draw bars
	quiet bool
	step  string
	start time.Time
	bar   *progressbar.ProgressBar
}

// NewProgress returns a reporter writing to w: bars when w is a terminal,
// one line per finished step otherwise, nothing when quiet.
func NewProgress(w io.Writer, quiet bool) *Progress {
	on := false
	if f, ok := w.(*os.File); ok && !quiet {
		on = term.IsTerminal(int(f.Fd()))
	}
	return &Progress{w: w, on: on, quiet: quiet}
}

// Start begins a named step of total units (total ≤ 0: unknown), ending
// the previous step if it is still open.
func (p *Progress) Start(step string, total int64) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.finishLocked()
	p.step, p.start = step, time.Now()
	if !p.on {
		return
	}
	max := total
	if max <= 0 {
		max = -1 // spinner
	}
	p.bar = progressbar.NewOptions64(max,
		progressbar.OptionSetWriter(p.w),
		progressbar.OptionSetDescription(step),
		progressbar.OptionSetWidth(30),
		progressbar.OptionSetElapsedTime(true),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionShowCount(),
		progressbar.OptionThrottle(100*time.Millisecond),
		progressbar.OptionClearOnFinish(),
		progressbar.OptionSpinnerType(14),
	)
	_ = p.bar.RenderBlank()
}

// Add records n more units done in the current step.
func (p *Progress) Add(n int64) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.bar != nil {
		_ = p.bar.Add64(n)
	}
}

// Func returns a callback in the form library functions take (done and
// total units of the current step).
func (p *Progress) Func(step string) func(done, total int64) {
	started := false
	return func(done, total int64) {
		if p == nil {
			return
		}
		if !started {
			p.Start(step, total)
			started = true
		}
		p.mu.Lock()
		defer p.mu.Unlock()
		if p.bar != nil {
			if total > 0 {
				p.bar.ChangeMax64(total)
			}
			_ = p.bar.Set64(done)
		}
	}
}

// Finish ends the current step: the bar is cleared, or the step's log line
// is written.
func (p *Progress) Finish() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.finishLocked()
}

func (p *Progress) finishLocked() {
	if p.step == "" {
		return
	}
	if p.bar != nil {
		_ = p.bar.Finish()
		_ = p.bar.Clear()
		p.bar = nil
	} else if !p.quiet {
		fmt.Fprintf(p.w, "filigree: %s (%.1f s)\n", p.step, time.Since(p.start).Seconds())
	}
	p.step = ""
}

// enabled reports whether the reporter draws bars (stderr is a terminal and
// --quiet is off).
func (p *Progress) enabled() bool {
	if p == nil {
		return false
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.on
}
