package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestCompletionScripts: the scripts parse in their shells, and bash's
// completes commands, flags, flag values and shipped scenarios.
func TestCompletionScripts(t *testing.T) {
	dir := t.TempDir()
	for _, shell := range []string{"bash", "zsh"} {
		code, out, errs := rhomark(t, "completion", shell)
		if code != exitOK {
			t.Fatalf("%s: %s", shell, errs)
		}
		path := filepath.Join(dir, "rhomark."+shell)
		os.WriteFile(path, []byte(out), 0o644)
		bin, err := exec.LookPath(shell)
		if err != nil {
			if os.Getenv(requireToolsEnv) != "" {
				t.Fatalf("%s is not installed; .ci/run installs it", shell)
			}
			t.Logf("%s not installed here; its script is checked only as text", shell)
			continue
		}
		if msg, err := exec.Command(bin, "-n", path).CombinedOutput(); err != nil {
			t.Errorf("%s -n: %v\n%s", shell, err, msg)
		}
		for _, c := range commands() {
			if !strings.Contains(out, c.name) {
				t.Errorf("%s script lacks command %s", shell, c.name)
			}
		}
	}
	bash, err := exec.LookPath("bash")
	if err != nil {
		t.Fatal("bash not found")
	}
	cases := []struct {
		words []string
		want  string
	}{
		{[]string{"rhomark", "comp"}, "compare completion"},
		{[]string{"rhomark", "fit", "x.csv", "--meth"}, "--method"},
		{[]string{"rhomark", "fit", "x.csv", "--method", "mm"}, "mm-estimate"},
		{[]string{"rhomark", "run", "flow"}, "flow-meter"},
	}
	for _, c := range cases {
		script := "source " + filepath.Join(dir, "rhomark.bash") + "; COMP_WORDS=(" + strings.Join(c.words, " ") + "); COMP_CWORD=" +
			strconv.Itoa(len(c.words)-1) + "; _rhomark; echo \"${COMPREPLY[@]}\""
		out, err := exec.Command(bash, "-c", script).Output()
		if err != nil {
			t.Fatalf("%v: %v", c.words, err)
		}
		if strings.TrimSpace(string(out)) != c.want {
			t.Errorf("%v completes to %q, want %q", c.words, strings.TrimSpace(string(out)), c.want)
		}
	}
}

// requireToolsEnv, when set, makes the tests that need outside programs
// (Chromium, zsh) fail instead of skipping where those are missing: .ci/run
// installs them and sets it.
const requireToolsEnv = "RHOMARK_REQUIRE_TOOLS"
