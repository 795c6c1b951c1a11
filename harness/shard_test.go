package harness

import (
	"bytes"
	"context"
	"encoding/json"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/scenarios"
)

func scenariosLimits() scenarios.Limits { return scenarios.Limits{} }

// TestShardsMergeToSingleRun: for M = 1, 3 and 7 shards, each written and
// read back through its file, the merge gives CSV identical to one
// single-machine run, and JSON identical apart from provenance.
func TestShardsMergeToSingleRun(t *testing.T) {
	st := parse(t, flowMeterLike)
	single, err := Run(context.Background(), st, Options{Replicates: 100})
	if err != nil {
		t.Fatal(err)
	}
	wantCSV := csvOf(t, single)
	single.Provenance = single.Provenance.WithoutRunDetails()
	wantJSON, _ := json.Marshal(single)
	for _, m := range []int{1, 3, 7} {
		var parts []*Partial
		for s := m - 1; s >= 0; s-- { // out of order on purpose
			_, p, err := RunPartial(context.Background(), st, Options{Replicates: 100, Shard: s, Shards: m, Workers: 1 + s%2})
			if err != nil {
				t.Fatal(err)
			}
			parts = append(parts, roundTripPartial(t, p))
		}
		merged, mst, err := MergePartials(parts, scenariosLimits())
		if err != nil {
			t.Fatal(err)
		}
		res, err := Summarise(mst, merged, single.Tool)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(csvOf(t, res), wantCSV) {
			t.Errorf("M = %d: merged CSV differs from the single run", m)
		}
		res.Provenance = res.Provenance.WithoutRunDetails()
		got, _ := json.Marshal(res)
		if !bytes.Equal(got, wantJSON) {
			t.Errorf("M = %d: merged JSON differs from the single run (apart from provenance)", m)
		}
	}
}

func TestMergeRefusals(t *testing.T) {
	st := parse(t, flowMeterLike)
	shard := func(s, m int, reps int) *Partial {
		_, p, err := RunPartial(context.Background(), st, Options{Replicates: reps, Shard: s, Shards: m})
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		WritePartial(&buf, p)
		back, err := ReadPartial(&buf)
		if err != nil {
			t.Fatal(err)
		}
		return back
	}
	a0, a1, a2 := shard(0, 3, 40), shard(1, 3, 40), shard(2, 3, 40)
	cases := []struct {
		parts []*Partial
		want  string
	}{
		{[]*Partial{a0, a2}, "missing shards 1"},
		{[]*Partial{a0, a1, a1, a2}, "duplicated shards 1 (2 times: partial 2, partial 3)"},
		{[]*Partial{a0, a1, shard(2, 3, 41)}, "replicates 41 vs 40"},
	}
	other := parse(t, strings.Replace(flowMeterLike, "scale: 0.15", "scale: 0.2", 1))
	_, op, _ := RunPartial(context.Background(), other, Options{Replicates: 40, Shard: 2, Shards: 3})
	cases = append(cases, struct {
		parts []*Partial
		want  string
	}{[]*Partial{a0, a1, op}, "scenario"})
	for _, c := range cases {
		_, _, err := MergePartials(c.parts, scenariosLimits())
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("want an error containing %q, got %v", c.want, err)
		}
	}
	// Corruption is detected by the checksum.
	var buf bytes.Buffer
	WritePartial(&buf, a0)
	data := buf.Bytes()
	bad := bytes.Replace(data, []byte(`"replicates":`), []byte(`"replicatez":`), 1)
	if _, err := ReadPartial(bytes.NewReader(bad)); err == nil || !strings.Contains(err.Error(), "checksum") {
		t.Errorf("corrupted partial: %v", err)
	}
	if _, err := ReadPartial(bytes.NewReader(data[:len(data)/2])); err == nil || !strings.Contains(err.Error(), "truncated") {
		t.Errorf("truncated partial: %v", err)
	}
}

// TestResumeGivesSameResults: a run stopped part-way and resumed from its
// last checkpoint gives the same results as an uninterrupted one.
func TestResumeGivesSameResults(t *testing.T) {
	st := parse(t, flowMeterLike)
	full, err := Run(context.Background(), st, Options{Replicates: 200})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var last *Partial
	_, _, err = RunPartial(ctx, st, Options{Replicates: 200, Workers: 2,
		Progress: func(r ProgressReport) {
			if r.Done > 60 {
				cancel()
			}
		},
		Checkpoint: func(p *Partial) error { last = p; return nil }})
	if err == nil || last == nil || last.Complete() {
		t.Fatalf("the run was not interrupted: %v", err)
	}
	var buf bytes.Buffer
	WritePartial(&buf, last)
	written := buf.String()
	back, err := ReadPartial(&buf)
	if err != nil {
		t.Fatal(err)
	}
	// Resuming works from the partial read back and from the one the
	// checkpoint callback was handed, and writing it changed nothing.
	for name, from := range map[string]*Partial{"read back": back, "in memory": last} {
		res, err := Run(context.Background(), st, Options{Replicates: 200, Resume: from})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !res.Complete || !bytes.Equal(csvOf(t, res), csvOf(t, full)) {
			t.Errorf("%s: the resumed run differs from the uninterrupted one", name)
		}
	}
	var again bytes.Buffer
	WritePartial(&again, last)
	if again.String() != written {
		t.Error("writing a partial twice gave different bytes")
	}
}

// roundTripPartial writes p as a partial file and reads it back, as a
// shard's or a checkpoint's partial is.
func roundTripPartial(t *testing.T, p *Partial) *Partial {
	t.Helper()
	var buf bytes.Buffer
	if err := WritePartial(&buf, p); err != nil {
		t.Fatal(err)
	}
	back, err := ReadPartial(&buf)
	if err != nil {
		t.Fatal(err)
	}
	return back
}
