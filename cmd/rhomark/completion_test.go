package main

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
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

// shellWait bounds each wait for an interactive shell: generous, so that
// a busy machine does not fail the tests, which wait for what the shell
// displays and never for a fixed time.
const shellWait = 30 * time.Second

// shellErrors matches what zsh and bash print when a completion function or
// the script fails: "function:line: message", "(eval):1: ...",
// "zsh: ..." or "bash: ...".
var shellErrors = regexp.MustCompile(`(?:\(eval\)|[A-Za-z_][\w-]*):\d+: |\b(?:zsh|bash): |command not found|bad option|parse error|syntax error`)

// shellPrompt is the prompt of the interactive shells; the tests wait for
// it before typing.
const shellPrompt = "rmtest> "

// bufferLine matches the line a key bound in the test shells prints: the
// command line as completion left it.
var bufferLine = regexp.MustCompile(`BUFFER=\[(.*)\]\r?\n`)

// shell is an interactive shell on a pseudo-terminal, and all it has
// displayed.
type shell struct {
	t       *testing.T
	term    *os.File
	mu      sync.Mutex
	out     []byte
	changed chan struct{} // receives after each read
}

// startShell starts cmd, an interactive shell, on a pseudo-terminal, and
// stops it when the test ends.
func startShell(t *testing.T, cmd *exec.Cmd) *shell {
	t.Helper()
	term, err := startInTerminal(cmd)
	if errors.Is(err, errors.ErrUnsupported) {
		t.Skip("driving an interactive shell needs a Linux pseudo-terminal")
	}
	if err != nil {
		t.Fatal(err)
	}
	sh := &shell{t: t, term: term, changed: make(chan struct{}, 1)}
	go sh.read()
	t.Cleanup(func() {
		cmd.Process.Kill()
		term.Close()
		cmd.Wait()
	})
	return sh
}

func (sh *shell) read() {
	buf := make([]byte, 4096)
	for {
		n, err := sh.term.Read(buf)
		sh.mu.Lock()
		sh.out = append(sh.out, buf[:n]...)
		sh.mu.Unlock()
		select {
		case sh.changed <- struct{}{}:
		default:
		}
		if err != nil {
			return
		}
	}
}

// text returns what the shell has displayed since offset from, and the
// offset of its end.
func (sh *shell) text(from int) (string, int) {
	sh.mu.Lock()
	defer sh.mu.Unlock()
	return string(sh.out[from:]), len(sh.out)
}

// waitFor waits until cond holds for what the shell has displayed since
// offset from, and fails the test, showing that text, if it does not within
// shellWait.
func (sh *shell) waitFor(from int, what string, cond func(string) bool) {
	sh.t.Helper()
	deadline := time.NewTimer(shellWait)
	defer deadline.Stop()
	for {
		text, _ := sh.text(from)
		if cond(text) {
			return
		}
		select {
		case <-sh.changed:
		case <-deadline.C:
			sh.t.Fatalf("waiting for %s: not within %v; the shell displayed:\n%q", what, shellWait, text)
		}
	}
}

// typeText types s.
func (sh *shell) typeText(s string) {
	sh.t.Helper()
	if _, err := sh.term.Write([]byte(s)); err != nil {
		sh.t.Fatalf("typing %q: %v", s, err)
	}
}

// completionCase is one completion typed into an interactive shell: the
// partial command line, then Tab. The line must become line (unless line
// is empty), and the listing shown must hold every word of list.
type completionCase struct {
	typed, line string
	list        []string
}

// complete types each case with Tab after the shell's prompt, waits for the
// listing if one is expected, then presses Ctrl-X Ctrl-B, bound in the
// shell's start-up file to print the command line as BUFFER=[...] and clear
// it. The shell reads keys in order, so that line shows the completion's
// result. It fails on any error text the shell displays.
func (sh *shell) complete(cases []completionCase) {
	t := sh.t
	t.Helper()
	sh.waitFor(0, "the first prompt", func(s string) bool { return strings.Contains(s, shellPrompt) })
	_, from := sh.text(0)
	for _, c := range cases {
		sh.typeText(c.typed + "\t")
		if len(c.list) > 0 {
			sh.waitFor(from, fmt.Sprintf("the listing of %q", c.typed), func(s string) bool {
				for _, w := range c.list {
					if !strings.Contains(s, w) {
						return false
					}
				}
				return true
			})
		}
		sh.typeText("\x18\x02")
		var line string
		sh.waitFor(from, fmt.Sprintf("the line after completing %q, then the prompt", c.typed), func(s string) bool {
			m := bufferLine.FindStringSubmatchIndex(s)
			if m == nil {
				return false
			}
			line = s[m[2]:m[3]]
			return strings.Contains(s[m[1]:], shellPrompt)
		})
		text, end := sh.text(from)
		if e := shellErrors.FindString(text); e != "" {
			t.Errorf("%q: the shell printed an error (%q) while completing:\n%q", c.typed, e, text)
		}
		if c.line != "" && line != c.line {
			t.Errorf("%q completed to %q, want %q", c.typed, line, c.line)
		}
		from = end
	}
}

// shellCases are the completions both shells must get right, plus, for
// every command, its options and its arguments, which must complete
// without an error.
func shellCases() []completionCase {
	cases := []completionCase{
		{typed: "rhomark merg", line: "rhomark merge "},
		{typed: "rhomark run flo", line: "rhomark run flow-meter "},
		{typed: "rhomark run ", line: "rhomark run ", list: []string{"flow-meter", "heavy-tails", "bench.yaml"}},
		{typed: "rhomark fit x.csv --meth", line: "rhomark fit x.csv --method "},
		{typed: "rhomark fit x.csv --method mm", line: "rhomark fit x.csv --method mm-estimate "},
		{typed: "rhomark theory --psi bisq", line: "rhomark theory --psi bisquare "},
		{typed: "rhomark completion z", line: "rhomark completion zsh "},
	}
	var names []string
	for _, c := range commands() {
		names = append(names, c.name)
		cases = append(cases, completionCase{typed: "rhomark " + c.name + " -"}, completionCase{typed: "rhomark " + c.name + " "})
	}
	return append(cases, completionCase{typed: "rhomark ", line: "rhomark ", list: names})
}

// completionDirs writes the completion script for shell into a new
// directory and returns it with an empty working directory holding one
// scenario file, bench.yaml, for file completion.
func completionDirs(t *testing.T, shell string) (conf, work string) {
	t.Helper()
	conf, work = t.TempDir(), t.TempDir()
	code, script, errs := rhomark(t, "completion", shell)
	if code != exitOK {
		t.Fatalf("completion %s: %s", shell, errs)
	}
	os.WriteFile(filepath.Join(conf, "rhomark."+shell), []byte(script), 0o644)
	os.WriteFile(filepath.Join(work, "bench.yaml"), []byte("name: bench\n"), 0o644)
	return conf, work
}

// needShell returns the path of shell, or skips the test (fails it under
// RHOMARK_REQUIRE_TOOLS) when it is not installed.
func needShell(t *testing.T, shell string) string {
	t.Helper()
	path, err := exec.LookPath(shell)
	if err != nil {
		if os.Getenv(requireToolsEnv) != "" {
			t.Fatalf("%s is not installed; .ci/run installs it", shell)
		}
		t.Skipf("%s is not installed here (.ci/run installs it)", shell)
	}
	return path
}

// TestZshCompletes drives an interactive zsh on a pseudo-terminal with the
// completion script loaded: parsing the script (zsh -n) does not exercise
// _arguments and _alternative, which refuse some specifications only when
// a completion runs. Each completion must give the right line and print no
// error.
func TestZshCompletes(t *testing.T) {
	zsh := needShell(t, "zsh")
	conf, work := completionDirs(t, "zsh")
	rc := `PS1='` + shellPrompt + `'
LISTMAX=10000
autoload -U compinit
compinit -u -D
source ` + filepath.Join(conf, "rhomark.zsh") + `
rmtest-show() { zle -I; print -r -- "BUFFER=[$BUFFER]"; BUFFER="" }
zle -N rmtest-show
bindkey '^X^B' rmtest-show
`
	os.WriteFile(filepath.Join(conf, ".zshrc"), []byte(rc), 0o644)
	cmd := exec.Command(zsh, "-d", "-i")
	cmd.Dir = work
	cmd.Env = append(os.Environ(), "ZDOTDIR="+conf, "TERM=xterm", "HOME="+conf)
	startShell(t, cmd).complete(shellCases())
}

// TestBashCompletes is TestZshCompletes for bash: an interactive bash
// with the completion script loaded, typed into through readline.
func TestBashCompletes(t *testing.T) {
	bash := needShell(t, "bash")
	conf, work := completionDirs(t, "bash")
	rc := `PS1='` + shellPrompt + `'
bind 'set show-all-if-ambiguous on'
bind 'set completion-query-items 0'
bind 'set page-completions off'
bind 'set bell-style none'
source ` + filepath.Join(conf, "rhomark.bash") + `
bind -x '"\C-x\C-b": printf "BUFFER=[%s]\n" "$READLINE_LINE"; READLINE_LINE=""'
`
	os.WriteFile(filepath.Join(conf, "bashrc"), []byte(rc), 0o644)
	cmd := exec.Command(bash, "--noprofile", "--rcfile", filepath.Join(conf, "bashrc"), "-i")
	cmd.Dir = work
	cmd.Env = append(os.Environ(), "TERM=xterm", "HOME="+conf, "INPUTRC="+filepath.Join(conf, "inputrc"))
	startShell(t, cmd).complete(shellCases())
}

// requireToolsEnv, when set, makes the tests that need outside programs
// (Chromium, zsh) fail instead of skipping where those are missing: .ci/run
// installs them and sets it.
const requireToolsEnv = "RHOMARK_REQUIRE_TOOLS"
