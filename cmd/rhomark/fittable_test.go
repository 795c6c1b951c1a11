package main

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"unicode/utf8"
)

// fmtFitTable prints one fit of the table with fmt, as fit did before
// appendFitTable: the reference that appendFitTable must match.
func fmtFitTable(w io.Writer, f *fitJSON) {
	{
		fmt.Fprintf(w, "\n ▸ group %s · %d rows · %s", f.Group, f.Rows, f.Status)
		if f.Error != "" {
			fmt.Fprintf(w, ": %s\n", f.Error)
			return
		}
		if f.Iterations > 0 {
			fmt.Fprintf(w, " after %d iterations", f.Iterations)
		}
		fmt.Fprintf(w, " · scale %.6g", f.Scale)
		if f.SRefinement != "" {
			fmt.Fprintf(w, " · S refinement %s after %d steps", f.SRefinement, f.SSteps)
		}
		fmt.Fprintln(w)
		width := len("coefficient")
		for _, n := range f.Order {
			width = max(width, utf8.RuneCountInString(n))
		}
		if f.StandardErrors != nil {
			fmt.Fprintf(w, "   %-*s %14s %12s   %s\n", width, "coefficient", "estimate", "std. error", "95% interval")
		} else {
			fmt.Fprintf(w, "   %-*s %14s\n", width, "coefficient", "estimate")
		}
		for _, n := range f.Order {
			fmt.Fprintf(w, "   %-*s %14.8g", width, n, f.Coefficients[n])
			if f.StandardErrors != nil {
				iv := f.Intervals[n]
				fmt.Fprintf(w, " %12.5g   [%.6g, %.6g]", f.StandardErrors[n], iv[0], iv[1])
			}
			fmt.Fprintln(w)
		}
		if f.StandardErrors != nil {
			fmt.Fprintf(w, "   intervals: %s\n", f.IntervalRule)
		} else {
			fmt.Fprintf(w, "   no standard errors or intervals: %s\n", f.NoStandardErrors)
		}
		var flagged []string
		for _, o := range f.Observations {
			if o.Flag {
				s := fmt.Sprintf("row %d (r/σ %+.3g", o.Row, o.Scaled)
				if !math.IsNaN(float64(o.Weight)) {
					s += fmt.Sprintf(", weight %.3g", o.Weight)
				}
				flagged = append(flagged, s+")")
			}
		}
		if len(flagged) == 0 {
			fmt.Fprintf(w, "   outliers: none of %d rows\n", f.Rows)
		} else {
			fmt.Fprintf(w, "   outliers: %d of %d rows: %s\n", len(flagged), f.Rows, strings.Join(flagged, ", "))
		}
	}
}

// TestFitTableFmt: appendFitTable writes what fmt writes for one fit,
// for random records: numbers of every size and sign, zeros, NaN and
// infinities; names wider and narrower than the column, in ASCII and not;
// fits with and without standard errors, failed fits, S refinements, and
// flagged rows with and without weights.
func TestFitTableFmt(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 3))
	specials := []float64{0, math.Copysign(0, -1), math.NaN(), math.Inf(1), math.Inf(-1), 1e21, 1e-7, 123456.5, -0.00012345678, 99999.95, 1e100, 5e-324}
	num := func() jsonFloat {
		if rng.IntN(4) == 0 {
			return jsonFloat(specials[rng.IntN(len(specials))])
		}
		return jsonFloat(rng.NormFloat64() * math.Pow(10, float64(rng.IntN(30)-15)))
	}
	names := []string{"intercept", "x", "flow.rate", "température", "a_very_long_predictor_name", "σ", "x1"}
	for k := 0; k < 3000; k++ {
		f := fitJSON{Group: names[rng.IntN(len(names))] + "/g", Rows: rng.IntN(200), Status: "converged", Iterations: rng.IntN(3) * rng.IntN(50), Scale: num()}
		switch rng.IntN(8) {
		case 0:
			f.Status, f.Error = "not-fitted", "too few rows"
		case 1:
			f.SRefinement, f.SSteps = "converged", rng.IntN(30)
		}
		for _, n := range names[:1+rng.IntN(len(names))] {
			f.Order = append(f.Order, n)
		}
		f.Coefficients = map[string]jsonFloat{}
		for _, n := range f.Order {
			f.Coefficients[n] = num()
		}
		if rng.IntN(3) > 0 {
			f.StandardErrors, f.Intervals, f.IntervalRule = map[string]jsonFloat{}, map[string][2]jsonFloat{}, "normal quantile 1.96"
			for _, n := range f.Order {
				f.StandardErrors[n] = num()
				f.Intervals[n] = [2]jsonFloat{num(), num()}
			}
		} else {
			f.NoStandardErrors = "the fit did not converge"
		}
		for i := rng.IntN(30); i > 0; i-- {
			o := fitObservation{Row: rng.IntN(1000), Scaled: num(), Weight: num(), Flag: rng.IntN(3) == 0}
			if rng.IntN(4) == 0 {
				o.Weight = jsonFloat(math.NaN())
			}
			f.Observations = append(f.Observations, o)
		}
		var want bytes.Buffer
		fmtFitTable(&want, &f)
		if got := appendFitTable(nil, &f); string(got) != want.String() {
			t.Fatalf("record %d:\n%s\nwant\n%s", k, got, want.String())
		}
	}
}

// TestFitTableRuneWidth: the coefficient column is as wide as its widest
// name in characters, not bytes: a non-ASCII name gets no extra padding.
func TestFitTableRuneWidth(t *testing.T) {
	f := fitJSON{Group: "bench", Rows: 6, Status: "solved", Order: []string{"intercept", "débit_réf"},
		Coefficients: map[string]jsonFloat{"intercept": 0.5, "débit_réf": 2}, NoStandardErrors: "the method has none"}
	got := string(appendFitTable(nil, &f))
	// "débit_réf" is 9 characters (11 bytes): the column is "coefficient"'s 11.
	for _, want := range []string{
		"\n   coefficient       estimate\n",
		"\n   intercept              0.5\n",
		"\n   débit_réf                2\n",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("table lacks %q:\n%s", want, got)
		}
	}
	f.Order[1] = "débit_mètre_réf" // 15 characters, 18 bytes
	f.Coefficients = map[string]jsonFloat{"intercept": 0.5, "débit_mètre_réf": 2}
	got = string(appendFitTable(nil, &f))
	for _, want := range []string{
		"\n   coefficient           estimate\n",
		"\n   débit_mètre_réf              2\n",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("table lacks %q:\n%s", want, got)
		}
	}
}
