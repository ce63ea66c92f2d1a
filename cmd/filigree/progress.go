package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"

	"golang.org/x/term"
)

// Progress is the one progress display of filigree: a single status line on
// stderr, redrawn at most ten times a second, shown only when stderr is a
// terminal and --quiet is not given. It is safe for concurrent use, so
// worker goroutines may call Add directly.
type Progress struct {
	mu      sync.Mutex
	w       io.Writer
	on      bool
	step    string
	total   int64
	done    int64
	start   time.Time
	drawn   time.Time
	visible bool
}

// NewProgress returns a reporter writing to w, active only when w is a
// terminal and quiet is false.
func NewProgress(w io.Writer, quiet bool) *Progress {
	on := false
	if f, ok := w.(*os.File); ok && !quiet {
		on = term.IsTerminal(int(f.Fd()))
	}
	return &Progress{w: w, on: on}
}

// Start begins a named step of total units (total ≤ 0: unknown).
func (p *Progress) Start(step string, total int64) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.step, p.total, p.done, p.start = step, total, 0, time.Now()
	p.draw(true)
}

// Add records n more units done in the current step.
func (p *Progress) Add(n int64) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.done += n
	p.draw(false)
}

// Func returns a callback in the form library functions take
// (done and total units of the current step).
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
		p.done, p.total = done, total
		p.draw(false)
		p.mu.Unlock()
	}
}

// Finish clears the status line.
func (p *Progress) Finish() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.on && p.visible {
		fmt.Fprint(p.w, "\r\033[K")
		p.visible = false
	}
}

func (p *Progress) draw(force bool) {
	if !p.on {
		return
	}
	now := time.Now()
	if !force && now.Sub(p.drawn) < 100*time.Millisecond {
		return
	}
	p.drawn = now
	el := now.Sub(p.start).Seconds()
	if p.total > 0 {
		frac := float64(p.done) / float64(p.total)
		const width = 30
		bar := make([]byte, width)
		for i := range bar {
			if float64(i) < frac*width {
				bar[i] = '='
			} else {
				bar[i] = ' '
			}
		}
		fmt.Fprintf(p.w, "\r\033[K%s [%s] %5.1f%% %.1fs", p.step, bar, 100*frac, el)
	} else {
		fmt.Fprintf(p.w, "\r\033[K%s %d %.1fs", p.step, p.done, el)
	}
	p.visible = true
}

// enabled reports whether the reporter draws (stderr is a terminal and
// --quiet is off); otherwise commands print a one-line log per step.
func (p *Progress) enabled() bool {
	if p == nil {
		return false
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.on
}
