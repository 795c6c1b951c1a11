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

// progress draws a progress bar of replicates on stderr while a run goes
// on: the cell the run has reached, replicates done, rate and time left.
// It draws only when stderr is a terminal and the user did not ask for
// quiet, so logs, pipes and machine-readable output on stdout never see it.
type progress struct {
	mu    sync.Mutex
	bar   *progressbar.ProgressBar
	last  int64
	label string
	order cellOrder
	cell  int // the cell the description shows, -1 before the first
}

// unitReplicates is the size of the harness's unit of work: a block of this
// many consecutive replicates of one cell (DEVELOPERS.md, "A run"). The
// units of a run are taken in cell order, so the count of finished
// replicates tells which cell the run has reached.
const unitReplicates = 32

// cellOrder maps the replicates a run has finished to the cell it has
// reached: ends[c] is the number of the run's replicates in cells 0 to c.
type cellOrder struct {
	ends []int64
}

// newCellOrder returns the order of a run of cells cells with reps
// replicates each, or of shard shard of shards when shards > 0 (a shard
// takes the units u with u mod shards = shard, units numbered over the
// whole run in cell order).
func newCellOrder(cells, reps, shard, shards int) cellOrder {
	blocks := (reps + unitReplicates - 1) / unitReplicates
	var o cellOrder
	var sum int64
	for c := range cells {
		for b := range blocks {
			u := c*blocks + b
			if shards > 0 && u%shards != shard {
				continue
			}
			sum += int64(min((b+1)*unitReplicates, reps) - b*unitReplicates)
		}
		o.ends = append(o.ends, sum)
	}
	return o
}

// cellAt returns the cell the run has reached when done replicates are
// finished: the cell of the next replicate to finish (the last cell once
// all are), or -1 when the order is unknown.
func (o cellOrder) cellAt(done int64) int {
	if len(o.ends) == 0 {
		return -1
	}
	for c, end := range o.ends {
		if done < end {
			return c
		}
	}
	return len(o.ends) - 1
}

// describe returns the bar's description at cell c.
func (p *progress) describe(c int) string {
	if c < 0 {
		return p.label
	}
	return fmt.Sprintf("%s · cell %d (cells 0–%d)", p.label, c, len(p.order.ends)-1)
}

// newProgress returns a progress bar for a run, or nil when none should be
// drawn. order places the run's replicates in its cells; an empty order
// (a resumed run, whose remaining work is not known here) shows no cell.
func newProgress(stderr io.Writer, quiet bool, label string, order cellOrder) *progress {
	f, ok := stderr.(*os.File)
	if quiet || !ok || !term.IsTerminal(int(f.Fd())) {
		return nil
	}
	p := &progress{label: label, order: order, cell: order.cellAt(0)}
	p.bar = progressbar.NewOptions64(-1,
		progressbar.OptionSetWriter(f),
		progressbar.OptionSetDescription(p.describe(p.cell)),
		progressbar.OptionShowCount(),
		progressbar.OptionShowIts(),
		progressbar.OptionSetItsString("replicates"),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionThrottle(100*time.Millisecond),
		progressbar.OptionSetWidth(30),
		progressbar.OptionClearOnFinish(),
	)
	return p
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
		if c := p.order.cellAt(done); c != p.cell {
			p.cell = c
			p.bar.Describe(p.describe(c))
		}
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
