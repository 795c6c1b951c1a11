package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// fitOutput is the JSON form of fit's results, which fitWriter writes
// group by group (it never holds them all): the tests read it back.
type fitOutput struct {
	Estimator fitEstimator `json:"estimator"`
	Fits      []fitJSON    `json:"fits"`
}

// encoderJSON is fit's JSON as encoding/json writes it, the form the
// hand-written encoder must reproduce byte for byte.
func encoderJSON(t *testing.T, out fitOutput) string {
	t.Helper()
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetIndent("", "  ")
	if err := enc.Encode(out); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// TestFitJSONMatchesEncoder: `fit --json` writes exactly the bytes
// encoding/json writes for the same results, for several methods, with
// and without groups and intercept, for groups that fail, for group names
// that need escaping (invalid UTF-8, which does not survive decoding, is
// left to TestAppendJSONValues), and for values that are not finite.
func TestFitJSONMatchesEncoder(t *testing.T) {
	dir := t.TempDir()
	odd := filepath.Join(dir, "odd.csv")
	var b bytes.Buffer
	b.WriteString("g,flow,ref\n")
	names := []string{"a<b>&c", "quote\"back\\slash", "tab\tnew\\nline", "sep\u2028\u2029", "ctl\x01\x1f\x7f", "é ☃"}
	for gi, g := range names {
		for i := 0; i < 6+gi; i++ {
			q := g
			if q != "" {
				q = `"` + string(bytes.ReplaceAll([]byte(q), []byte(`"`), []byte(`""`))) + `"`
			}
			b.WriteString(q + "," + []string{"1.5", "2.25e-7", "3", "4.75", "1e22", "6", "7.125", "8", "9.5", "10", "11", "12", "13"}[i] + "," + []string{"0.5", "1", "2", "3", "4", "5", "6.5", "7", "8", "9", "10", "11", "12"}[i] + "\n")
		}
	}
	b.WriteString("short,1,1\n") // one row: the fit fails
	if err := os.WriteFile(odd, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	const stack = "../../testdata/refdata/stackloss.csv"
	cases := [][]string{
		{stack, "--y", "stack.loss"},
		{stack, "--y", "stack.loss", "--method", "ls"},
		{stack, "--y", "stack.loss", "--method", "mm-estimate"},
		{stack, "--y", "stack.loss", "--method", "lts"},
		{stack, "--y", "stack.loss", "--method", "lad"},
		{stack, "--y", "stack.loss", "--no-intercept", "--scale", "fixed:2", "--psi", "bisquare"},
		{stack, "--y", "stack.loss", "--psi-expr", "r / (1 + abs(r))"},
		{odd, "--y", "flow", "--group", "g"},
		{odd, "--y", "flow", "--group", "g", "--method", "ls"},
	}
	for _, c := range cases {
		args := append([]string{"fit"}, c...)
		args = append(args, "--json")
		_, got, errs := rhomark(t, args...)
		var out fitOutput
		if err := json.Unmarshal([]byte(got), &out); err != nil {
			t.Fatalf("%v: %v\n%s%s", c, err, got, errs)
		}
		if want := encoderJSON(t, out); got != want {
			t.Errorf("%v: the JSON differs from encoding/json's:\n%s\nwant\n%s", c, got, want)
		}
	}
}

// TestAppendJSONValues: strings and numbers as encoding/json writes them.
func TestAppendJSONValues(t *testing.T) {
	for _, s := range []string{"", "plain", "<&>", "\"\\/", "\b\f\n\r\t\x00\x1f\x7f", "\xff\xfe", "a\xc3", "\u2028x\u2029", "日本", "\U0001F600"} {
		want, _ := json.Marshal(s)
		if got := appendJSONString(nil, s); string(got) != string(want) {
			t.Errorf("%q: %s, want %s", s, got, want)
		}
	}
	for _, f := range []float64{0, math.Copysign(0, -1), 1, -1.5, 1e-6, 9.99e-7, 1e-7, 1.5e-300, 1e20, 1e21, 123456789012345678901234.0, math.MaxFloat64, math.SmallestNonzeroFloat64, 0.1, 1.0 / 3} {
		want, _ := json.Marshal(f)
		if got := appendJSONFloat(nil, f); string(got) != string(want) {
			t.Errorf("%v: %s, want %s", f, got, want)
		}
	}
}
