package main

import (
	"io"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// writeGroupedW1 writes a CSV of groups groups of the W1 workload, a
// flow-meter bench's calibration runs: 100 rows each of a reading y on
// four standard-normal predictors, y = 1 + Σx + e with normal errors and
// 10% of the rows shifted by +10 (stuck-sensor spikes), every number at
// full precision (about 10 kB a group).
func writeGroupedW1(tb testing.TB, path string, groups int) {
	tb.Helper()
	rng := rand.New(rand.NewPCG(14, 5))
	buf := []byte("meter,y,x1,x2,x3,x4\n")
	var x [4]float64
	for g := 0; g < groups; g++ {
		for i := 0; i < 100; i++ {
			y := 1.0
			for j := range x {
				x[j] = rng.NormFloat64()
				y += x[j]
			}
			y += rng.NormFloat64()
			if i%10 == 0 {
				y += 10
			}
			buf = append(buf, "m"...)
			buf = strconv.AppendInt(buf, int64(g), 10)
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, y, 'g', -1, 64)
			for _, v := range x {
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, v, 'g', -1, 64)
			}
			buf = append(buf, '\n')
		}
	}
	if err := os.WriteFile(path, buf, 0o644); err != nil {
		tb.Fatal(err)
	}
}

// fitGroupsRuns returns the runs the fit benchmarks time over the grouped
// file at path: Huber by IRLS to 1e-10 per meter, written as JSON or as
// the table.
func fitGroupsRuns(path string) []struct {
	name string
	args []string
} {
	base := []string{"fit", path, "--y", "y", "--group", "meter", "--tol", "1e-10"}
	return []struct {
		name string
		args []string
	}{
		{"json", append(append([]string(nil), base...), "--json")},
		{"table", base},
	}
}

// BenchmarkFitGroups measures `fit --group` over 1,000 groups of the W1
// workload (Huber by IRLS, a 10 MB CSV), the whole command in process:
// reading and parsing the file, the fits, their inference and the output
// (JSON, or the table). µs/group is the time per group.
func BenchmarkFitGroups(b *testing.B) {
	const groups = 1000
	path := filepath.Join(b.TempDir(), "meters.csv")
	writeGroupedW1(b, path, groups)
	for _, c := range fitGroupsRuns(path) {
		b.Run(c.name, func(b *testing.B) {
			args := c.args
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if code := run(args, nil, io.Discard, io.Discard); code != exitOK {
					b.Fatalf("exit %d", code)
				}
			}
			b.ReportMetric(b.Elapsed().Seconds()*1e6/float64(b.N*groups), "µs/group")
		})
	}
}

// BenchmarkFitGroupsProcess measures what a user waits for: the built
// rhomark run as a process over the 1,000-group file of BenchmarkFitGroups,
// start-up, reading, fits and output (to the null device) included. The
// binary is built once, from this package, into a temporary folder.
// µs/group is the wall time per group, cpu-µs/group the process's CPU
// time (user and system) per group, steadier than the wall time on a
// shared machine, and faults/op the process's page faults as the system
// counts them, where it does: on a machine whose faults are dear, memory
// touched is time. (The largest resident set cannot be read here: a
// child's maximum counts its parent's from before the exec.)
func BenchmarkFitGroupsProcess(b *testing.B) {
	const groups = 1000
	goTool, err := exec.LookPath("go")
	if err != nil {
		b.Skip("no go command to build rhomark with")
	}
	dir := b.TempDir()
	bin := filepath.Join(dir, "rhomark")
	if out, err := exec.Command(goTool, "build", "-o", bin, ".").CombinedOutput(); err != nil {
		b.Fatalf("go build: %v\n%s", err, out)
	}
	path := filepath.Join(dir, "meters.csv")
	writeGroupedW1(b, path, groups)
	null, err := os.OpenFile(os.DevNull, os.O_WRONLY, 0)
	if err != nil {
		b.Fatal(err)
	}
	defer null.Close()
	for _, c := range fitGroupsRuns(path) {
		b.Run(c.name, func(b *testing.B) {
			args := c.args
			var faults float64
			var cpu time.Duration
			for i := 0; i < b.N; i++ {
				cmd := exec.Command(bin, args...)
				cmd.Stdout = null
				var stderr strings.Builder
				cmd.Stderr = &stderr
				if err := cmd.Run(); err != nil {
					b.Fatalf("%v: %s", err, stderr.String())
				}
				faults += pageFaults(cmd.ProcessState)
				cpu += cmd.ProcessState.UserTime() + cmd.ProcessState.SystemTime()
			}
			b.ReportMetric(b.Elapsed().Seconds()*1e6/float64(b.N*groups), "µs/group")
			b.ReportMetric(cpu.Seconds()*1e6/float64(b.N*groups), "cpu-µs/group")
			if faults > 0 {
				b.ReportMetric(faults/float64(b.N), "faults/op")
			}
		})
	}
}
