package results

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestFormatMeasure(t *testing.T) {
	cases := []struct {
		v, e   float64
		signed bool
		wantV  string
		wantE  string
	}{
		{0.142022, 0.002966, true, "+0.142", "0.003"},
		{0.142022, 0.0012, false, "0.1420", "0.0012"},
		{17.198146, 0.0205, true, "+17.20", "0.02"},
		{17.198146, 0.0156, true, "+17.198", "0.016"},
		{-0.5636290, 0.000572, true, "-0.5636", "0.0006"},
		{47.916, 4.09, false, "48", "4"},
		{1234.5, 160, false, "1230", "160"},
		{0.00001, 0.0018, true, "0.0000", "0.0018"},
		{-0.00001, 0.0018, true, "0.0000", "0.0018"},
		{1, 0, false, "1", "0"},
		{math.NaN(), 1, false, "—", ""},
	}
	for _, c := range cases {
		v, e := FormatMeasure(Measure{Value: Num(c.v), MCSE: Num(c.e)}, c.signed)
		if v != c.wantV || e != c.wantE {
			t.Errorf("FormatMeasure(%v ± %v) = %q ± %q, want %q ± %q", c.v, c.e, v, e, c.wantV, c.wantE)
		}
	}
}

func TestWilson(t *testing.T) {
	// Newcombe (1998), "Two-sided confidence intervals for the single
	// proportion: comparison of seven methods", Statistics in Medicine
	// 17:857-872, Table II, Wilson score method (values from memory):
	// 81/263 → 0.2553–0.3662, 15/148 → 0.0624–0.1605, 0/20 → 0–0.1611.
	cases := []struct {
		k, n      int64
		low, high float64
	}{
		{81, 263, 0.2553, 0.3662},
		{15, 148, 0.0624, 0.1605},
		{0, 20, 0, 0.1611},
	}
	for _, c := range cases {
		r := Wilson(c.k, c.n)
		if math.Abs(float64(r.Low)-c.low) > 5e-5 || math.Abs(float64(r.High)-c.high) > 5e-5 {
			t.Errorf("Wilson(%d/%d) = [%.4f, %.4f], published [%.4f, %.4f]", c.k, c.n, float64(r.Low), float64(r.High), c.low, c.high)
		}
	}
	if r := Wilson(0, 0); !math.IsNaN(float64(r.Value)) {
		t.Error("Wilson(0/0) should be undefined")
	}
}

func TestProportion(t *testing.T) {
	// Inside (0, 1): the binomial MCSE √(p(1−p)/n) (Morris, White &
	// Crowther (2019), Stat. Med. 38:2074-2102, Table 6).
	if m := Proportion(30, 200); math.Abs(float64(m.MCSE)-math.Sqrt(0.15*0.85/200)) > 1e-15 || m.Value != 0.15 {
		t.Errorf("30/200: %+v", m)
	}
	// At the edges: half the Wilson interval over 1.96, never 0. From
	// Newcombe (1998) above, 0/20 → [0, 0.1611], so MCSE ≈ 0.1611/3.92.
	for _, k := range []int64{0, 20} {
		m := Proportion(k, 20)
		if math.Abs(float64(m.MCSE)-0.1611/3.92) > 5e-5 {
			t.Errorf("%d/20: MCSE %v, want %.5f", k, m.MCSE, 0.1611/3.92)
		}
	}
	if m := Proportion(0, 0); !math.IsNaN(float64(m.Value)) || !math.IsNaN(float64(m.MCSE)) {
		t.Errorf("0/0: %+v", m)
	}
}

// TestMomentsFormulas checks the MCSE formulas against their definitions
// computed directly from a sample (Morris, White & Crowther (2019), Stat.
// Med. 38:2074-2102, Table 6).
func TestMomentsFormulas(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	n := 500
	e := make([]float64, n)
	ref := make([]float64, n)
	var sum, sumSq float64
	for i := range e {
		z := rng.NormFloat64()
		ref[i] = z
		e[i] = 0.3 + 0.9*z + 0.2*rng.NormFloat64()
		sum += e[i]
		sumSq += e[i] * e[i]
	}
	mean := sum / float64(n)
	var ss, ssmse float64
	mse := sumSq / float64(n)
	for _, v := range e {
		ss += (v - mean) * (v - mean)
		ssmse += (v*v - mse) * (v*v - mse)
	}
	m := Moments{N: int64(n), Mean: mean, SS: ss, MSE: mse, SSMSE: ssmse}
	nf := float64(n)
	if got, want := float64(m.Bias().MCSE), math.Sqrt(ss/(nf-1))/math.Sqrt(nf); math.Abs(got-want) > 1e-12 {
		t.Errorf("bias MCSE %v, want EmpSE/√N = %v", got, want)
	}
	emp := math.Sqrt(ss / (nf - 1))
	if got := float64(m.EmpSE().Value); math.Abs(got-emp) > 1e-12 {
		t.Errorf("EmpSE %v, want %v", got, emp)
	}
	// Relative efficiency of e against ref.
	var refMean float64
	for _, v := range ref {
		refMean += v
	}
	refMean /= nf
	var ssb, sab float64
	for i := range e {
		ssb += (ref[i] - refMean) * (ref[i] - refMean)
		sab += (e[i] - mean) * (ref[i] - refMean)
	}
	re := Paired{N: int64(n), SSA: ss, SSB: ssb, SAB: sab}.RelativeEfficiency()
	if got, want := float64(re.Value), ssb/ss; math.Abs(got-want) > 1e-12 {
		t.Errorf("relative efficiency %v, want %v", got, want)
	}
	rho := sab / math.Sqrt(ss*ssb)
	if got, want := float64(re.MCSE), 2*(ssb/ss)*math.Sqrt((1-rho*rho)/(nf-1)); math.Abs(got-want) > 1e-12 {
		t.Errorf("relative efficiency MCSE %v, want %v", got, want)
	}
}

func TestNumJSON(t *testing.T) {
	r := &Results{Schema: SchemaVersion, Cells: []Cell{{Estimators: []Estimator{{Coefficients: []Coefficient{{
		Bias: Measure{Value: Num(math.NaN()), MCSE: Num(math.Inf(1))},
	}}}}}}}
	var b bytes.Buffer
	if err := WriteJSON(&b, r); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), `"value": null`) {
		t.Errorf("NaN not written as null")
	}
	back, err := ReadJSON(&b)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(float64(back.Cells[0].Estimators[0].Coefficients[0].Bias.Value)) {
		t.Error("null not read back as NaN")
	}
	if _, err := ReadJSON(strings.NewReader(`{"schema": 99}`)); err == nil {
		t.Error("other schema version accepted")
	}
}

func TestSafeName(t *testing.T) {
	for _, bad := range []string{"", "../x", "a/b", `a\b`, ".hidden", "..", "c:x"} {
		if _, err := SafeName(bad); err == nil {
			t.Errorf("SafeName(%q) accepted", bad)
		}
	}
	if _, err := SafeName("flow-meter.v2"); err != nil {
		t.Error(err)
	}
}

func TestWriteFileAtomicKeepsOldOnFailure(t *testing.T) {
	dir := t.TempDir()
	path := dir + "/r.json"
	if err := WriteFileAtomic(path, []byte("old")); err != nil {
		t.Fatal(err)
	}
	// A commit that fails at its last step (the rename, here onto a
	// non-empty directory) reports a WriteError naming its target, removes
	// its temporary file and touches no other file. (A write failing for
	// lack of space, with the old file kept, is tested on the command in
	// cmd/rhomark's TestWriteFailureKeepsOldResults.)
	tmp, err := CreateTemp(path)
	if err != nil {
		t.Fatal(err)
	}
	tmp.Write([]byte("new"))
	blocker := dir + "/blocker"
	os.MkdirAll(blocker+"/inside", 0o755)
	var we *WriteError
	if err := CommitTemp(tmp, blocker); !errors.As(err, &we) || we.Path != blocker {
		t.Errorf("commit onto a directory: %v, want a WriteError naming %s", err, blocker)
	}
	if got, _ := os.ReadFile(path); string(got) != "old" {
		t.Errorf("old content %q changed", got)
	}
	if tmps, _ := filepath.Glob(dir + "/.*tmp-*"); len(tmps) != 0 {
		t.Errorf("temporary files left: %v", tmps)
	}
	// Writing into a directory that does not exist fails cleanly.
	if err := WriteFileAtomic(dir+"/missing/r.json", []byte("new")); !errors.As(err, &we) {
		t.Errorf("write into a missing directory: %v, want a WriteError", err)
	}
	if err := WriteFileAtomic(path, []byte("new")); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(path); string(got) != "new" {
		t.Errorf("content %q after a successful write", got)
	}
}
