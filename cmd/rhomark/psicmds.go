package main

import (
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"github.com/rhomark/rhomark/internal/atomicfile"
	"github.com/rhomark/rhomark/psi"
	htmlreport "github.com/rhomark/rhomark/report"
	"github.com/rhomark/rhomark/results"
)

// noRejection is how every command writes a rejection point that does not
// exist (JSON writes null), and noRejectionWhy what it means.
const (
	noRejection    = "none"
	noRejectionWhy = "psi is not 0 beyond any point"
)

// rejectionText formats a rejection point, +Inf meaning there is none.
func rejectionText(v float64, digits int) string {
	if math.IsInf(v, 1) {
		return noRejection
	}
	return num(v, digits)
}

// num formats a theory figure: "none" for +Inf, "—" for NaN.
func num(v float64, digits int) string {
	switch {
	case math.IsInf(v, 1):
		return "unbounded"
	case math.IsNaN(v):
		return "—"
	}
	return strconv.FormatFloat(v, 'g', digits, 64)
}

func writeJSON(e env, v any) error {
	enc := json.NewEncoder(e.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// jsonFloat encodes NaN and infinities as null, and decodes null as NaN.
type jsonFloat = results.Num

func theoryCmd(e env, args []string) error {
	fs := newFlags(e, "theory", "--psi FAMILY [--tuning C] [options]",
		"Prints the asymptotic properties of a psi: efficiency, asymptotic variance,\ngross-error sensitivity and rejection point at the normal model, its shape,\nits use as an S-scale, and its efficiency under other error models.")
	pf := addPsiFlags(fs.FlagSet, "huber")
	df := fs.Float64("df", 3, "degrees of freedom of the Student t model")
	eps := fs.Float64("eps", 0.1, "contamination fraction of the contaminated normal (1-eps) N(0,1) + eps N(0,tau²)")
	tau := fs.Float64("tau", 3, "standard deviation of the contaminating normal")
	asJSON := fs.Bool("json", false, "print JSON")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 0 {
		return usagef("theory takes no arguments, got %q", pos)
	}
	ch, err := pf.build(givenFlags(fs.FlagSet))
	if err != nil {
		return err
	}
	models := []psi.ErrorModel{psi.StudentT(*df), psi.Laplace(), psi.ContaminatedNormal(*eps, *tau)}
	for _, m := range models {
		if err := m.Validate(); err != nil {
			return usageError{err}
		}
	}
	th, err := psi.Analyse(ch.psi, models...)
	if err != nil {
		return fmt.Errorf("%s: %w", ch.desc, err)
	}
	if *asJSON {
		type modelJSON struct {
			Model              string    `json:"model"`
			Scale              jsonFloat `json:"scale"`
			AsymptoticVariance jsonFloat `json:"asymptotic_variance"`
			Efficiency         jsonFloat `json:"efficiency"`
			Fisher             jsonFloat `json:"fisher_information"`
			FisherClosedForm   bool      `json:"fisher_closed_form"`
			RelativeToLS       jsonFloat `json:"relative_to_ls"`
		}
		out := struct {
			Psi                   string      `json:"psi"`
			Tuning                []float64   `json:"tuning,omitempty"`
			Efficiency            jsonFloat   `json:"efficiency"`
			AsymptoticVariance    jsonFloat   `json:"asymptotic_variance"`
			GrossErrorSensitivity jsonFloat   `json:"gross_error_sensitivity"`
			RejectionPoint        jsonFloat   `json:"rejection_point"`
			SupPsi                jsonFloat   `json:"sup_psi"`
			Bounded               bool        `json:"bounded"`
			Monotone              bool        `json:"monotone"`
			Redescending          bool        `json:"redescending"`
			ScaleConsistency      jsonFloat   `json:"scale_consistency"`
			Breakdown             jsonFloat   `json:"breakdown"`
			RhoMax                jsonFloat   `json:"rho_max"`
			Models                []modelJSON `json:"models"`
		}{Psi: ch.name, Tuning: ch.tuning, Efficiency: jsonFloat(th.Efficiency), AsymptoticVariance: jsonFloat(th.AsymptoticVariance),
			GrossErrorSensitivity: jsonFloat(th.GrossErrorSensitivity), RejectionPoint: jsonFloat(th.RejectionPoint), SupPsi: jsonFloat(th.SupPsi),
			Bounded: th.Bounded, Monotone: th.Monotone, Redescending: th.Redescending,
			ScaleConsistency: jsonFloat(th.ScaleConsistency), Breakdown: jsonFloat(th.Breakdown), RhoMax: jsonFloat(th.RhoMax)}
		for _, m := range th.Models {
			out.Models = append(out.Models, modelJSON{m.Model, jsonFloat(m.Scale), jsonFloat(m.AsymptoticVariance), jsonFloat(m.Efficiency),
				jsonFloat(m.Fisher), m.FisherClosedForm, jsonFloat(m.RelativeToLS)})
		}
		return writeJSON(e, out)
	}
	w := e.stdout
	fmt.Fprintf(w, "theory · %s\n\nat the standard normal model\n", ch.desc)
	fmt.Fprintf(w, "  efficiency (vs least squares)  %s\n", num(th.Efficiency, 6))
	fmt.Fprintf(w, "  asymptotic variance            %s\n", num(th.AsymptoticVariance, 6))
	fmt.Fprintf(w, "  gross-error sensitivity        %s\n", num(th.GrossErrorSensitivity, 6))
	rej := rejectionText(th.RejectionPoint, 6)
	if math.IsInf(th.RejectionPoint, 1) {
		rej += " (" + noRejectionWhy + ")"
	}
	fmt.Fprintf(w, "  rejection point                %s\n", rej)
	fmt.Fprintf(w, "  shape                          %s\n", shapeWords(th))
	if math.IsNaN(th.Breakdown) {
		fmt.Fprintf(w, "  as an S-scale                  rho is unbounded: breakdown point 0\n")
	} else {
		fmt.Fprintf(w, "  as an S-scale                  b = E[rho(Z)] = %s, sup rho = %s, breakdown point %s\n",
			num(th.ScaleConsistency, 6), num(th.RhoMax, 6), num(th.Breakdown, 4))
	}
	fmt.Fprintf(w, "\nunder other error models (residuals standardised by the MAD's limit)\n")
	fmt.Fprintf(w, "  %-30s %9s %11s %12s %9s\n", "model", "MAD limit", "asympt. var", "eff. vs ML", "vs LS")
	for _, m := range th.Models {
		note := ""
		if !m.FisherClosedForm {
			note = " *"
		}
		fmt.Fprintf(w, "  %-30s %9s %11s %12s %9s\n", m.Model, num(m.Scale, 4), num(m.AsymptoticVariance, 5), num(m.Efficiency, 4)+note, num(m.RelativeToLS, 4))
	}
	fmt.Fprintln(w, "  (* Fisher information computed by quadrature; otherwise in closed form)")
	return nil
}

func shapeWords(th psi.Theory) string {
	var words []string
	if th.Bounded {
		words = append(words, "bounded (sup |psi| = "+num(th.SupPsi, 5)+")")
	} else {
		words = append(words, "unbounded")
	}
	if th.Monotone {
		words = append(words, "monotone")
	}
	if th.Redescending {
		words = append(words, "redescending")
	}
	return strings.Join(words, ", ")
}

func tuneCmd(e env, args []string) error {
	fs := newFlags(e, "tune", "--psi FAMILY (--efficiency E | --minimax EPS | --breakdown B | --sweep FROM:TO[:STEPS])",
		"Solves for tuning constants. --efficiency gives the constant with efficiency E at\nthe normal model (any family, custom included); --minimax gives Huber's minimax\nconstant for the eps-contaminated normal; --breakdown gives the constant whose\nS-scale has breakdown point B; --sweep tabulates efficiency, gross-error\nsensitivity, rejection point and breakdown point over a range of the first\nconstant. Families with several constants keep their default proportions.")
	pf := addPsiFlags(fs.FlagSet, "huber")
	effT := addFloat(fs.FlagSet, "efficiency", 0, "target efficiency `E` at the normal, 0 < E < 1",
		func(v float64) bool { return v > 0 && v < 1 }, "a target strictly between 0 and 1, such as 0.95")
	mm := addFloat(fs.FlagSet, "minimax", 0, "contamination fraction `EPS` for Huber's minimax constant",
		func(v float64) bool { return v > 0 && v < 1 }, "a contamination fraction strictly between 0 and 1, such as 0.1")
	bd := addFloat(fs.FlagSet, "breakdown", 0, "target breakdown point `B` of the S-scale, 0 < B ≤ 0.5",
		func(v float64) bool { return v > 0 && v <= 0.5 }, "a target in (0, 0.5], such as 0.5")
	var sweep sweepRange
	fs.Var(&sweep, "sweep", "`FROM:TO[:STEPS]` range of the first constant (default 11 steps)")
	param := fs.String("param", "", "for --psi-expr with several constants: tune only this `name`")
	var plot figureFile
	fs.Var(&plot, "plot", "with --sweep, also draw the trade-off to this `file` (.svg or .png)")
	asJSON := fs.Bool("json", false, "print JSON")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 0 {
		return usagef("tune takes no arguments, got %q", pos)
	}
	given := givenFlags(fs.FlagSet)
	targets := 0
	for _, f := range []string{"efficiency", "minimax", "breakdown", "sweep"} {
		if given[f] {
			targets++
		}
	}
	if targets != 1 {
		return usagef("give exactly one of --efficiency, --minimax, --breakdown or --sweep")
	}
	if given["plot"] && !given["sweep"] {
		return usagef("--plot draws a sweep; give --sweep FROM:TO[:STEPS] with it")
	}
	ch, err := pf.build(given)
	if err != nil {
		return err
	}
	fam := ch.family
	if *param != "" {
		c, ok := ch.psi.(*psi.Custom)
		if !ok {
			return usagef("--param goes with --psi-expr")
		}
		if fam, err = c.Family(*param); err != nil {
			return usageError{err}
		}
	}
	type result struct {
		Psi        string    `json:"psi"`
		Target     string    `json:"target"`
		Value      float64   `json:"value"`
		Params     []string  `json:"params"`
		Tuning     []float64 `json:"tuning"`
		Efficiency jsonFloat `json:"efficiency"`
		Breakdown  jsonFloat `json:"breakdown"`
	}
	var res result
	res.Psi, res.Params = ch.name, fam.Params
	switch {
	case given["sweep"]:
		return tuneSweep(e, fam, ch, sweep, *asJSON, string(plot))
	case given["minimax"]:
		if ch.name != "huber" {
			return usagef("--minimax is Huber's minimax problem; use --psi huber")
		}
		k, err := psi.HuberMinimax(*mm)
		if err != nil {
			return usageError{err}
		}
		res.Target, res.Value, res.Tuning = "minimax", *mm, []float64{k}
	case given["efficiency"]:
		t, err := fam.TuneEfficiency(*effT)
		if err != nil {
			return err
		}
		res.Target, res.Value, res.Tuning = "efficiency", *effT, t
	case given["breakdown"]:
		t, err := fam.TuneBreakdown(*bd)
		if err != nil {
			return err
		}
		res.Target, res.Value, res.Tuning = "breakdown", *bd, t
	}
	tuned, err := fam.New(res.Tuning)
	if err != nil {
		return err
	}
	th, err := psi.Analyse(tuned)
	if err != nil {
		return err
	}
	res.Efficiency, res.Breakdown = jsonFloat(th.Efficiency), jsonFloat(th.Breakdown)
	if *asJSON {
		return writeJSON(e, res)
	}
	var parts []string
	for i, n := range res.Params {
		parts = append(parts, fmt.Sprintf("%s = %.6g", n, res.Tuning[i]))
	}
	fmt.Fprintf(e.stdout, "%s: %s\n", ch.name, strings.Join(parts, ", "))
	fmt.Fprintf(e.stdout, "  efficiency at the normal %s", num(th.Efficiency, 6))
	if !math.IsNaN(th.Breakdown) {
		fmt.Fprintf(e.stdout, " · S-scale breakdown point %s", num(th.Breakdown, 5))
	}
	fmt.Fprintln(e.stdout)
	return nil
}

// tuneSweep prints the trade-off table over a range of the first constant.
func tuneSweep(e env, fam psi.Family, ch choice, sweep sweepRange, asJSON bool, plot string) error {
	rows, err := fam.Sweep(sweep.from, sweep.to, sweep.steps)
	if err != nil {
		return usageError{err}
	}
	if plot != "" {
		var cs, eff, ges []float64
		for _, r := range rows {
			cs, eff, ges = append(cs, r.Tuning[0]), append(eff, r.Efficiency), append(ges, r.GrossErrorSensitivity)
		}
		fig, err := htmlreport.EfficiencyCurveFigure(ch.name+": asymptotic efficiency at the normal", fam.Params[0], cs, eff, ges)
		if err != nil {
			return err
		}
		data := fig.SVG
		switch strings.ToLower(filepath.Ext(plot)) {
		case ".png":
			data = fig.PNG
		case ".svg":
		default:
			return usagef("--plot %q: want a .svg or .png file", plot)
		}
		if err := atomicfile.WriteFile(plot, data); err != nil {
			return err
		}
		fmt.Fprintf(e.stderr, "rhomark tune: wrote %s\n", plot)
	}
	if asJSON {
		type rowJSON struct {
			Tuning                []float64 `json:"tuning"`
			Efficiency            jsonFloat `json:"efficiency"`
			GrossErrorSensitivity jsonFloat `json:"gross_error_sensitivity"`
			RejectionPoint        jsonFloat `json:"rejection_point"`
			Breakdown             jsonFloat `json:"breakdown"`
		}
		out := struct {
			Psi    string    `json:"psi"`
			Params []string  `json:"params"`
			Rows   []rowJSON `json:"rows"`
		}{Psi: ch.name, Params: fam.Params}
		for _, r := range rows {
			out.Rows = append(out.Rows, rowJSON{r.Tuning, jsonFloat(r.Efficiency), jsonFloat(r.GrossErrorSensitivity), jsonFloat(r.RejectionPoint), jsonFloat(r.Breakdown)})
		}
		return writeJSON(e, out)
	}
	w := e.stdout
	fmt.Fprintf(w, "%s: trade-off against %s\n", ch.name, fam.Params[0])
	fmt.Fprintf(w, "  %10s %12s %14s %12s %12s\n", fam.Params[0], "efficiency", "gross-error", "rejection", "S breakdown")
	for _, r := range rows {
		fmt.Fprintf(w, "  %10.4g %12.4f %14s %12s %12s\n", r.Tuning[0], r.Efficiency, num(r.GrossErrorSensitivity, 5), rejectionText(r.RejectionPoint, 5), num(r.Breakdown, 4))
	}
	return nil
}

func checkPsiCmd(e env, args []string) error {
	fs := newFlags(e, "check-psi", "(--psi FAMILY [--tuning C] | --psi-expr EXPR [--const c=V ...]) [--json]",
		"Checks that a psi is well formed and reports, for each property, the first\npoint where it fails: psi(0) = 0, odd symmetry, psi = rho', psi' consistent with\npsi, a finite non-negative IRLS weight continuous at 0, E[psi'] > 0; and, as\ndescription, boundedness, monotone or redescending shape and where psi jumps.\nExit status 1 when a required property fails.")
	pf := addPsiFlags(fs.FlagSet, "huber")
	asJSON := fs.Bool("json", false, "print JSON")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 0 {
		return usagef("check-psi takes no arguments, got %q", pos)
	}
	ch, err := pf.build(givenFlags(fs.FlagSet))
	if err != nil {
		return err
	}
	rep := psi.CheckPsi(ch.psi)
	for i := range rep.Checks {
		rep.Checks[i].Detail = checkDetail(rep.Checks[i], rep.Jumps)
	}
	if *asJSON {
		type checkJSON struct {
			Property string    `json:"property"`
			Required bool      `json:"required"`
			OK       bool      `json:"ok"`
			At       jsonFloat `json:"at"`
			Detail   string    `json:"detail"`
		}
		out := struct {
			Psi    string      `json:"psi"`
			OK     bool        `json:"ok"`
			Jumps  []float64   `json:"jumps"`
			Checks []checkJSON `json:"checks"`
		}{Psi: ch.desc, OK: rep.OK, Jumps: rep.Jumps}
		for _, c := range rep.Checks {
			out.Checks = append(out.Checks, checkJSON{c.Property, c.Required, c.OK, jsonFloat(c.At), c.Detail})
		}
		if err := writeJSON(e, out); err != nil {
			return err
		}
	} else {
		fmt.Fprintf(e.stdout, "check-psi · %s\n", ch.desc)
		for _, c := range rep.Checks {
			mark := "pass"
			switch {
			case c.Required && !c.OK:
				mark = "FAIL"
			case !c.Required:
				mark = "note"
			}
			fmt.Fprintf(e.stdout, "  %-4s  %-28s %s\n", mark, c.Property, c.Detail)
		}
		if rep.OK {
			fmt.Fprintln(e.stdout, "every required property holds")
		}
	}
	if !rep.OK {
		return fmt.Errorf("the psi fails a required property (see above)")
	}
	return nil
}

// checkDigits is the number of significant digits check-psi prints: enough
// to place a failure, without the float64 noise of 17 digits.
const checkDigits = 6

// numberPattern matches a decimal number as Go's %g or %v prints it.
var numberPattern = regexp.MustCompile(`-?\d+(\.\d+)?(e[-+]?\d+)?`)

// checkDetail returns the detail of a check-psi finding with its numbers
// rounded to checkDigits significant digits, and jumps listed as ±a, ±b.
func checkDetail(c psi.PsiCheck, jumps []float64) string {
	if c.Property == "continuous" && len(jumps) > 0 {
		at := make([]string, len(jumps))
		for i, j := range jumps {
			at[i] = "±" + strconv.FormatFloat(j, 'g', checkDigits, 64)
		}
		return "psi jumps at " + strings.Join(at, ", ")
	}
	d := roundNumbers(c.Detail)
	if c.Property == "redescending" {
		// Say the rejection point in the words theory and tune use.
		if strings.Contains(d, "beyond") {
			return d + " (the rejection point)"
		}
		return d + "; rejection point " + noRejection + " (" + noRejectionWhy + ")"
	}
	return d
}

// roundNumbers rewrites every number in s that has more than checkDigits
// significant digits with checkDigits; shorter numbers stay as written.
func roundNumbers(s string) string {
	return numberPattern.ReplaceAllStringFunc(s, func(m string) string {
		mant, _, _ := strings.Cut(m, "e")
		digits := strings.TrimLeft(strings.NewReplacer("-", "", ".", "").Replace(mant), "0")
		v, err := strconv.ParseFloat(m, 64)
		if err != nil || len(digits) <= checkDigits {
			return m
		}
		return strconv.FormatFloat(v, 'g', checkDigits, 64)
	})
}
