package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/scenarios"
)

func scenariosCmd(e env, args []string) error {
	fs := newFlags(e, "scenarios", "[NAME] [options]",
		"Without NAME, lists the shipped scenarios. With NAME, prints that scenario's\nYAML, a starting point for one of your own.")
	write := fs.String("write", "", "write the scenario to this `directory` as NAME.yaml instead of printing it")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch len(pos) {
	case 0:
		entries, err := scenarios.Library()
		if err != nil {
			return err
		}
		for _, en := range entries {
			head := fmt.Sprintf("%-18s %3d cell(s)  ", en.Name, en.Cells)
			lines := wrapWords(firstSentence(en.About), listWidth-len(head))
			indent := strings.Repeat(" ", len(head))
			for i, l := range lines {
				if i == 0 {
					fmt.Fprintf(e.stdout, "%s%s\n", head, l)
				} else {
					fmt.Fprintf(e.stdout, "%s%s\n", indent, l)
				}
			}
			if len(lines) == 0 {
				fmt.Fprintln(e.stdout, strings.TrimRight(head, " "))
			}
		}
		fmt.Fprintln(e.stdout, "\nrhomark scenarios NAME prints one; rhomark run NAME runs it.")
		return nil
	case 1:
		data, err := scenarios.LibraryFile(pos[0])
		if err != nil {
			return usageError{err}
		}
		if *write == "" {
			_, err = e.stdout.Write(data)
			return err
		}
		if err := os.MkdirAll(*write, 0o755); err != nil {
			return err
		}
		path := filepath.Join(*write, pos[0]+".yaml")
		if err := atomicfile.WriteFile(path, data); err != nil {
			return err
		}
		fmt.Fprintf(e.stderr, "rhomark scenarios: wrote %s\n", path)
		return nil
	}
	return usagef("want at most one scenario name, got %d", len(pos))
}

// listWidth is the width the scenario list is wrapped to.
const listWidth = 80

// firstSentence returns the first sentence of text, its lines joined: up to
// the first '.', '!' or '?' that is followed by the end of the text, or by
// white space and a capital letter, so that "1.345", "e.g. a" and "(x, y)."
// inside a sentence do not end it.
func firstSentence(text string) string {
	words := strings.Fields(text)
	for i, w := range words {
		if !strings.ContainsAny(w[len(w)-1:], ".!?") {
			continue
		}
		if i == len(words)-1 {
			break
		}
		if next := []rune(words[i+1]); unicode.IsUpper(next[0]) {
			return strings.Join(words[:i+1], " ")
		}
	}
	return strings.Join(words, " ")
}

// wrapWords breaks text into lines of at most width runes, between words
// (a longer word gets a line of its own).
func wrapWords(text string, width int) []string {
	var lines []string
	var line string
	for _, w := range strings.Fields(text) {
		switch {
		case line == "":
			line = w
		case utf8.RuneCountInString(line)+1+utf8.RuneCountInString(w) <= width:
			line += " " + w
		default:
			lines = append(lines, line)
			line = w
		}
	}
	if line != "" {
		lines = append(lines, line)
	}
	return lines
}
