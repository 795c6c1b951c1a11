package harness

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math/big"
	"math/bits"
	"strings"
	"sync"

	"github.com/rhomark/rhomark/internal/exactsum"
	"github.com/rhomark/rhomark/scenarios"
)

// Partial is the finished work of a run: the exact tallies of every cell
// and the set of finished units. It is what a checkpoint holds, what a
// shard writes, and what merge combines. Because every sum is exact, merging
// partials in any order gives the summaries a single uninterrupted run would
// have given, bit for bit.
type Partial struct {
	// Tool is the program version that produced the work; partials from
	// different versions are not merged.
	Tool string `json:"tool"`
	// Build identifies the build of the program that did the work (see
	// BuildID). Builds of one version may compute different numbers, so
	// partials from different builds are neither resumed nor merged.
	Build string `json:"build"`
	// Scenario, File and Source are the scenario's name, file name and
	// full text, so the work can be summarised or resumed from the partial
	// alone; Hash is the scenario's hash.
	Scenario string `json:"scenario"`
	File     string `json:"file"`   // file name the scenario was loaded from (Study.File)
	Source   string `json:"source"` // full text of the scenario file
	Hash     string `json:"hash"`   // scenario hash (Study.Hash); a resumed run must match it
	// Dir is the absolute folder the scenario's external programs run in
	// (CommandDir), recorded when it has any, so that a run resumed from
	// another working directory runs them in the same place.
	Dir string `json:"dir,omitempty"`
	// Seed and Replicates are the run's.
	Seed       uint64 `json:"seed"`
	Replicates int    `json:"replicates"` // replicates per cell, after any override by Options
	// Shard and Shards identify a shard (Shards 0 when the run is not
	// sharded).
	Shard  int `json:"shard"`
	Shards int `json:"shards"` // number of shards; this one is Shard, counted from 0
	// Units is the total number of units of the run: blocks of
	// replicates of groups of cells that draw the same datasets.
	Units int `json:"units"`
	// UnitCells is the most cells a unit covers (the size the groups of
	// cells were cut to); a resumed run keeps it.
	UnitCells int `json:"unit_cells"`
	// AuditSolvers records that every estimator was audited (run
	// --audit-solvers); merged and resumed partials must agree on it.
	AuditSolvers bool `json:"audit_solvers,omitempty"`
	// Path is the file the partial was read from, if the caller sets it;
	// errors about the partial name it. It is not written.
	Path string `json:"-"`

	done  *big.Int     // the finished units, unit u at bit u
	cells []*cellTally // the tallies, once attached to the scenario's plans
	raw   []tallyJSON  // the tallies as read, until attached
}

// partialWire is the JSON form of a Partial: its exported fields, the
// finished units as a hexadecimal bitmap, and each cell's tallies.
type partialWire struct {
	Partial
	Done  string      `json:"done"`
	Cells []tallyJSON `json:"cells"`
}

// DoneUnits returns how many units are finished.
func (p *Partial) DoneUnits() int {
	n := 0
	for _, w := range p.done.Bits() {
		n += bits.OnesCount(uint(w))
	}
	return n
}

// Complete reports whether every unit is finished.
func (p *Partial) Complete() bool { return p.DoneUnits() == p.Units }

// isDone reports whether unit u is finished.
func (p *Partial) isDone(u int) bool { return p.done.Bit(u) == 1 }

// tallyJSON is the serialised form of a cellTally.
type tallyJSON struct {
	Replicates int64     `json:"replicates"`
	Ests       []estJSON `json:"estimators"`
}

type estJSON struct {
	Fits      int64      `json:"fits"`
	Statuses  []int64    `json:"statuses"`
	IterHist  []int64    `json:"iteration_histogram"`
	IterSum   int64      `json:"iteration_sum"`
	IterSum2  int64      `json:"iteration_sum2"`
	IterMax   int64      `json:"iteration_max"`
	Halvings  int64      `json:"halvings"`
	Fallbacks int64      `json:"fallbacks"`
	QRSolves  int64      `json:"qr_solves"`
	Nanos     int64      `json:"nanos"`
	Past      int64      `json:"past"`
	Coefs     []coefJSON `json:"coefficients"`
	Cross     []string   `json:"cross,omitempty"`
	Audit     *auditJSON `json:"audit,omitempty"`
}

type coefJSON struct {
	N       int64    `json:"n"`
	NP      int64    `json:"paired"`
	NInt    int64    `json:"intervals"`
	Covered int64    `json:"covered"`
	Sums    []string `json:"sums"` // s1 s2 s4 pa1 pb1 pa2 pb2 pab w1 w2
}

func encodeSum(s *exactsum.Sum) string {
	b, _ := s.MarshalText()
	return string(b)
}

// encode serialises a tally.
func (c *cellTally) encode() tallyJSON {
	out := tallyJSON{Replicates: c.replicates}
	for i := range c.ests {
		e := &c.ests[i]
		ej := estJSON{Fits: e.fits, Statuses: append([]int64(nil), e.statuses[:]...), IterHist: append([]int64(nil), e.iterHist...),
			IterSum: e.iterSum, IterSum2: e.iterSum2, IterMax: e.iterMax, Halvings: e.halvings, Fallbacks: e.fallbacks, QRSolves: e.qrSolves,
			Nanos: e.nanos, Past: e.past}
		for j := range e.coefs {
			t := &e.coefs[j]
			cj := coefJSON{N: t.n, NP: t.np, NInt: t.nInt, Covered: t.covered}
			for _, s := range t.sums() {
				cj.Sums = append(cj.Sums, encodeSum(s))
			}
			ej.Coefs = append(ej.Coefs, cj)
		}
		for k := range e.cross {
			ej.Cross = append(ej.Cross, encodeSum(&e.cross[k]))
		}
		ej.Audit = e.aud.encode()
		out.Ests = append(out.Ests, ej)
	}
	return out
}

// decode restores a tally serialised by encode into c, which must have the
// shape of the cell (estimators, coefficients, cross sums). labels, if not
// nil, are the cell's estimator labels, which the errors of a solver
// study's tally name beside the estimator's index.
func (c *cellTally) decode(j tallyJSON, labels []string) error {
	if len(j.Ests) != len(c.ests) {
		return fmt.Errorf("%d estimators, the scenario has %d", len(j.Ests), len(c.ests))
	}
	c.replicates = j.Replicates
	for i := range c.ests {
		e, ej := &c.ests[i], j.Ests[i]
		if len(ej.Coefs) != len(e.coefs) || len(ej.Cross) != len(e.cross) || len(ej.Statuses) != statusSlots {
			return errors.New("the shape of a tally does not match the scenario")
		}
		e.fits, e.iterSum, e.iterSum2, e.halvings, e.fallbacks, e.qrSolves, e.nanos, e.past =
			ej.Fits, ej.IterSum, ej.IterSum2, ej.Halvings, ej.Fallbacks, ej.QRSolves, ej.Nanos, ej.Past
		copy(e.statuses[:], ej.Statuses)
		if len(ej.IterHist) > iterHistCap+1 {
			return fmt.Errorf("an iteration histogram has %d bins; at most %d are written", len(ej.IterHist), iterHistCap+1)
		}
		e.iterHist = append([]int64(nil), ej.IterHist...)
		e.iterMax = ej.IterMax
		for k := range e.coefs {
			t, cj := &e.coefs[k], ej.Coefs[k]
			if len(cj.Sums) != len(t.sums()) {
				return errors.New("a coefficient tally has the wrong number of sums")
			}
			t.n, t.np, t.nInt, t.covered = cj.N, cj.NP, cj.NInt, cj.Covered
			for s, sum := range t.sums() {
				if err := sum.UnmarshalText([]byte(cj.Sums[s])); err != nil {
					return err
				}
			}
		}
		for k := range e.cross {
			if err := e.cross[k].UnmarshalText([]byte(ej.Cross[k])); err != nil {
				return err
			}
		}
		if err := e.aud.decode(ej.Audit); err != nil {
			if i < len(labels) {
				return fmt.Errorf("estimator %d (%s): %w", i, labels[i], err)
			}
			return fmt.Errorf("estimator %d: %w", i, err)
		}
	}
	return nil
}

// partialFile is the on-disk envelope of a Partial: the payload with its
// SHA-256, so truncation and corruption are detected.
type partialFile struct {
	Format  string          `json:"format"`
	SHA256  string          `json:"sha256"`
	Payload json.RawMessage `json:"payload"`
}

// partialFormat names the layout of the payload. Format 2 added the build
// identity and the higher moments behind the heavy-tail MCSEs; format 3
// made a unit a block of a group of cells that draw the same datasets
// (with UnitCells), drawn from streams keyed by the data settings; format
// 4 added the solver study (each audited fit's values, for exact medians).
// A partial of an earlier format cannot be resumed or merged by this build.
const partialFormat = "rhomark partial 4"

// WritePartial writes p with its checksum. p is not changed.
//
// The payload is streamed cell by cell, hashed as it goes, and the checksum
// written after it, so a partial of 10,000 cells is never held in memory as
// one piece. (A reader does not depend on the order of the envelope's keys;
// files with the checksum first are read the same way.)
func WritePartial(w io.Writer, p *Partial) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	if _, err := fmt.Fprintf(bw, `{"format":%q,"payload":`, partialFormat); err != nil {
		return err
	}
	h := sha256.New()
	payload := io.MultiWriter(bw, h)
	// The payload: the exported fields and the finished units, then the
	// cells one at a time.
	head, err := json.Marshal(struct {
		Partial
		Done string `json:"done"`
	}{Partial: *p, Done: p.done.Text(16)})
	if err != nil {
		return err
	}
	if _, err := payload.Write(head[:len(head)-1]); err != nil { // without the closing brace
		return err
	}
	n := len(p.raw)
	if p.cells != nil {
		n = len(p.cells)
	}
	if _, err := io.WriteString(payload, `,"cells":[`); err != nil {
		return err
	}
	for i := range n {
		var cell tallyJSON
		if p.cells != nil {
			cell = p.cells[i].encode()
		} else {
			cell = p.raw[i]
		}
		b, err := json.Marshal(cell)
		if err != nil {
			return err
		}
		if i > 0 {
			b = append([]byte{','}, b...)
		}
		if _, err := payload.Write(b); err != nil {
			return err
		}
	}
	if _, err := io.WriteString(payload, "]}"); err != nil {
		return err
	}
	if _, err := fmt.Fprintf(bw, ",\"sha256\":%q}\n", hex.EncodeToString(h.Sum(nil))); err != nil {
		return err
	}
	return bw.Flush()
}

// ReadPartial reads a partial written by WritePartial, verifying its
// checksum. The tallies are restored when the partial is attached to its
// scenario's plans (see attach).
func ReadPartial(r io.Reader) (*Partial, error) {
	data, err := io.ReadAll(io.LimitReader(r, 4<<30))
	if err != nil {
		return nil, err
	}
	var f partialFile
	if err := json.Unmarshal(data, &f); err != nil {
		return nil, fmt.Errorf("not a complete partial-results file (truncated or corrupted: %v)", firstLine(err.Error()))
	}
	if f.Format != partialFormat {
		return nil, fmt.Errorf("not a partial-results file of this version (format %q, this build reads %q): it was written by another rhomark; rerun the study, or resume it with the build that wrote it", f.Format, partialFormat)
	}
	sum := sha256.Sum256(f.Payload)
	if hex.EncodeToString(sum[:]) != f.SHA256 {
		return nil, errors.New("the partial-results file is corrupted: its checksum does not match its content")
	}
	var wire partialWire
	if err := json.Unmarshal(f.Payload, &wire); err != nil {
		return nil, fmt.Errorf("partial-results payload: %v", err)
	}
	p := wire.Partial
	done, ok := new(big.Int).SetString(wire.Done, 16)
	if !ok || done.Sign() < 0 || done.BitLen() > p.Units {
		return nil, errors.New("the partial-results file is corrupted: bad set of finished units")
	}
	p.done, p.raw = done, wire.Cells
	return &p, nil
}

func firstLine(s string) string {
	line, _, _ := strings.Cut(s, "\n")
	return line
}

// newPartial starts the state of a run: empty tallies, or those of the
// checkpoint being resumed (which must be of the same scenario, seed and
// replicates).
func newPartial(st *scenarios.Study, plans []cellPlan, total, size int, seed uint64, reps int, opt Options) (*Partial, error) {
	build := opt.buildID()
	p := &Partial{Tool: opt.Tool.Version, Build: build, Scenario: st.Base.Name, File: st.File, Source: string(st.Source), Hash: st.Hash,
		Seed: seed, Replicates: reps, Shard: opt.Shard, Shards: opt.Shards, Units: total, UnitCells: size, done: new(big.Int),
		AuditSolvers: opt.auditAll()}
	if st.HasCommand() {
		p.Dir = CommandDir(st)
	}
	for _, pl := range plans {
		p.cells = append(p.cells, pl.newTally())
	}
	r := opt.Resume
	if r == nil {
		return p, nil
	}
	switch {
	case r.Hash != st.Hash:
		return nil, fmt.Errorf("the checkpoint is of another scenario (hash %.12s…, this one %.12s…)", r.Hash, st.Hash)
	case r.Seed != seed || r.Replicates != reps:
		return nil, fmt.Errorf("the checkpoint is of seed %d with %d replicates, this run seed %d with %d", r.Seed, r.Replicates, seed, reps)
	case r.Tool != opt.Tool.Version:
		return nil, fmt.Errorf("the checkpoint was written by rhomark %s, this is %s; resume with the same version", r.Tool, opt.Tool.Version)
	case r.Build != build:
		return nil, fmt.Errorf("the checkpoint was written by build %s, this is build %s: builds may compute different numbers, so resume with the build that started the run, or start afresh", orUnknown(r.Build), build)
	case r.Units != total:
		return nil, errors.New("the checkpoint's units do not match the scenario")
	case opt.AuditSolvers && !r.AuditSolvers:
		return nil, errors.New("the checkpoint was run without --audit-solvers, so its finished fits were not audited: resume without it, or start afresh")
	case r.Shards != opt.Shards || r.Shard != opt.Shard:
		return nil, fmt.Errorf("the checkpoint is of shard %d/%d, this run of %d/%d", r.Shard, r.Shards, opt.Shard, opt.Shards)
	}
	if err := attach(r, plans); err != nil {
		return nil, fmt.Errorf("checkpoint: %w", err)
	}
	for i := range p.cells {
		p.cells[i].merge(r.cells[i])
	}
	p.done.Set(r.done)
	return p, nil
}

// orUnknown names a missing build identity (a partial written before
// builds were recorded).
func orUnknown(b string) string {
	if b == "" {
		return "(none recorded)"
	}
	return b
}

// snapshot returns a copy of the state, safe to write while the run goes
// on, holding each cell's tallies in their encoded form (as a partial read
// from a file does): a copy of the live tallies would be about twice as
// large (some 300 MB at 10,000 cells). mu guards p; it is taken group by
// group, so the workers wait only for the encoding of one group's cells
// (at most unitCells). The tallies of a group's cells and its finished
// units are copied under one hold of mu, and a unit adds to the cells of
// one group only, so the copy is consistent.
func (p *Partial) snapshot(mu *sync.Mutex, groups []groupPlan) *Partial {
	c := *p
	c.cells = nil
	c.raw = make([]tallyJSON, len(p.cells))
	c.done = new(big.Int)
	for _, g := range groups {
		mu.Lock()
		for _, cell := range g.cells {
			c.raw[cell] = p.cells[cell].encode()
		}
		for u := g.firstUnit; u < g.firstUnit+g.blocks; u++ {
			if p.done.Bit(u) == 1 {
				c.done.SetBit(c.done, u, 1)
			}
		}
		mu.Unlock()
	}
	return &c
}
