package main

import (
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestUnpack: unpack prints one row per replicate × estimator ×
// coefficient under the documented header, with estimates that read back
// bit for bit to those replay recomputes for the same replicate; a damaged
// file exits 2 naming the file.
func TestUnpack(t *testing.T) {
	dir := t.TempDir()
	const reps = 40
	if code, _, errs := rhomark(t, "run", "bad-leverage", "--replicates", strconv.Itoa(reps), "--keep-replicates", "--out", dir, "--quiet"); code != exitOK {
		t.Fatal(errs)
	}
	path := filepath.Join(dir, "bad-leverage.replicates")
	code, out, errs := rhomark(t, "unpack", path)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	rows, err := csv.NewReader(strings.NewReader(out)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(rows[0], ","); got != "cell,replicate,estimator,coefficient,estimate,status,iterations" {
		t.Fatalf("header %q", got)
	}
	code, jsonOut, errs := rhomark(t, "run", "bad-leverage", "--replicates", "1", "--json", "--quiet")
	if code != exitOK {
		t.Fatal(errs)
	}
	var res struct {
		Cells []struct {
			Estimators []struct {
				Coefficients []json.RawMessage `json:"coefficients"`
			} `json:"estimators"`
		} `json:"cells"`
	}
	if err := json.Unmarshal([]byte(jsonOut), &res); err != nil {
		t.Fatal(err)
	}
	want := 0
	for _, c := range res.Cells {
		for _, e := range c.Estimators {
			want += reps * len(e.Coefficients)
		}
	}
	if len(rows)-1 != want {
		t.Errorf("%d rows, want %d (replicates × estimators × coefficients)", len(rows)-1, want)
	}
	// Replicate 17 of cell 1, refitted by replay.
	code, replayOut, errs := rhomark(t, "replay", "bad-leverage", "--cell", "1", "--replicate", "17", "--json", "--data-out", filepath.Join(dir, "d.csv"))
	if code != exitOK {
		t.Fatal(errs)
	}
	var rp struct{ Fits []replayFit }
	if err := json.Unmarshal([]byte(replayOut), &rp); err != nil {
		t.Fatal(err)
	}
	got := map[string][]string{} // estimator → estimates, in coefficient order
	status := map[string]string{}
	for _, r := range rows[1:] {
		if r[0] == "1" && r[1] == "17" {
			got[r[2]] = append(got[r[2]], r[4])
			status[r[2]] = r[5] + " " + r[6]
		}
	}
	for _, f := range rp.Fits {
		if len(got[f.Estimator]) != len(f.Coefficients) {
			t.Fatalf("%s: unpack gave %v, replay %v", f.Estimator, got[f.Estimator], f.Coefficients)
		}
		for j, s := range got[f.Estimator] {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || v != f.Coefficients[j] {
				t.Errorf("%s coefficient %d: unpack %q, replay %v", f.Estimator, j, s, f.Coefficients[j])
			}
		}
		if want := f.Status + " " + strconv.Itoa(f.Iterations); status[f.Estimator] != want {
			t.Errorf("%s: unpack status %q, replay %q", f.Estimator, status[f.Estimator], want)
		}
	}

	// Damage: a cut file, and a flipped byte in the compressed stream.
	data, _ := os.ReadFile(path)
	flipped := append([]byte(nil), data...)
	flipped[len(flipped)/2] ^= 0xff
	for name, bad := range map[string][]byte{"cut": data[:len(data)*3/4], "flipped": flipped} {
		p := filepath.Join(dir, name+".replicates")
		os.WriteFile(p, bad, 0o644)
		code, out, errs := rhomark(t, "unpack", p)
		if code != exitUsage || !strings.Contains(errs, p) || !strings.Contains(errs, "corrupt") {
			t.Errorf("%s file: exit %d, %q; want exit 2 naming the file", name, code, errs)
		}
		if !strings.HasPrefix(out, "cell,replicate,") {
			t.Errorf("%s file: the output lost its header", name)
		}
	}
	if code, _, _ := rhomark(t, "unpack", filepath.Join(dir, "bad-leverage.json")); code != exitUsage {
		t.Errorf("a results file given to unpack: exit %d, want 2", code)
	}
}

// TestCompareDamagedReplicates: a damaged replicate file is bad input
// (exit 2) naming the file, not a flagged regression (exit 1).
func TestCompareDamagedReplicates(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for _, d := range []string{a, b} {
		if code, _, errs := rhomark(t, "run", "vertical-outliers", "--replicates", "32", "--keep-replicates", "--out", d, "--quiet"); code != exitOK {
			t.Fatal(errs)
		}
	}
	rep := filepath.Join(b, "vertical-outliers.replicates")
	data, _ := os.ReadFile(rep)
	os.WriteFile(rep, data[:len(data)/2], 0o644)
	code, _, errs := rhomark(t, "compare", a, b)
	if code != exitUsage || !strings.Contains(errs, rep) || !strings.Contains(errs, "truncated or corrupted") {
		t.Errorf("damaged replicate file: exit %d %q; want exit 2 naming it", code, errs)
	}
}
