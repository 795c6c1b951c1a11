package main

import (
	"io"
	"os"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progress draws a progress bar of replicates on stderr while a run goes
// on: replicates done, rate and time left. It draws only when stderr is a
// terminal and the user did not ask for quiet, so logs, pipes and
// machine-readable output on stdout never see it.
type progress struct {
	mu   sync.Mutex
	bar  *progressbar.ProgressBar
	last int64
}

// newProgress returns a progress bar for a run, or nil when none should be
// drawn.
func newProgress(stderr io.Writer, quiet bool, label string) *progress {
	f, ok := stderr.(*os.File)
	if quiet || !ok || !term.IsTerminal(int(f.Fd())) {
		return nil
	}
	return &progress{bar: progressbar.NewOptions64(-1,
		progressbar.OptionSetWriter(f),
		progressbar.OptionSetDescription(label),
		progressbar.OptionShowCount(),
		progressbar.OptionShowIts(),
		progressbar.OptionSetItsString("replicates"),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionThrottle(100*time.Millisecond),
		progressbar.OptionSetWidth(30),
		progressbar.OptionClearOnFinish(),
	)}
}

// update is the harness's progress callback; it is safe for concurrent use
// and ignores reports that arrive out of order.
func (p *progress) update(done, total int64) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.bar.GetMax64() != total {
		p.bar.ChangeMax64(total)
	}
	if done > p.last {
		p.last = done
		p.bar.Set64(done)
	}
}

// finish removes the bar.
func (p *progress) finish() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.bar.Finish()
	p.bar.Clear()
}
