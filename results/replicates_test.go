package results

import (
	"bytes"
	"errors"
	"io"
	"math"
	"strings"
	"testing"
)

func sampleReplicates(t *testing.T) []byte {
	t.Helper()
	var buf bytes.Buffer
	h := ReplicateHeader{Scenario: "s", Hash: "h", Seed: 1, Replicates: 3, Statuses: []string{"not-run", "solved", "converged-change"},
		Cells: []ReplicateLayout{{Estimators: []string{"a", "b"}, Coefficients: []string{"intercept", "x"}}}}
	w, err := NewReplicateWriter(&buf, h)
	if err != nil {
		t.Fatal(err)
	}
	block := EncodeBlock(nil, 0, 0, 2, []uint8{1, 2, 1, 2}, []int{0, 7, 0, 9},
		[]float64{1, 2, 1.5, 2.5, math.Inf(1), math.Copysign(0, -1), 3, 4}, 2)
	w.WriteBlock(block)
	w.WriteBlock(EncodeBlock(nil, 0, 2, 1, []uint8{1, 2}, []int{0, 1}, []float64{5, 6, 7, 8}, 2))
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestReplicateRoundTrip(t *testing.T) {
	r, err := NewReplicateReader(bytes.NewReader(sampleReplicates(t)))
	if err != nil {
		t.Fatal(err)
	}
	var got []ReplicateRecord
	for {
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, rec)
	}
	if len(got) != 6 {
		t.Fatalf("%d records, want 6", len(got))
	}
	if g := got[1]; g.Replicate != 0 || g.Estimator != 1 || g.Status != "converged-change" || g.Iterations != 7 || g.Coefficients[1] != 2.5 {
		t.Errorf("record 1: %+v", g)
	}
	if g := got[2]; g.Replicate != 1 || !math.IsInf(g.Coefficients[0], 1) || !math.Signbit(g.Coefficients[1]) {
		t.Errorf("record 2 lost bits: %+v", g)
	}
	if g := got[5]; g.Replicate != 2 || g.Coefficients[1] != 8 {
		t.Errorf("record 5: %+v", g)
	}
}

// TestReplicateCorruption: a truncated or damaged file is detected, never
// read as if complete.
func TestReplicateCorruption(t *testing.T) {
	good := sampleReplicates(t)
	cases := map[string][]byte{
		"truncated": good[:len(good)-9],
		"flipped":   append(append([]byte(nil), good[:len(good)-12]...), append([]byte{good[len(good)-12] ^ 0xff}, good[len(good)-11:]...)...),
		"not gzip":  []byte("rhomark replicates 1\n{}\n"),
		"empty":     nil,
	}
	for name, data := range cases {
		r, err := NewReplicateReader(bytes.NewReader(data))
		if err != nil {
			continue // detected at the header
		}
		for {
			_, err = r.Next()
			if err != nil {
				break
			}
		}
		if errors.Is(err, io.EOF) {
			t.Errorf("%s: read to the end without noticing", name)
		} else if !strings.Contains(err.Error(), "corrupt") && !strings.Contains(err.Error(), "truncated") {
			t.Errorf("%s: unclear error %v", name, err)
		}
	}
}

// TestPairedReportsDamage: paired comparison reports a damaged replicate
// file on either side, even when the damage shows only after the other
// file has ended.
func TestPairedReportsDamage(t *testing.T) {
	good := sampleReplicates(t)
	damaged := good[:len(good)-9]
	src := func(b []byte) ReplicateSource {
		return func() (io.ReadCloser, error) { return io.NopCloser(bytes.NewReader(b)), nil }
	}
	if _, err := comparePaired(src(good), src(good), pairedSetup{tol: 1e-9}); err != nil {
		t.Fatalf("intact files: %v", err)
	}
	for _, c := range []struct {
		name       string
		base, cand []byte
		want       string
	}{
		{"candidate damaged", good, damaged, "candidate replicates"},
		{"baseline damaged", damaged, good, "baseline replicates"},
	} {
		if _, err := comparePaired(src(c.base), src(c.cand), pairedSetup{tol: 1e-9}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one naming the %s", c.name, err, c.want)
		}
	}
}

func TestHolm(t *testing.T) {
	// Holm (1979), Scand. J. Statist. 6:65-70: p-values sorted ascending
	// are rejected while p_(k) ≤ α/(m − k).
	zs := []float64{5, 4.2, 3.9, 0.5}
	d := make([]Difference, len(zs))
	for i, z := range zs {
		d[i].Z = Float(z)
	}
	alpha := math.Erfc(4 / math.Sqrt2)
	holm(d, alpha)
	// m = 4: 5σ (p 5.7e-7 ≤ α/4 = 1.6e-5) flagged; 4.2σ (p 2.7e-5 > α/3
	// = 2.1e-5) stops the procedure.
	want := []bool{true, false, false, false}
	for i := range d {
		if d[i].Flagged != want[i] {
			t.Errorf("z = %v: flagged %v, want %v", zs[i], d[i].Flagged, want[i])
		}
	}
	// An undefined z is neither flagged nor counted: with the NaN out,
	// m = 3 and 4.2σ (p 2.7e-5 ≤ α/2 = 3.2e-5) is flagged; counting the
	// NaN would make m = 4 and stop at 4.2σ as above.
	zs = []float64{math.NaN(), 5, 4.2, 0.5}
	d = make([]Difference, len(zs))
	for i, z := range zs {
		d[i].Z = Float(z)
	}
	holm(d, alpha)
	want = []bool{false, true, true, false}
	for i := range d {
		if d[i].Flagged != want[i] {
			t.Errorf("with a NaN: z = %v: flagged %v, want %v", zs[i], d[i].Flagged, want[i])
		}
	}
}
