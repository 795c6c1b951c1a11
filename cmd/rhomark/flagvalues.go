package main

import (
	"flag"
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/rhomark/rhomark/psi"
)

// Every option whose value needs more than the flag package's own parsing
// is a flag.Value below, so that a bad value is refused while the command
// line is parsed, with the option's name (the flag package adds it:
// `invalid value "x" for flag --name: ...`) and what would be valid, and
// no command parses an option's text after flag.Parse.

// checked is an option of type T whose value must pass ok; valid says in
// words what ok accepts.
type checked[T any] struct {
	v      *T
	parse  func(string) (T, error)
	format func(T) string
	ok     func(T) bool
	valid  string
}

// String returns the value as the option's default is shown.
func (c *checked[T]) String() string {
	if c == nil || c.v == nil {
		return ""
	}
	return c.format(*c.v)
}

// Set parses and checks a value.
func (c *checked[T]) Set(s string) error {
	v, err := c.parse(s)
	if err != nil || !c.ok(v) {
		return fmt.Errorf("want %s", c.valid)
	}
	*c.v = v
	return nil
}

// addInt defines an integer option that must pass ok (valid in words).
func addInt(fs *flag.FlagSet, name string, def int, usage string, ok func(int) bool, valid string) *int {
	v := def
	fs.Var(&checked[int]{v: &v, parse: func(s string) (int, error) {
		n, err := strconv.ParseInt(s, 0, strconv.IntSize)
		return int(n), err
	}, format: strconv.Itoa, ok: ok, valid: valid}, name, usage)
	return &v
}

// addFloat defines a number option that must pass ok (valid in words).
// NaN never passes.
func addFloat(fs *flag.FlagSet, name string, def float64, usage string, ok func(float64) bool, valid string) *float64 {
	v := def
	fs.Var(&checked[float64]{v: &v, parse: func(s string) (float64, error) { return strconv.ParseFloat(s, 64) },
		format: func(f float64) string { return strconv.FormatFloat(f, 'g', -1, 64) },
		ok:     func(f float64) bool { return !math.IsNaN(f) && ok(f) }, valid: valid}, name, usage)
	return &v
}

// addDuration defines a duration option that must pass ok (valid in words).
func addDuration(fs *flag.FlagSet, name string, def time.Duration, usage string, ok func(time.Duration) bool, valid string) *time.Duration {
	v := def
	fs.Var(&checked[time.Duration]{v: &v, parse: time.ParseDuration, format: time.Duration.String, ok: ok, valid: valid}, name, usage)
	return &v
}

// atLeast returns a check that a number is min or more.
func atLeast[T int | float64](min T) func(T) bool { return func(v T) bool { return v >= min } }

// between returns a check that a number lies in [lo, hi].
func between[T int | float64](lo, hi T) func(T) bool {
	return func(v T) bool { return v >= lo && v <= hi }
}

// shardFlag is --shard I/M: share I of M (0 ≤ I < M).
type shardFlag struct {
	i, m int
	set  bool
}

// String returns I/M, or "" when not given.
func (s *shardFlag) String() string {
	if s == nil || !s.set {
		return ""
	}
	return fmt.Sprintf("%d/%d", s.i, s.m)
}

// Set parses I/M, written in decimal digits.
func (s *shardFlag) Set(v string) error {
	is, ms, ok := strings.Cut(v, "/")
	i, err1 := strconv.Atoi(is)
	m, err2 := strconv.Atoi(ms)
	if !ok || err1 != nil || err2 != nil || m < 1 || i < 0 || i >= m || fmt.Sprintf("%d/%d", i, m) != v {
		return fmt.Errorf("want I/M with 0 ≤ I < M, for example 2/8")
	}
	s.i, s.m, s.set = i, m, true
	return nil
}

// numberList is a comma-separated list of finite numbers (--tuning,
// --kinks).
type numberList []float64

// String returns the list as it would be written.
func (l *numberList) String() string {
	if l == nil {
		return ""
	}
	parts := make([]string, len(*l))
	for i, v := range *l {
		parts[i] = strconv.FormatFloat(v, 'g', -1, 64)
	}
	return strings.Join(parts, ",")
}

// Set parses the list, replacing any earlier value of the option.
func (l *numberList) Set(s string) error {
	var out []float64
	for _, part := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(part), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%q is not a finite number; want finite numbers separated by commas", part)
		}
		out = append(out, v)
	}
	*l = out
	return nil
}

// familyName is --psi: the name of a built-in psi family.
type familyName string

// String returns the name.
func (f *familyName) String() string {
	if f == nil {
		return ""
	}
	return string(*f)
}

// Set accepts the name of a built-in family.
func (f *familyName) Set(s string) error {
	if _, ok := psi.LookupFamily(s); !ok {
		return fmt.Errorf("unknown family; valid: %s (or --psi-expr for your own)", strings.Join(psi.FamilyNames(), ", "))
	}
	*f = familyName(s)
	return nil
}

// sweepRange is --sweep FROM:TO[:STEPS] (11 steps unless given).
type sweepRange struct {
	from, to float64
	steps    int
}

// maxSweepSteps bounds the steps of --sweep.
const maxSweepSteps = 1000

// String returns the range as it would be written.
func (r *sweepRange) String() string {
	if r == nil || r.steps == 0 {
		return ""
	}
	return fmt.Sprintf("%g:%g:%d", r.from, r.to, r.steps)
}

// Set parses FROM:TO or FROM:TO:STEPS.
func (r *sweepRange) Set(s string) error {
	parts := strings.Split(s, ":")
	if len(parts) < 2 || len(parts) > 3 {
		return fmt.Errorf("want FROM:TO or FROM:TO:STEPS")
	}
	lo, err1 := strconv.ParseFloat(parts[0], 64)
	hi, err2 := strconv.ParseFloat(parts[1], 64)
	steps := 11
	var err3 error
	if len(parts) == 3 {
		steps, err3 = strconv.Atoi(parts[2])
	}
	if err1 != nil || err2 != nil || err3 != nil {
		return fmt.Errorf("FROM and TO must be numbers and STEPS a whole number")
	}
	if steps < 2 || steps > maxSweepSteps {
		return fmt.Errorf("STEPS must be from 2 to %d", maxSweepSteps)
	}
	r.from, r.to, r.steps = lo, hi, steps
	return nil
}

// figureFile is --plot: a file name ending in .svg or .png.
type figureFile string

// String returns the file name.
func (f *figureFile) String() string {
	if f == nil {
		return ""
	}
	return string(*f)
}

// Set accepts a name ending in .svg or .png (any case).
func (f *figureFile) Set(s string) error {
	if ext := strings.ToLower(filepath.Ext(s)); ext != ".svg" && ext != ".png" {
		return fmt.Errorf("want a .svg or .png file")
	}
	*f = figureFile(s)
	return nil
}
