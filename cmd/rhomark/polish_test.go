package main

import (
	"bytes"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime/debug"
	"strings"
	"testing"
)

// TestCheckPsiRoundsNumbers: check-psi's findings show numbers to six
// significant digits, never float64 noise such as 0.3000000000000001.
func TestCheckPsiRoundsNumbers(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"at 0.3100000000000001 rho' ≈ 0.253313010116496 but psi = 0", "at 0.31 rho' ≈ 0.253313 but psi = 0"},
		{"at 0.01 rho' ≈ 0.01999999999999913 but psi = 0.01", "at 0.01 rho' ≈ 0.02 but psi = 0.01"},
		{"weight(0) = 1 but weight(1e-9) = 0.5", "weight(0) = 1 but weight(1e-9) = 0.5"},
		{"psi(-0.1234567891) = -1.5e-20", "psi(-0.123457) = -1.5e-20"},
	} {
		if got := roundNumbers(tc.in); got != tc.want {
			t.Errorf("roundNumbers(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	sig := regexp.MustCompile(`[1-9][0-9]*`)
	for _, args := range [][]string{
		{"check-psi", "--psi-expr", "abs(r) < 0.1+0.2 ? r : 0"},
		{"check-psi", "--psi-expr", "r", "--rho-expr", "r*r", "--deriv-expr", "2"},
		{"check-psi", "--psi-expr", "abs(r) < 0.1+0.2 ? r : 0", "--json"},
	} {
		_, out, _ := rhomark(t, args...)
		if !strings.Contains(out, "FAIL") && !strings.Contains(out, `"ok": false`) {
			t.Errorf("%v: expected a failing check:\n%s", args, out)
		}
		for _, line := range strings.Split(out, "\n") {
			if args[len(args)-1] == "--json" && !strings.Contains(line, `"detail"`) {
				continue // JSON numbers (at, jumps) stay exact; only the words are rounded
			}
			for _, num := range numberPattern.FindAllString(line, -1) {
				mant, _, _ := strings.Cut(num, "e")
				if d := sig.FindString(strings.ReplaceAll(mant, ".", "")); len(d) > checkDigits {
					t.Errorf("%v: unrounded number %s in %q", args, num, line)
				}
			}
		}
	}
	if _, out, _ := rhomark(t, "check-psi", "--psi-expr", "abs(r) < 0.1+0.2 ? r : 0"); !strings.Contains(out, "psi jumps at ±0.3") {
		t.Errorf("jumps not listed as ±0.3:\n%s", out)
	}
}

// TestNoRejectionPointWording: every command says a missing rejection
// point the same way, and a present one as a number.
func TestNoRejectionPointWording(t *testing.T) {
	const none = "none (psi is not 0 beyond any point)"
	for _, tc := range []struct {
		args     []string
		want     string
		unwanted []string
	}{
		{[]string{"theory", "--psi", "huber"}, "rejection point                " + none, nil},
		{[]string{"theory", "--psi", "welsch"}, "rejection point                " + none, nil},
		{[]string{"theory", "--psi", "bisquare"}, "rejection point                4.68506\n", []string{"none"}},
		{[]string{"check-psi", "--psi", "huber"}, "rejection point " + none, nil},
		{[]string{"check-psi", "--psi", "welsch"}, "psi tends to 0; rejection point " + none, nil},
		{[]string{"check-psi", "--psi", "bisquare"}, "psi is 0 beyond 4.68506 (the rejection point)", []string{"none"}},
		{[]string{"tune", "--psi", "huber", "--sweep", "1:2:3"}, "none", []string{"unbounded", "never"}},
	} {
		code, out, errs := rhomark(t, tc.args...)
		if code != exitOK || !strings.Contains(out, tc.want) {
			t.Errorf("%v: exit %d %s; output lacks %q:\n%s", tc.args, code, errs, tc.want, out)
		}
		for _, u := range tc.unwanted {
			if strings.Contains(out, u) {
				t.Errorf("%v: output has %q:\n%s", tc.args, u, out)
			}
		}
	}
}

// TestFirstSentence: the scenario list shows the whole first sentence of
// each scenario's about, whatever dots it holds, wrapped to the width.
func TestFirstSentence(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"Choosing Huber's tuning constant: k swept from 0.5 to 3\n on clean data. Every cell", "Choosing Huber's tuning constant: k swept from 0.5 to 3 on clean data."},
		{"Positions (x, y), e.g. near 10. More", "Positions (x, y), e.g. near 10."},
		{"Demo: a bench.", "Demo: a bench."},
		{"No full stop at all", "No full stop at all"},
		{"Is it? Yes.", "Is it?"},
		{"", ""},
	} {
		if got := firstSentence(tc.in); got != tc.want {
			t.Errorf("firstSentence(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	code, out, _ := rhomark(t, "scenarios")
	if code != exitOK {
		t.Fatal(code)
	}
	joined := strings.Join(strings.Fields(out), " ")
	for _, want := range []string{
		"tuning-huber 16 cell(s) Choosing Huber's tuning constant: k swept from 0.5 to 3 on clean normal data, where efficiency against least squares is the whole story, and on data with 10% one-sided vertical outliers, where a small k pays off in bias. ",
		"(x1 near 10) with a response that ignores the model (y near 0). ",
	} {
		if !strings.Contains(joined, want) {
			t.Errorf("scenario list lacks %q:\n%s", want, out)
		}
	}
	for _, line := range strings.Split(out, "\n") {
		if n := len([]rune(line)); n > listWidth {
			t.Errorf("line of %d runes: %q", n, line)
		}
	}
}

// TestLabelsShowConstants: run's table names each estimator's psi with its
// constants, a custom psi's included, to six digits.
func TestLabelsShowConstants(t *testing.T) {
	path := filepath.Join(t.TempDir(), "bench.yaml")
	os.WriteFile(path, []byte(`name: bench
replicates: 4
model: {n: 30, intercept: 0.3, columns: [{name: volume, slope: 0.98}]}
estimators:
  - {label: ls, method: ls}
  - {label: meter, method: irls, psi: {expr: "r / (1 + abs(r)/c)", constants: {c: 1.2}}}
  - {label: mm, method: mm-estimate}
`), 0o644)
	code, out, errs := rhomark(t, "run", path, "--quiet")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{"▸ meter (irls · custom c = 1.2)", "▸ mm (mm-estimate · bisquare 4.68506)"} {
		if !strings.Contains(out, want) {
			t.Errorf("table lacks %q:\n%s", want, out)
		}
	}
	_, out, _ = rhomark(t, "fit", "../../testdata/refdata/stackloss.csv", "--y", "stack.loss", "--method", "mm-estimate")
	if !strings.HasPrefix(out, "fit · mm-estimate · bisquare c = 4.68506\n") {
		t.Errorf("fit heading: %q", strings.SplitN(out, "\n", 2)[0])
	}
}

// TestVersionNamesCommit: --version names the commit from the VCS stamp,
// or from the linker, or says plainly that nothing records it; a binary
// linked with -X main.commit names that commit.
func TestVersionNamesCommit(t *testing.T) {
	const rev = "0123456789abcdef0123456789abcdef01234567"
	for _, tc := range []struct {
		settings []debug.BuildSetting
		linked   string
		want     string
	}{
		{[]debug.BuildSetting{{Key: "vcs.revision", Value: rev}}, "", "commit " + rev + " (from the VCS stamp)"},
		{[]debug.BuildSetting{{Key: "vcs.revision", Value: rev}, {Key: "vcs.modified", Value: "true"}}, "other", "commit " + rev + ", with uncommitted changes (from the VCS stamp)"},
		{nil, "feedbeef", "commit feedbeef (given to the linker with -X main.commit)"},
		{[]debug.BuildSetting{{Key: "GOOS", Value: "linux"}}, "", "commit unknown: this build carries no VCS stamp"},
	} {
		if got := commitLine(tc.settings, tc.linked); !strings.HasPrefix(got, tc.want) {
			t.Errorf("commitLine(%v, %q) = %q, want %q", tc.settings, tc.linked, got, tc.want)
		}
	}
	// A test binary has no VCS stamp and no linked commit.
	if _, out, _ := rhomark(t, "--version"); !strings.Contains(out, "\ncommit unknown: this build carries no VCS stamp") {
		t.Errorf("--version of a test build:\n%s", out)
	}
	bin := binary(t) // linked with -X main.commit=testCommit
	out, err := exec.Command(bin, "--version").Output()
	if err != nil || !strings.Contains(string(out), "\ncommit "+testCommit+" (given to the linker") {
		t.Errorf("--version of a build linked with the commit: %v\n%s", err, out)
	}
}

// TestReplayJSONWritesNoCSV: replay --json prints and writes nothing else
// unless --data-out asks for the dataset; the table writes it to the
// default file.
func TestReplayJSONWritesNoCSV(t *testing.T) {
	dir := t.TempDir()
	t.Chdir(dir)
	code, out, errs := rhomark(t, "replay", "clean-normal", "--estimator", "ls", "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if strings.Contains(out, `"dataset"`) {
		t.Errorf("--json without --data-out names a dataset:\n%s", out)
	}
	if files, _ := os.ReadDir(dir); len(files) != 0 {
		t.Errorf("--json without --data-out wrote %v", files)
	}
	if code, out, _ := rhomark(t, "replay", "clean-normal", "--estimator", "ls", "--json", "--data-out", "d.csv"); code != exitOK || !strings.Contains(out, `"dataset": "d.csv"`) {
		t.Errorf("--json --data-out: exit %d\n%s", code, out)
	}
	if _, err := os.Stat(filepath.Join(dir, "d.csv")); err != nil {
		t.Errorf("--data-out d.csv: %v", err)
	}
	if code, _, _ := rhomark(t, "replay", "clean-normal", "--estimator", "ls"); code != exitOK {
		t.Fatalf("table: exit %d", code)
	}
	if _, err := os.Stat(filepath.Join(dir, "clean-normal-c0-r0.csv")); err != nil {
		t.Errorf("the table's default dataset file: %v", err)
	}
}

// TestProgressDescribesCells: the bar names the cells of the unit the
// harness last finished, one or (when cells share their datasets) several.
func TestProgressDescribesCells(t *testing.T) {
	p := &progress{label: "tuning-huber", cells: 16}
	for _, tc := range []struct {
		cells []int
		want  string
	}{
		{nil, "tuning-huber"},
		{[]int{3}, "tuning-huber · cell 3 (cells 0–15)"},
		{[]int{1, 3}, "tuning-huber · cells 1, 3 (cells 0–15)"},
		{[]int{0, 2, 4, 6, 8}, "tuning-huber · cells 0, 2, 4, … (cells 0–15)"},
	} {
		if got := p.describe(tc.cells); got != tc.want {
			t.Errorf("describe(%v) = %q, want %q", tc.cells, got, tc.want)
		}
	}
	one := &progress{label: "clean", cells: 1}
	if got := one.describe([]int{0}); got != "clean" {
		t.Errorf("a one-cell run: %q", got)
	}
}

// TestProgressShowsCell: on a terminal, the bar names the cell running.
func TestProgressShowsCell(t *testing.T) {
	cmd := exec.Command(binary(t), "run", "flow-meter", "--replicates", "3000", "--workers", "1")
	master, err := startInTerminal(cmd)
	if err != nil {
		t.Skipf("no pseudo-terminal: %v", err)
	}
	defer master.Close()
	var screen bytes.Buffer
	io.Copy(&screen, master) // until the terminal closes with the run (EIO)
	cmd.Wait()
	for _, want := range []string{"flow-meter · cell 0 (cells 0–3)", "flow-meter · cell 3 (cells 0–3)"} {
		if !strings.Contains(screen.String(), want) {
			t.Errorf("the terminal never showed %q:\n%q", want, screen.String())
		}
	}
}

// TestHelpWritesTwoDashes: every command's --help lists its options as the
// README writes them, --name VALUE, and flag errors name them the same way.
func TestHelpWritesTwoDashes(t *testing.T) {
	option := regexp.MustCompile(`^  --[a-z0-9-]+( [A-Z][A-Z0-9=:_/\[\]-]*)?$`)
	for _, c := range commands() {
		code, _, errs := rhomark(t, c.name, "--help")
		if code != exitOK {
			t.Errorf("%s --help: exit %d", c.name, code)
		}
		options := 0
		for _, line := range strings.Split(errs, "\n") {
			switch {
			case option.MatchString(line):
				options++
			case strings.HasPrefix(line, "  -"):
				t.Errorf("%s --help: option line %q is not --name VALUE", c.name, line)
			}
		}
		if options == 0 && c.name != "completion" && c.name != "unpack" {
			t.Errorf("%s --help lists no options:\n%s", c.name, errs)
		}
	}
	_, _, errs := rhomark(t, "fit", "--help")
	for _, want := range []string{"  --y COLUMN\n        response column (required)\n", "  --json\n", "(default irls)"} {
		if !strings.Contains(errs, want) {
			t.Errorf("fit --help lacks %q", want)
		}
	}
	for _, args := range [][]string{{"fit", "x.csv", "--bogus"}, {"run", "flow-meter", "--seed"}, {"run", "flow-meter", "--workers", "x"}} {
		_, _, errs := rhomark(t, args...)
		if !strings.Contains(errs, " --"+strings.TrimPrefix(args[2], "--")) || regexp.MustCompile(` -[a-z]`).MatchString(errs) {
			t.Errorf("%v: %q; want the option named with two dashes", args, errs)
		}
	}
}
