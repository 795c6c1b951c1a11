package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestFitBadCellInLaterGroup: fits are written as they are made, but a bad
// cell anywhere is found before anything is written: the error names the
// file, the line and the column of the first bad cell in the order of the
// fits (the groups in order of first appearance, each group's rows in
// file order, and in a row the predictors, then the response), and
// nothing goes to the output.
func TestFitBadCellInLaterGroup(t *testing.T) {
	var b strings.Builder
	b.WriteString("meter,flow,ref\n")
	for g := 0; g < 3; g++ {
		for i := 0; i < 8; i++ {
			fmt.Fprintf(&b, "m%d,%d.5,%d\n", g, 2*i+g, i)
		}
	}
	good := b.String()
	lines := strings.Split(good, "\n")
	cases := []struct {
		name string
		edit func([]string)
		want string
	}{
		// Line 7 (the sixth row of m0) holds a bad response, line 22
		// (the fifth row of m2) a bad predictor: m0 is fitted first.
		{"response", func(l []string) { l[6] = "m0,NA,5"; l[21] = "m2,1,x" }, `meters.csv:7: column flow: "NA" is a missing value`},
		{"predictor", func(l []string) { l[21] = "m2,1e999,x" }, `meters.csv:22: column ref: "x" is not a number`},
		{"group order", func(l []string) {
			// m1 is met first when a row of it comes before m0's.
			l[1], l[10] = l[10], l[1]
			l[12] = "m1,oops,1"
			l[5] = "m0,oops,1"
		}, "meters.csv:13: column flow"},
	}
	dir := t.TempDir()
	for _, c := range cases {
		l := append([]string(nil), lines...)
		c.edit(l)
		path := filepath.Join(dir, "meters.csv")
		if err := os.WriteFile(path, []byte(strings.Join(l, "\n")), 0o644); err != nil {
			t.Fatal(err)
		}
		for _, format := range [][]string{nil, {"--json"}} {
			args := append([]string{"fit", path, "--y", "flow", "--group", "meter"}, format...)
			code, out, errs := rhomark(t, args...)
			if code != exitUsage || !strings.Contains(errs, c.want) || out != "" {
				t.Errorf("%s %v: exit %d, error %q, %d bytes of output; want exit %d, an error with %q and no output",
					c.name, format, code, errs, len(out), exitUsage, c.want)
			}
		}
	}
	path := filepath.Join(dir, "meters.csv")
	if err := os.WriteFile(path, []byte(good), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, out, errs := rhomark(t, "fit", path, "--y", "flow", "--group", "meter", "--json"); code != exitOK || strings.Count(out, `"group": "m`) != 3 {
		t.Errorf("good file: exit %d, %s\n%s", code, errs, out)
	}
}

// failAfter is a writer that takes n bytes, then fails.
type failAfter struct{ n int }

func (f *failAfter) Write(p []byte) (int, error) {
	if len(p) > f.n {
		k := f.n
		f.n = 0
		return k, errors.New("disk full")
	}
	f.n -= len(p)
	return len(p), nil
}

// TestFitOutputFails: when the output fails part way, fit exits 1 with
// the write's error, for the JSON and for the table, whatever the point
// of failure. (That it then stops fitting, rather than fitting the
// remaining groups for nothing, is not observed here.)
func TestFitOutputFails(t *testing.T) {
	path := filepath.Join(t.TempDir(), "meters.csv")
	writeGroupedW1(t, path, 40)
	for _, format := range [][]string{{"--json"}, nil} {
		// The table of 40 groups is about 40 kB, the JSON 900 kB.
		ns := []int{0, 100, 20_000}
		if format != nil {
			ns = append(ns, 70_000, 300_000)
		}
		for _, n := range ns {
			args := append([]string{"fit", path, "--y", "y", "--group", "meter"}, format...)
			var errb strings.Builder
			code := run(args, nil, &failAfter{n: n}, &errb)
			if code != exitFailure || !strings.Contains(errb.String(), "disk full") {
				t.Errorf("%v, failing after %d bytes: exit %d, %q", format, n, code, errb.String())
			}
		}
	}
}
