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

// TestZshCompletes drives an interactive zsh through a pseudo-terminal
// (zsh/zpty), types a partial command and Tab, and checks what the line
// became: parsing the script (zsh -n) does not exercise _arguments, which
// refuses some specifications only when a completion runs.
func TestZshCompletes(t *testing.T) {
	zsh, err := exec.LookPath("zsh")
	if err != nil {
		if os.Getenv(requireToolsEnv) != "" {
			t.Fatal("zsh is not installed; .ci/run installs it")
		}
		t.Skip("zsh is not installed here (.ci/run installs it)")
	}
	dir := t.TempDir()
	_, script, _ := rhomark(t, "completion", "zsh")
	path := filepath.Join(dir, "_rhomark.zsh")
	os.WriteFile(path, []byte(script), 0o644)
	cases := []struct{ typed, want string }{
		{"rhomark run flo", "rhomark run flow-meter"},
		{"rhomark fit x.csv --meth", "rhomark fit x.csv --method"},
		{"rhomark theory --psi bisq", "rhomark theory --psi bisquare"},
	}
	for _, c := range cases {
		driver := `zmodload zsh/zpty
zpty z zsh -f -i
zpty -w z 'PS1="> "; autoload -U compinit; compinit -u -D; source ` + path + `'
sleep 0.5
zpty -w -n z "` + c.typed + `"$'\t'
sleep 1.5
all=""
while zpty -r -t z chunk 2>/dev/null; do all+=$chunk; done
print -r -- "$all"
zpty -d z
`
		out, _ := exec.Command(zsh, "-f", "-c", driver).CombinedOutput()
		text := string(out)
		if strings.Contains(text, "_arguments:") || strings.Contains(text, "doubled") {
			t.Errorf("%q: zsh reports an error in the completion:\n%s", c.typed, text)
		}
		if !strings.Contains(text, c.want) {
			t.Errorf("%q: the line did not become %q:\n%q", c.typed, c.want, text)
		}
	}
}

// requireToolsEnv, when set, makes the tests that need outside programs
// (Chromium, zsh) fail instead of skipping where those are missing: .ci/run
// installs them and sets it.
const requireToolsEnv = "RHOMARK_REQUIRE_TOOLS"
