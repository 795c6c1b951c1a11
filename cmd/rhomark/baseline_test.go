package main

import (
	"flag"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// updateBaselines rewrites the committed baselines instead of checking
// them: go test ./cmd/rhomark -run TestBaselines -update-baselines
var updateBaselines = flag.Bool("update-baselines", false, "rewrite testdata/baselines from the current code")

// baselineReplicates is the replicate count of the committed baselines:
// small, since paired mode detects changes of any size.
const baselineReplicates = 16

// baselineDir is where the committed baselines live.
const baselineDir = "../../testdata/baselines"

// TestBaselines runs every shipped scenario at the baseline's replicate
// count and seed, keeping replicates, and compares the run with the
// committed baseline in paired mode: any estimate that moves by more than
// 1e-9, or any fit whose status changes, fails the test with the report.
func TestBaselines(t *testing.T) {
	lib, err := scenarios.Library()
	if err != nil {
		t.Fatal(err)
	}
	if *updateBaselines {
		for _, en := range lib {
			os.Remove(filepath.Join(baselineDir, en.Name+".json"))
			os.Remove(filepath.Join(baselineDir, en.Name+".replicates"))
			if code, _, errs := rhomark(t, "run", en.Name, "--replicates", strconv.Itoa(baselineReplicates), "--keep-replicates", "--out", baselineDir); code != exitOK {
				t.Fatalf("%s: %s", en.Name, errs)
			}
			for _, ext := range []string{".csv", ".txt", "-bias.csv", "-tolerances.csv"} {
				os.Remove(filepath.Join(baselineDir, en.Name+ext))
			}
		}
		t.Log("baselines rewritten; review the diff before committing it")
		return
	}
	for _, en := range lib {
		t.Run(en.Name, func(t *testing.T) {
			base := filepath.Join(baselineDir, en.Name+".json")
			f, err := os.Open(base)
			if err != nil {
				t.Fatalf("no baseline for shipped scenario %s (refresh with -update-baselines): %v", en.Name, err)
			}
			res, err := results.ReadJSON(f)
			f.Close()
			if err != nil {
				t.Fatal(err)
			}
			out := t.TempDir()
			code, _, errs := rhomark(t, "run", en.Name, "--replicates", strconv.Itoa(res.Replicates),
				"--seed", strconv.FormatUint(res.Seed, 10), "--keep-replicates", "--out", out)
			if code != exitOK {
				t.Fatalf("run: %s", errs)
			}
			code, report, errs := rhomark(t, "compare", base, filepath.Join(out, en.Name+".json"))
			if code != exitOK {
				t.Errorf("the run differs from its committed baseline (exit %d). If the change is intended, refresh the baselines with\n  go test ./cmd/rhomark -run TestBaselines -update-baselines\nand commit them with an explanation.\n%s%s", code, report, errs)
			}
			if !strings.Contains(report, "paired:") {
				t.Errorf("the comparison was not paired:\n%s", report)
			}
		})
	}
}
