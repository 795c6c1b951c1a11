package main

import (
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"github.com/rhomark/rhomark/harness"
)

// progress draws a progress bar of replicates on stderr while a run goes
// on: the cells the run is working on, replicates done, rate and time
// left. It draws only when stderr is a terminal and the user did not ask
// for quiet, so logs, pipes and machine-readable output on stdout never
// see it.
type progress struct {
	mu    sync.Mutex
	bar   *progressbar.ProgressBar
	last  int64
	shown time.Time // when the bar was last drawn
	label string
	cells int    // the run's number of cells
	where string // the cells the description shows
}

// redrawEvery is the shortest time between two drawings of the bar while
// the cells it names stay the same; a change of cells is drawn at once, so
// even a cell that takes a few milliseconds is named on the terminal.
const redrawEvery = 100 * time.Millisecond

// describe returns the bar's description for the cells of the unit last
// finished: "cell 3" or, for cells that share their datasets (and so one
// unit of work), "cells 1, 3, 5" (at most three named).
func (p *progress) describe(cells []int) string {
	if len(cells) == 0 || p.cells < 2 {
		return p.label
	}
	var b strings.Builder
	if len(cells) == 1 {
		fmt.Fprintf(&b, "cell %d", cells[0])
	} else {
		b.WriteString("cells ")
		for i, c := range cells[:min(3, len(cells))] {
			if i > 0 {
				b.WriteString(", ")
			}
			b.WriteString(strconv.Itoa(c))
		}
		if len(cells) > 3 {
			b.WriteString(", …")
		}
	}
	return fmt.Sprintf("%s · %s (cells 0–%d)", p.label, b.String(), p.cells-1)
}

// newProgress returns a progress bar for a run of cells cells, or nil when
// none should be drawn.
func newProgress(stderr io.Writer, quiet bool, label string, cells int) *progress {
	f, ok := stderr.(*os.File)
	if quiet || !ok || !term.IsTerminal(int(f.Fd())) {
		return nil
	}
	p := &progress{label: label, cells: cells}
	p.bar = progressbar.NewOptions64(-1,
		progressbar.OptionSetWriter(f),
		progressbar.OptionSetDescription(p.describe(nil)),
		progressbar.OptionShowCount(),
		progressbar.OptionShowIts(),
		progressbar.OptionSetItsString("replicates"),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionThrottle(0), // update throttles, see redrawEvery
		progressbar.OptionSetWidth(30),
		progressbar.OptionClearOnFinish(),
	)
	return p
}

// update is the harness's progress callback; it is safe for concurrent use
// and ignores reports that arrive out of order.
func (p *progress) update(r harness.ProgressReport) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.bar.GetMax64() != r.Total {
		p.bar.ChangeMax64(r.Total)
	}
	if r.Done <= p.last {
		return
	}
	p.last = r.Done
	d := p.describe(r.Cells)
	now := time.Now()
	if d == p.where && r.Done < r.Total && now.Sub(p.shown) < redrawEvery {
		return
	}
	p.shown = now
	if d != p.where {
		p.where = d
		p.bar.Describe(d)
	}
	p.bar.Set64(r.Done)
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
