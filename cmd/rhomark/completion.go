package main

import (
	"bytes"
	"fmt"
	"regexp"
	"sort"
	"strings"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/scenarios"
)

// flagLine matches a flag in a command's --help text: "  --name VALUE"
// then its description on the next line; the value word is absent for a
// switch.
var flagLine = regexp.MustCompile(`^  --([a-z0-9-]+)( \S+)?$`)

// commandFlag is a flag and its description, read from the help text.
type commandFlag struct {
	name, help string
	value      string // the value's placeholder word, "" for a switch
}

// commandFlags lists a command's flags by asking it for its help.
func commandFlags(c command) []commandFlag {
	var out, errb bytes.Buffer
	c.run(env{stdout: &out, stderr: &errb}, []string{"--help"})
	var flags []commandFlag
	lines := strings.Split(errb.String(), "\n")
	for i, l := range lines {
		m := flagLine.FindStringSubmatch(l)
		if m == nil {
			continue
		}
		help := ""
		if i+1 < len(lines) {
			help = strings.TrimSpace(lines[i+1])
		}
		flags = append(flags, commandFlag{m[1], help, strings.TrimSpace(m[2])})
	}
	return flags
}

// valueWords returns the words a flag's value can take, if they are a
// fixed set.
func valueWords(flag string) []string {
	switch flag {
	case "psi":
		return psi.FamilyNames()
	case "method", "start":
		var out []string
		for _, m := range estimators.Methods() {
			if flag == "method" || m.Direct() {
				out = append(out, m.String())
			}
		}
		return out
	case "scale":
		return []string{"mad", "start", "fixed:"}
	}
	return nil
}

func completionCmd(e env, args []string) error {
	fs := newFlags(e, "completion", "bash|zsh",
		"Prints a shell completion script. Load it with\n  source <(rhomark completion bash)      # bash\n  source <(rhomark completion zsh)       # zsh (or save it as _rhomark on $fpath)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one shell: bash or zsh")
	}
	lib, err := scenarios.Library()
	if err != nil {
		return err
	}
	var shipped []string
	for _, en := range lib {
		shipped = append(shipped, en.Name)
	}
	cmds := commands()
	sort.Slice(cmds, func(i, j int) bool { return cmds[i].name < cmds[j].name })
	switch pos[0] {
	case "bash":
		fmt.Fprint(e.stdout, bashCompletion(cmds, shipped))
	case "zsh":
		fmt.Fprint(e.stdout, zshCompletion(cmds, shipped))
	default:
		return usagef("unknown shell %q: want bash or zsh", pos[0])
	}
	return nil
}

func bashCompletion(cmds []command, shipped []string) string {
	var b strings.Builder
	b.WriteString("# bash completion for rhomark; load with: source <(rhomark completion bash)\n")
	b.WriteString("_rhomark() {\n  local cur prev cmd\n  cur=\"${COMP_WORDS[COMP_CWORD]}\"\n  prev=\"${COMP_WORDS[COMP_CWORD-1]}\"\n")
	var names []string
	for _, c := range cmds {
		names = append(names, c.name)
	}
	fmt.Fprintf(&b, "  if [[ $COMP_CWORD -eq 1 ]]; then\n    COMPREPLY=( $(compgen -W \"%s help --version\" -- \"$cur\") )\n    return\n  fi\n", strings.Join(names, " "))
	b.WriteString("  cmd=\"${COMP_WORDS[1]}\"\n  case \"$prev\" in\n")
	for _, f := range []string{"psi", "method", "start", "scale"} {
		fmt.Fprintf(&b, "    --%s|-%s) COMPREPLY=( $(compgen -W \"%s\" -- \"$cur\") ); return ;;\n", f, f, strings.Join(valueWords(f), " "))
	}
	b.WriteString("  esac\n  case \"$cmd\" in\n")
	for _, c := range cmds {
		var flags []string
		for _, f := range commandFlags(c) {
			flags = append(flags, "--"+f.name)
		}
		words := ""
		switch c.name {
		case "run", "breakdown", "replay", "scenarios":
			words = strings.Join(shipped, " ")
		case "completion":
			words = "bash zsh"
		}
		fmt.Fprintf(&b, "    %s)\n      if [[ \"$cur\" == -* ]]; then COMPREPLY=( $(compgen -W \"%s\" -- \"$cur\") ); return; fi\n", c.name, strings.Join(flags, " "))
		if words != "" {
			fmt.Fprintf(&b, "      COMPREPLY=( $(compgen -W \"%s\" -- \"$cur\") $(compgen -f -- \"$cur\") ) ;;\n", words)
		} else {
			b.WriteString("      COMPREPLY=( $(compgen -f -- \"$cur\") ) ;;\n")
		}
	}
	b.WriteString("  esac\n}\ncomplete -o filenames -F _rhomark rhomark\n")
	return b.String()
}

// zshQuote escapes text for an _arguments description.
func zshQuote(s string) string {
	r := strings.NewReplacer("'", "'\\''", "[", "(", "]", ")", ":", " -")
	return r.Replace(s)
}

func zshCompletion(cmds []command, shipped []string) string {
	var b strings.Builder
	b.WriteString("#compdef rhomark\n# zsh completion for rhomark; load with: source <(rhomark completion zsh)\n")
	b.WriteString("_rhomark() {\n  local -a commands\n  commands=(\n")
	for _, c := range cmds {
		fmt.Fprintf(&b, "    '%s:%s'\n", c.name, zshQuote(c.summary))
	}
	// For the command's own arguments, drop "rhomark" from the words so
	// that _arguments counts positions from the command name.
	b.WriteString("  )\n  if (( CURRENT == 2 )); then\n    _describe 'command' commands\n    return\n  fi\n  shift words\n  (( CURRENT-- ))\n  case $words[1] in\n")
	for _, c := range cmds {
		fmt.Fprintf(&b, "    %s)\n      _arguments \\\n", c.name)
		for _, f := range commandFlags(c) {
			action := ""
			if w := valueWords(f.name); w != nil {
				action = fmt.Sprintf(":%s:(%s)", f.name, strings.Join(w, " "))
			} else if f.value != "" {
				// Offer files where the value names one; otherwise just
				// say what is expected.
				action = fmt.Sprintf(":%s: ", f.value)
				switch strings.ToLower(f.value) {
				case "file", "directory", "dir", "path":
					action = fmt.Sprintf(":%s:_files", f.value)
				}
			}
			fmt.Fprintf(&b, "        '--%s[%s]%s' \\\n", f.name, zshQuote(f.help), action)
		}
		switch c.name {
		case "run", "breakdown", "replay", "scenarios":
			// One rest specification: zsh refuses two.
			fmt.Fprintf(&b, "        '*:scenario or file: _alternative \"scenarios:shipped scenario:(%s)\" \"files:file:_files\"' ;;\n", strings.Join(shipped, " "))
		case "completion":
			b.WriteString("        '1:shell:(bash zsh)' ;;\n")
		default:
			b.WriteString("        '*:file:_files' ;;\n")
		}
	}
	b.WriteString("  esac\n}\ncompdef _rhomark rhomark\n")
	return b.String()
}
