package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"regexp"
	"runtime/debug"
	"sort"
	"strconv"
	"strings"

	"github.com/rhomark/rhomark/harness"
)

// Exit statuses.
const (
	exitOK      = 0
	exitFailure = 1 // the work failed or was interrupted
	exitUsage   = 2 // bad command line or bad input
)

// version is the release of this build; module build information adds the
// VCS revision when there is one.
const version = "0.1.0-dev"

// commit is the commit the build was made from when the linker was told it
// (go build -ldflags "-X main.commit=$(git rev-parse HEAD)"), for builds
// that carry no VCS stamp; empty otherwise. Only the linker sets it.
var commit string

// env is what a command can touch: its streams.
type env struct {
	stdin          io.Reader
	stdout, stderr io.Writer
}

// command is one subcommand.
type command struct {
	name    string
	summary string
	run     func(e env, args []string) error
}

func commands() []command {
	return []command{
		{"run", "run a Monte Carlo scenario and summarise the estimators", runCmd},
		{"fit", "fit estimators to a CSV file of your own", fitCmd},
		{"scenarios", "list the shipped scenarios, or print one as a starting point", scenariosCmd},
		{"theory", "asymptotic efficiency, gross-error sensitivity and more for a psi", theoryCmd},
		{"tune", "solve for tuning constants: efficiency, minimax or breakdown targets", tuneCmd},
		{"check-psi", "check that a psi (built-in or your own expression) is well formed", checkPsiCmd},
		{"breakdown", "measure each estimator's finite-sample replacement breakdown point", breakdownCmd},
		{"compare", "compare two runs: summary within Monte Carlo error, or paired replicate by replicate", compareCmd},
		{"replay", "regenerate one replicate's dataset and trace each solver on it", replayCmd},
		{"merge", "merge the partial results of the shards of one run", mergeCmd},
		{"unpack", "print a replicate file's estimates as a tidy CSV", unpackCmd},
		{"report", "write an HTML report, a Markdown summary and figures of a run", reportCmd},
		{"completion", "print a bash or zsh completion script", completionCmd},
	}
}

// usageError marks an error as the user's: bad flags or bad input (exit 2).
type usageError struct{ err error }

func (u usageError) Error() string { return u.err.Error() }
func (u usageError) Unwrap() error { return u.err }

func usagef(format string, args ...any) error { return usageError{fmt.Errorf(format, args...)} }

// run dispatches a command line and returns the exit status.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	e := env{stdin: stdin, stdout: stdout, stderr: stderr}
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" || args[0] == "-help" {
		if len(args) > 1 {
			return run([]string{args[1], "--help"}, stdin, stdout, stderr)
		}
		writeHelp(stdout)
		if len(args) == 0 {
			return exitUsage
		}
		return exitOK
	}
	if args[0] == "--version" || args[0] == "-version" || args[0] == "version" {
		fmt.Fprintln(stdout, versionText())
		return exitOK
	}
	for _, c := range commands() {
		if c.name == args[0] {
			err := c.run(e, args[1:])
			return report(stderr, c.name, err)
		}
	}
	fmt.Fprintf(stderr, "rhomark: unknown command %q; run 'rhomark help' for the list\n", args[0])
	return exitUsage
}

// report prints err, if any, as one line per problem and returns the exit
// status.
func report(stderr io.Writer, cmd string, err error) int {
	if err == nil || errors.Is(err, flag.ErrHelp) {
		return exitOK
	}
	if errors.As(err, new(changed)) {
		return exitFailure
	}
	status := exitFailure // a failure or an interruption
	var u usageError
	if errors.As(err, &u) || isInputError(err) {
		status = exitUsage
	}
	for _, line := range strings.Split(strings.TrimRight(err.Error(), "\n"), "\n") {
		fmt.Fprintf(stderr, "rhomark %s: %s\n", cmd, line)
	}
	return status
}

// interrupted is returned when a run was stopped by a signal.
type interrupted struct{ msg string }

func (i interrupted) Error() string { return i.msg }

func writeHelp(w io.Writer) {
	fmt.Fprintf(w, "rhomark %s: Monte Carlo benchmarks for robust regression estimators\n\n", version)
	fmt.Fprintln(w, "Usage: rhomark <command> [options] [arguments]")
	fmt.Fprintln(w, "\nCommands:")
	cs := commands()
	sort.Slice(cs, func(i, j int) bool { return cs[i].name < cs[j].name })
	for _, c := range cs {
		fmt.Fprintf(w, "  %-11s %s\n", c.name, c.summary)
	}
	fmt.Fprintln(w, "\nrhomark <command> --help shows a command's options; rhomark --version its build.")
	fmt.Fprintln(w, "Exit status: 0 success, 1 failure or interruption, 2 bad usage or input.")
}

// toolVersion is the version recorded in results and partial files: the
// release and, where the build recorded it, the VCS revision, so that work
// from different builds is not merged or resumed together.
func toolVersion() string {
	v := version
	if bi, ok := debug.ReadBuildInfo(); ok && commitFromVCS(bi.Settings) == "" && commit != "" {
		c := commit
		if len(c) > 12 {
			c = c[:12]
		}
		v += "+" + c
	}
	if bi, ok := debug.ReadBuildInfo(); ok {
		for _, s := range bi.Settings {
			switch s.Key {
			case "vcs.revision":
				if len(s.Value) > 12 {
					v += "+" + s.Value[:12]
				} else {
					v += "+" + s.Value
				}
			case "vcs.modified":
				if s.Value == "true" {
					v += "-modified"
				}
			}
		}
	}
	return v
}

// commitFromVCS returns the VCS revision Go stamped, or "".
func commitFromVCS(settings []debug.BuildSetting) string {
	for _, st := range settings {
		if st.Key == "vcs.revision" {
			return st.Value
		}
	}
	return ""
}

// versionText returns the version line and the build information.
func versionText() string {
	var b strings.Builder
	fmt.Fprintf(&b, "rhomark %s", version)
	if bi, ok := debug.ReadBuildInfo(); ok {
		fmt.Fprintf(&b, " (%s", bi.GoVersion)
		for _, s := range bi.Settings {
			switch s.Key {
			case "vcs.revision":
				rev := s.Value
				if len(rev) > 12 {
					rev = rev[:12]
				}
				fmt.Fprintf(&b, ", revision %s", rev)
			case "vcs.modified":
				if s.Value == "true" {
					b.WriteString(", modified")
				}
			case "GOOS", "GOARCH":
				fmt.Fprintf(&b, ", %s=%s", s.Key, s.Value)
			}
		}
		b.WriteString(")")
	}
	var settings []debug.BuildSetting
	if bi, ok := debug.ReadBuildInfo(); ok {
		settings = bi.Settings
	}
	fmt.Fprintf(&b, "\n%s", commitLine(settings, commit))
	fmt.Fprintf(&b, "\nbuild %s (checkpoints and shards are resumed and merged only by the same build)", harness.BuildID())
	return b.String()
}

// commitLine names the commit a build was made from: from the VCS stamp Go
// records (go build or go install in a git checkout), else from the commit
// the linker was given, else it says that nothing records it. Go does not
// stamp go run or go test builds, nor builds with -buildvcs=false.
func commitLine(settings []debug.BuildSetting, linked string) string {
	var rev, modified string
	for _, s := range settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			if s.Value == "true" {
				modified = ", with uncommitted changes"
			}
		}
	}
	switch {
	case rev != "":
		return "commit " + rev + modified + " (from the VCS stamp)"
	case linked != "":
		return "commit " + linked + " (given to the linker with -X main.commit)"
	}
	return "commit unknown: this build carries no VCS stamp (go run and go test builds never do); " +
		"the build id below still identifies the executable"
}

// cmdFlags is a command's flag set with its help printer.
type cmdFlags struct {
	*flag.FlagSet
	help func()
}

// newFlags returns a flag set whose help text starts with synopsis. The
// flag package's own messages are silenced: parseFlags prints the full help
// for --help, and a one-line error otherwise.
func newFlags(e env, name, synopsis, about string) *cmdFlags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return &cmdFlags{FlagSet: fs, help: func() {
		fmt.Fprintf(e.stderr, "Usage: rhomark %s %s\n\n%s\n\nOptions:\n", name, synopsis, about)
		writeOptions(e.stderr, fs)
	}}
}

// writeOptions lists the options of fs as the README writes them: each on
// a line "  --name VALUE" (no VALUE for a switch), its description and
// default on the next. The flag package's own listing writes one dash.
func writeOptions(w io.Writer, fs *flag.FlagSet) {
	fs.VisitAll(func(f *flag.Flag) {
		value, usage := flag.UnquoteUsage(f)
		line := "  --" + f.Name
		if b, ok := f.Value.(interface{ IsBoolFlag() bool }); !ok || !b.IsBoolFlag() {
			if value == "" {
				value = "value"
			}
			line += " " + strings.ToUpper(value)
		}
		switch f.DefValue {
		case "", "0", "false", "0s":
		default:
			usage += " (default " + f.DefValue + ")"
		}
		fmt.Fprintf(w, "%s\n        %s\n", line, strings.ReplaceAll(usage, "\n", "\n        "))
	})
}

// flagInMessage finds an option named with one dash in the flag package's
// errors ("flag provided but not defined: -x", "invalid value ... for flag
// -x: ..."), to name it with two as everywhere else.
var flagInMessage = regexp.MustCompile(`(flag|for|argument:|defined:) -([A-Za-z0-9][A-Za-z0-9_-]*)`)

// parseFlags parses args, allowing flags after positional arguments, and
// returns the positional arguments.
func parseFlags(fs *cmdFlags, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.help()
				return nil, err
			}
			msg := flagInMessage.ReplaceAllString(err.Error(), "$1 --$2")
			return nil, usageError{fmt.Errorf("%s (rhomark %s --help lists the options)", msg, fs.Name())}
		}
		args = fs.Args()
		if len(args) == 0 {
			return pos, nil
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
}

// seedFlag is the value of every --seed option: an unsigned 64-bit integer
// written in decimal digits only (no sign, exponent, underscore, base
// prefix or fraction), so that "1e3" or "0x10" is refused rather than read
// as something else.
type seedFlag struct {
	value uint64
	set   bool
}

// String returns the seed, or "" when it was not given.
func (s *seedFlag) String() string {
	if s == nil || !s.set {
		return ""
	}
	return strconv.FormatUint(s.value, 10)
}

// Set parses a seed.
func (s *seedFlag) Set(v string) error {
	u, err := parseSeed(v)
	if err != nil {
		return err
	}
	s.value, s.set = u, true
	return nil
}

// get returns the seed and whether it was given.
func (s *seedFlag) get() (uint64, bool) { return s.value, s.set }

// parseSeed reads a seed: decimal digits, 0 to 18446744073709551615.
func parseSeed(v string) (uint64, error) {
	const valid = "want a whole number from 0 to 18446744073709551615 in decimal digits"
	if v == "" || strings.TrimLeft(v, "0123456789") != "" {
		return 0, fmt.Errorf("%q is not a seed: %s", v, valid)
	}
	u, err := strconv.ParseUint(v, 10, 64)
	if err != nil {
		return 0, fmt.Errorf("%q is too large for a seed: %s", v, valid)
	}
	return u, nil
}

// addSeedFlag defines a --seed-like option on fs with the shared parser.
func addSeedFlag(fs *flag.FlagSet, name, usage string) *seedFlag {
	s := new(seedFlag)
	fs.Var(s, name, usage)
	return s
}

// or returns the seed given on the command line, or def when none was.
func (s *seedFlag) or(def uint64) uint64 {
	if s.set {
		return s.value
	}
	return def
}
