package main

import (
	"slices"
	"strings"
	"testing"
)

// TestBadFlagValues: a bad option value is refused while the command line
// is parsed, with exit status 2, the option's name and what is valid.
func TestBadFlagValues(t *testing.T) {
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"run", "flow-meter", "--workers", "1025"}, "flag --workers: want a number of workers from 1 to 1024"},
		{[]string{"run", "flow-meter", "--replicates", "-3"}, "flag --replicates: want a whole number of replicates"},
		{[]string{"run", "flow-meter", "--replicates", "1e3"}, "flag --replicates: want a whole number"},
		{[]string{"run", "flow-meter", "--checkpoint-every", "-1s"}, "flag --checkpoint-every: want an interval of 0 or more"},
		{[]string{"run", "flow-meter", "--shard", "3/2"}, "flag --shard: want I/M with 0 ≤ I < M"},
		{[]string{"run", "flow-meter", "--shard", "1/2/3"}, "flag --shard: want I/M"},
		{[]string{"run", "flow-meter", "--shards", "-1"}, "flag --shards: want a number of shares from 1 to 1000000"},
		{[]string{"merge", "x", "--target-efficiency", "1.5"}, "flag --target-efficiency: want a number above 0 and at most 1"},
		{[]string{"theory", "--psi", "hubber"}, "flag --psi: unknown family; valid: andrews, bisquare"},
		{[]string{"theory", "--tuning", "1,x"}, `flag --tuning: "x" is not a finite number`},
		{[]string{"check-psi", "--psi-expr", "r", "--kinks", "1,Inf"}, `flag --kinks: "Inf" is not a finite number`},
		{[]string{"tune", "--efficiency", "1"}, "flag --efficiency: want a target strictly between 0 and 1"},
		{[]string{"tune", "--minimax", "0"}, "flag --minimax: want a contamination fraction strictly between 0 and 1"},
		{[]string{"tune", "--breakdown", "0.6"}, "flag --breakdown: want a target in (0, 0.5]"},
		{[]string{"tune", "--sweep", "1"}, "flag --sweep: want FROM:TO or FROM:TO:STEPS"},
		{[]string{"tune", "--sweep", "1:x"}, "flag --sweep: FROM and TO must be numbers"},
		{[]string{"tune", "--sweep", "1:2:1"}, "flag --sweep: STEPS must be from 2 to 1000"},
		{[]string{"tune", "--sweep", "1:2", "--plot", "p.pdf"}, "flag --plot: want a .svg or .png file"},
		{[]string{"compare", "a", "b", "--threshold", "0"}, "flag --threshold: want a positive number"},
		{[]string{"compare", "a", "b", "--tolerance", "-1"}, "flag --tolerance: want a non-negative number"},
		{[]string{"compare", "a", "b", "--failure-level", "1"}, "flag --failure-level: want a level strictly between 0 and 1"},
		{[]string{"compare", "a", "b", "--list", "-1"}, "flag --list: want a whole number, 0 or more"},
		{[]string{"breakdown", "flow-meter", "--directions", "1001"}, "flag --directions: want a number of directions from 0 to 1000"},
		{[]string{"breakdown", "flow-meter", "--replicate", "-1"}, "flag --replicate: want a replicate number, 0 or more"},
		{[]string{"replay", "flow-meter", "--replicate", "-1"}, "flag --replicate: want a replicate number, 0 or more"},
	}
	for _, c := range cases {
		code, _, errs := rhomark(t, c.args...)
		if code != exitUsage || !strings.Contains(errs, c.want) || !strings.Contains(errs, "--help lists the options") {
			t.Errorf("%q: exit %d, %q; want exit %d and %q", c.args, code, errs, exitUsage, c.want)
		}
	}
}

// TestFlagValuesParse: the values that are valid are read as written.
func TestFlagValuesParse(t *testing.T) {
	var sh shardFlag
	if err := sh.Set("2/8"); err != nil || sh.i != 2 || sh.m != 8 || sh.String() != "2/8" {
		t.Errorf("--shard 2/8: %+v, %v", sh, err)
	}
	var sw sweepRange
	if err := sw.Set("0.5:4"); err != nil || sw != (sweepRange{0.5, 4, 11}) {
		t.Errorf("--sweep 0.5:4: %+v, %v", sw, err)
	}
	if err := sw.Set("1:3:5"); err != nil || sw != (sweepRange{1, 3, 5}) {
		t.Errorf("--sweep 1:3:5: %+v, %v", sw, err)
	}
	var l numberList
	if err := l.Set(" 1.5, 3 ,4.5"); err != nil || !slices.Equal(l, numberList{1.5, 3, 4.5}) {
		t.Errorf("--tuning ' 1.5, 3 ,4.5': %v, %v", l, err)
	}
	var f familyName
	if err := f.Set("bisquare"); err != nil || f != "bisquare" {
		t.Errorf("--psi bisquare: %q, %v", f, err)
	}
}
