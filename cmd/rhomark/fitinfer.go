package main

import (
	"encoding/csv"
	"fmt"
	"io"
	"maps"
	"math"
	"slices"
	"strconv"
	"unicode/utf8"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"github.com/rhomark/rhomark/estimators"
)

// addInference adds standard errors and 95% intervals to fj, from the same
// covariance estimate (Workspace.StandardErrors) and quantiles a run uses
// for its coverage: Student's t on n−p degrees of freedom for least
// squares, the normal quantile (Wald) for M-estimators. ws must hold the
// fit just made. Where there is no covariance estimate it says why. The
// maps are rec's and the scratch buf's, which the next call reuses.
func addInference(fj *fitJSON, est estimators.Estimator, x *mat.Dense, ws *estimators.Workspace, res *estimators.Result, names []string, buf *fitBuffers, rec *fitRecord) {
	n, p := x.Dims()
	se := grow(&buf.se, p)
	clear(se)
	if !ws.StandardErrors(est, x, res, se) {
		fj.NoStandardErrors = est.NoStandardErrorsReason(res, n, p)
		return
	}
	q, rule := est.Method.Info().Inference.Quantile(0.975, n, p)
	fj.IntervalRule = rule
	fj.StandardErrors = numMap(&rec.standardErrors)
	if rec.intervals == nil {
		rec.intervals = map[string][2]jsonFloat{}
	}
	clear(rec.intervals)
	fj.Intervals = rec.intervals
	for k, name := range names {
		b := res.Coefficients[k]
		fj.StandardErrors[name] = jsonFloat(se[k])
		fj.Intervals[name] = [2]jsonFloat{jsonFloat(b - q*se[k]), jsonFloat(b + q*se[k])}
	}
}

// observations returns each row's residual, scaled residual, final weight
// and outlier flag (|residual/scale| > cut) after a fit of est. Row and
// Line are left for the caller. buf's r and w are scratch, and the
// observations are in *obs, reallocated if it is too short.
func observations(est estimators.Estimator, x *mat.Dense, y []float64, res *estimators.Result, cut float64, buf *fitBuffers, obs *[]fitObservation) []fitObservation {
	n, p := x.Dims()
	r := grow(&buf.r, n)
	raw := x.RawMatrix()
	beta := blas64.Vector{N: p, Inc: 1, Data: res.Coefficients}
	for i := range r {
		// mat.Dot of a row view and the coefficients, without building
		// them: the same blas64.Dot.
		r[i] = y[i] - blas64.Dot(blas64.Vector{N: p, Inc: 1, Data: raw.Data[i*raw.Stride : i*raw.Stride+p]}, beta)
	}
	sigma := res.Scale
	scaled := func(v float64) float64 {
		if !(sigma > 0) || math.IsInf(sigma, 0) {
			return math.NaN()
		}
		return v / sigma
	}
	w := grow(&buf.w, n)
	est.Weights(r, sigma, p, w)
	out := grow(obs, n)
	for i, v := range r {
		u := scaled(v)
		out[i] = fitObservation{Resid: jsonFloat(v), Scaled: jsonFloat(u), Weight: jsonFloat(w[i]), Flag: math.Abs(u) > cut}
	}
	return out
}

// weightsHeader returns the header of the --weights CSV: group (with
// --group), row, line, residual, scaled residual, weight and outlier flag.
func weightsHeader(withGroup bool) []string {
	head := []string{"row", "line", "residual", "scaled_residual", "weight", "outlier"}
	if withGroup {
		head = append([]string{"group"}, head...)
	}
	return head
}

// writeWeightsCSV writes each fitted row of fit to w as CSV, in the
// columns of weightsHeader. Numbers are in the shortest form that reads
// back to the same float64; a missing value (no weight, no scale) is
// empty.
func writeWeightsCSV(w *csv.Writer, fit *fitJSON, withGroup bool) {
	f := func(v jsonFloat) string {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return ""
		}
		return strconv.FormatFloat(float64(v), 'g', -1, 64)
	}
	for _, o := range fit.Observations {
		rec := []string{strconv.Itoa(o.Row), strconv.Itoa(o.Line), f(o.Resid), f(o.Scaled), f(o.Weight), strconv.FormatBool(o.Flag)}
		if withGroup {
			rec = append([]string{fit.Group}, rec...)
		}
		w.Write(rec)
	}
}

// fit's table, for a terminal, is the rules in a header
// (writeFitTableHead), then per fit the coefficients with their standard
// errors and 95% intervals, and the flagged rows (writeFitTableFit), and a
// closing line (writeFitTableTail).

// writeFitTableHead prints the table's header: the estimator's rules.
func writeFitTableHead(w io.Writer, es fitEstimator) {
	title := es.Method
	if es.psiDesc != "" {
		title += " · " + es.psiDesc
	}
	fmt.Fprintf(w, "fit · %s\n", title)
	fmt.Fprintf(w, "  start    %s\n", es.Start)
	fmt.Fprintf(w, "  scale    %s\n", es.ScaleRule)
	fmt.Fprintf(w, "  weights  %s\n", es.Weights)
	fmt.Fprintf(w, "  outliers rows with |residual / scale| > %s\n", strconv.FormatFloat(es.OutlierCut, 'g', -1, 64))
}

// writeFitTableFit prints one fit of the table (appendFitTable).
func writeFitTableFit(w io.Writer, f *fitJSON, scratch *[]byte) error {
	*scratch = appendFitTable((*scratch)[:0], f)
	_, err := w.Write(*scratch)
	return err
}

// appendFitTable appends one fit of the table to b: the group's line, its
// coefficients, with their standard errors and intervals when it has
// them, and its flagged rows. Numbers are laid out as fmt's %g verbs with
// the widths, precisions and flags named beside them (TestFitTableFmt
// holds it to that), without fmt's allocations.
func appendFitTable(b []byte, f *fitJSON) []byte {
	b = append(b, "\n ▸ group "...)
	b = append(b, f.Group...)
	b = append(b, " · "...)
	b = strconv.AppendInt(b, int64(f.Rows), 10)
	b = append(b, " rows · "...)
	b = append(b, f.Status...)
	if f.Error != "" {
		b = append(b, ": "...)
		b = append(b, f.Error...)
		return append(b, '\n')
	}
	if f.Iterations > 0 {
		b = append(b, " after "...)
		b = strconv.AppendInt(b, int64(f.Iterations), 10)
		b = append(b, " iterations"...)
	}
	b = append(b, " · scale "...)
	b = appendG(b, float64(f.Scale), 6, 0, false) // %.6g
	if f.SRefinement != "" {
		b = append(b, " · S refinement "...)
		b = append(b, f.SRefinement...)
		b = append(b, " after "...)
		b = strconv.AppendInt(b, int64(f.SSteps), 10)
		b = append(b, " steps"...)
	}
	b = append(b, '\n')
	width := len("coefficient")
	for _, n := range f.Order {
		width = max(width, utf8.RuneCountInString(n)) // padded by runes
	}
	b = append(b, "   "...)
	b = appendLeft(b, "coefficient", width) // %-*s
	if f.StandardErrors != nil {
		b = append(b, "       estimate   std. error   95% interval\n"...) // " %14s %12s   %s"
	} else {
		b = append(b, "       estimate\n"...) // " %14s"
	}
	for _, n := range f.Order {
		b = append(b, "   "...)
		b = appendLeft(b, n, width)
		b = append(b, ' ')
		b = appendG(b, float64(f.Coefficients[n]), 8, 14, false) // %14.8g
		if f.StandardErrors != nil {
			iv := f.Intervals[n]
			b = append(b, ' ')
			b = appendG(b, float64(f.StandardErrors[n]), 5, 12, false) // %12.5g
			b = append(b, "   ["...)
			b = appendG(b, float64(iv[0]), 6, 0, false) // %.6g
			b = append(b, ", "...)
			b = appendG(b, float64(iv[1]), 6, 0, false) // %.6g
			b = append(b, ']')
		}
		b = append(b, '\n')
	}
	if f.StandardErrors != nil {
		b = append(b, "   intervals: "...)
		b = append(b, f.IntervalRule...)
	} else {
		b = append(b, "   no standard errors or intervals: "...)
		b = append(b, f.NoStandardErrors...)
	}
	b = append(b, '\n')
	flagged := 0
	for _, o := range f.Observations {
		if o.Flag {
			flagged++
		}
	}
	if flagged == 0 {
		b = append(b, "   outliers: none of "...)
		b = strconv.AppendInt(b, int64(f.Rows), 10)
		return append(b, " rows\n"...)
	}
	b = append(b, "   outliers: "...)
	b = strconv.AppendInt(b, int64(flagged), 10)
	b = append(b, " of "...)
	b = strconv.AppendInt(b, int64(f.Rows), 10)
	b = append(b, " rows: "...)
	first := true
	for _, o := range f.Observations {
		if !o.Flag {
			continue
		}
		if !first {
			b = append(b, ", "...)
		}
		first = false
		b = append(b, "row "...)
		b = strconv.AppendInt(b, int64(o.Row), 10)
		b = append(b, " (r/σ "...)
		b = appendG(b, float64(o.Scaled), 3, 0, true) // %+.3g
		if !math.IsNaN(float64(o.Weight)) {
			b = append(b, ", weight "...)
			b = appendG(b, float64(o.Weight), 3, 0, false) // %.3g
		}
		b = append(b, ')')
	}
	return append(b, '\n')
}

// appendG appends v as fmt's %.{prec}g does, right-aligned in width
// characters (%{width}.{prec}g), with a sign always when plus (%+.{prec}g).
func appendG(b []byte, v float64, prec, width int, plus bool) []byte {
	var buf [32]byte
	num := strconv.AppendFloat(buf[:0], v, 'g', prec, 64)
	// strconv signs infinities, as fmt shows them; a plus adds a sign to
	// anything else not negative, NaN included.
	sign := plus && num[0] != '+' && num[0] != '-'
	n := len(num)
	if sign {
		n++
	}
	for ; n < width; n++ {
		b = append(b, ' ')
	}
	if sign {
		b = append(b, '+')
	}
	return append(b, num...)
}

// appendLeft appends s left-aligned in width characters (runes), as fmt's
// %-*s does.
func appendLeft(b []byte, s string, width int) []byte {
	b = append(b, s...)
	for n := utf8.RuneCountInString(s); n < width; n++ {
		b = append(b, ' ')
	}
	return b
}

// writeFitTableTail prints the table's closing line.
func writeFitTableTail(w io.Writer) {
	fmt.Fprintln(w, "\nEvery row's residual, weight and flag: --json, or --weights FILE.")
}

// The JSON of fit is written by hand, in append style: the same bytes
// that encoding/json's Encoder with SetIndent("", "  ") writes for a
// fitOutput (TestFitJSONMatchesEncoder holds it to that), without its
// reflection, its whole-document buffer and its second, indenting pass,
// which took most of the time of a fit over many groups.

// jsonIndent appends indented JSON: each member or element on a line of
// its own, two spaces a level, and empty objects and arrays as {} and [].
type jsonIndent struct {
	b     []byte
	depth int
	first bool // no member or element yet at this level
}

// next starts a member or an element: a comma after the previous one, a
// new line and the indent.
func (j *jsonIndent) next() {
	if !j.first {
		j.b = append(j.b, ',')
	}
	j.first = false
	j.newline()
}

func (j *jsonIndent) newline() {
	if n := 1 + 2*j.depth; n <= len(jsonIndents) {
		j.b = append(j.b, jsonIndents[:n]...)
		return
	}
	j.b = append(j.b, '\n')
	for i := 0; i < j.depth; i++ {
		j.b = append(j.b, ' ', ' ')
	}
}

// jsonIndents starts the lines of the first levels: a new line and two
// spaces a level.
const jsonIndents = "\n                                                                "

// member starts a member whose key needs no escaping, given quoted and
// with its colon and space: `"key": `.
func (j *jsonIndent) member(quoted string) {
	j.next()
	j.b = append(j.b, quoted...)
}

// key starts the member k.
func (j *jsonIndent) key(k string) {
	j.next()
	j.b = appendJSONString(j.b, k)
	j.b = append(j.b, ':', ' ')
}

// open starts an object ({) or array ([).
func (j *jsonIndent) open(c byte) {
	j.b = append(j.b, c)
	j.depth++
	j.first = true
}

// close ends an object (}) or array (]).
func (j *jsonIndent) close(c byte) {
	j.depth--
	if !j.first {
		j.newline()
	}
	j.b = append(j.b, c)
	j.first = false
}

func (j *jsonIndent) str(k, v string) {
	j.key(k)
	j.b = appendJSONString(j.b, v)
}

func (j *jsonIndent) int(k string, v int) {
	j.key(k)
	j.b = strconv.AppendInt(j.b, int64(v), 10)
}

func (j *jsonIndent) bool(k string, v bool) {
	j.key(k)
	j.b = strconv.AppendBool(j.b, v)
}

func (j *jsonIndent) num(k string, v jsonFloat) {
	j.key(k)
	j.b = appendJSONNum(j.b, v)
}

// appendJSONNum appends v as results.Num encodes it: a number, or null
// when it is not finite.
func appendJSONNum(b []byte, v jsonFloat) []byte {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return append(b, "null"...)
	}
	return appendJSONFloat(b, f)
}

// appendJSONFloat appends a finite f as encoding/json does: the shortest
// decimal that reads back to f, in exponent form below 1e-6 or from 1e21,
// with no leading zero in a negative exponent.
func appendJSONFloat(b []byte, f float64) []byte {
	format := byte('f')
	if abs := math.Abs(f); abs != 0 && (abs < 1e-6 || abs >= 1e21) {
		format = 'e'
	}
	b = strconv.AppendFloat(b, f, format, -1, 64)
	if format == 'e' {
		if n := len(b); n >= 4 && b[n-4] == 'e' && b[n-3] == '-' && b[n-2] == '0' {
			b[n-2] = b[n-1]
			b = b[:n-1]
		}
	}
	return b
}

// appendJSONString appends s quoted as encoding/json quotes strings (with
// its default escaping of <, > and &): control characters, quote and
// backslash escaped, invalid UTF-8 replaced by U+FFFD, and U+2028 and
// U+2029 escaped.
func appendJSONString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	start := 0
	for i := 0; i < len(s); {
		if c := s[i]; c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' && c != '<' && c != '>' && c != '&' {
				i++
				continue
			}
			b = append(b, s[start:i]...)
			switch c {
			case '\\', '"':
				b = append(b, '\\', c)
			case '\b':
				b = append(b, '\\', 'b')
			case '\f':
				b = append(b, '\\', 'f')
			case '\n':
				b = append(b, '\\', 'n')
			case '\r':
				b = append(b, '\\', 'r')
			case '\t':
				b = append(b, '\\', 't')
			default:
				b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xF])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size == 1:
			b = append(b, s[start:i]...)
			b = append(b, `\ufffd`...)
		case r == '\u2028' || r == '\u2029':
			b = append(b, s[start:i]...)
			b = append(b, '\\', 'u', '2', '0', '2', hex[r&0xF])
		default:
			i += size
			continue
		}
		i += size
		start = i
	}
	b = append(b, s[start:]...)
	return append(b, '"')
}

// appendFitJSONHead appends the start of fit's JSON document, up to the
// opening of the array of fits.
func appendFitJSONHead(j *jsonIndent, es fitEstimator) {
	j.open('{')
	j.key("estimator")
	j.open('{')
	j.str("method", es.Method)
	if es.Psi != "" {
		j.str("psi", es.Psi)
	}
	if len(es.Tuning) > 0 {
		j.key("tuning")
		j.open('[')
		for _, v := range es.Tuning {
			j.next()
			j.b = appendJSONFloat(j.b, v)
		}
		j.close(']')
	}
	if es.Scale != "" {
		j.str("scale", es.Scale)
	}
	j.str("start", es.Start)
	j.str("scale_rule", es.ScaleRule)
	j.str("weights", es.Weights)
	j.key("outlier_cut")
	j.b = appendJSONFloat(j.b, es.OutlierCut)
	j.close('}')
	j.key("fits")
}

// appendFitJSONTail closes what appendFitJSONHead opened, after the fits.
func appendFitJSONTail(j *jsonIndent) {
	j.close('}')
	j.b = append(j.b, '\n')
}

// appendFitJSON appends one element of the array of fits. sorted lists
// the keys of the coefficient maps in encoding/json's (byte) order.
func appendFitJSON(j *jsonIndent, f *fitJSON, sorted []string) {
	j.next()
	j.open('{')
	j.str("group", f.Group)
	j.int("rows", f.Rows)
	if len(f.Coefficients) > 0 {
		j.key("coefficients")
		appendNumMap(j, f.Coefficients, sorted)
	}
	j.key("coefficient_order")
	if f.Order == nil {
		j.b = append(j.b, "null"...)
	} else {
		j.open('[')
		for _, n := range f.Order {
			j.next()
			j.b = appendJSONString(j.b, n)
		}
		j.close(']')
	}
	if len(f.StandardErrors) > 0 {
		j.key("standard_errors")
		appendNumMap(j, f.StandardErrors, sorted)
	}
	if len(f.Intervals) > 0 {
		j.key("intervals")
		keys := mapKeys(f.Intervals, sorted)
		j.open('{')
		for _, k := range keys {
			iv := f.Intervals[k]
			j.key(k)
			j.open('[')
			for _, v := range iv {
				j.next()
				j.b = appendJSONNum(j.b, v)
			}
			j.close(']')
		}
		j.close('}')
	}
	if f.IntervalRule != "" {
		j.str("interval_rule", f.IntervalRule)
	}
	if f.NoStandardErrors != "" {
		j.str("no_standard_errors", f.NoStandardErrors)
	}
	j.num("scale", f.Scale)
	j.int("iterations", f.Iterations)
	j.str("status", f.Status)
	j.bool("converged", f.Converged)
	j.num("equation_norm", f.EquationNorm)
	j.num("objective", f.Objective)
	if f.SRefinement != "" {
		j.str("s_refinement", f.SRefinement)
	}
	if f.SSteps != 0 {
		j.int("s_steps", f.SSteps)
	}
	if len(f.Observations) > 0 {
		j.key("observations")
		j.open('[')
		for i := range f.Observations {
			o := &f.Observations[i]
			j.next()
			j.open('{')
			j.member(`"row": `)
			j.b = strconv.AppendInt(j.b, int64(o.Row), 10)
			j.member(`"line": `)
			j.b = strconv.AppendInt(j.b, int64(o.Line), 10)
			j.member(`"residual": `)
			j.b = appendJSONNum(j.b, o.Resid)
			j.member(`"scaled_residual": `)
			j.b = appendJSONNum(j.b, o.Scaled)
			j.member(`"weight": `)
			j.b = appendJSONNum(j.b, o.Weight)
			j.member(`"outlier": `)
			j.b = strconv.AppendBool(j.b, o.Flag)
			j.close('}')
		}
		j.close(']')
	}
	j.int("outliers", f.Outliers)
	if f.Error != "" {
		j.str("error", f.Error)
	}
	j.close('}')
}

// appendNumMap appends a map of numbers as an object, keys in order.
func appendNumMap(j *jsonIndent, m map[string]jsonFloat, sorted []string) {
	j.open('{')
	for _, k := range mapKeys(m, sorted) {
		j.num(k, m[k])
	}
	j.close('}')
}

// mapKeys returns m's keys in encoding/json's order: sorted when it holds
// exactly those keys, otherwise m's own keys sorted.
func mapKeys[V any](m map[string]V, sorted []string) []string {
	same := len(m) == len(sorted)
	for _, k := range sorted {
		if _, ok := m[k]; !ok {
			same = false
			break
		}
	}
	if same {
		return sorted
	}
	return slices.Sorted(maps.Keys(m))
}
