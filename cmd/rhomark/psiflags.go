package main

import (
	"flag"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/scenarios"
)

// psiFlags are the options that choose a psi, shared by fit, theory, tune
// and check-psi: a built-in family with --psi and --tuning, or a psi of the
// user's own with --psi-expr and its companions.
type psiFlags struct {
	family           familyName
	tuning, kinks    numberList
	expr, rho, deriv string
	consts           constFlag
}

// constFlag collects repeated --const name=value options.
type constFlag []psi.Constant

func (c *constFlag) String() string { return "" }

func (c *constFlag) Set(s string) error {
	name, val, ok := strings.Cut(s, "=")
	if !ok {
		return fmt.Errorf("want name=value, got %q", s)
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("%q is not a finite number", val)
	}
	*c = append(*c, psi.Constant{Name: strings.TrimSpace(name), Value: v})
	return nil
}

// exprFlagNames returns the names of the psi flags that only go with
// --psi-expr.
func exprFlagNames() []string { return []string{"rho-expr", "deriv-expr", "const", "kinks"} }

// psiFlagNames returns the names of every flag addPsiFlags defines.
func psiFlagNames() []string {
	return append([]string{"psi", "tuning", "psi-expr"}, exprFlagNames()...)
}

func addPsiFlags(fs *flag.FlagSet, defaultFamily string) *psiFlags {
	p := &psiFlags{family: familyName(defaultFamily)}
	fs.Var(&p.family, "psi", "psi `family`: "+strings.Join(psi.FamilyNames(), ", "))
	fs.Var(&p.tuning, "tuning", "tuning constant(s) `C`, comma-separated (default: the family's)")
	fs.StringVar(&p.expr, "psi-expr", "", "a psi of your own: an `expression` in r, e.g. 'r / (1 + abs(r)/c)'")
	fs.StringVar(&p.rho, "rho-expr", "", "rho of --psi-expr (`expression`; default: the integral of psi)")
	fs.StringVar(&p.deriv, "deriv-expr", "", "psi' of --psi-expr (`expression`; default: numerical)")
	fs.Var(&p.consts, "const", "a constant of --psi-expr, `name=value` (repeat for several)")
	fs.Var(&p.kinks, "kinks", "break `points` of --psi-expr for quadrature, comma-separated")
	return p
}

// choice is a psi chosen on the command line.
type choice struct {
	psi    psi.Psi
	family psi.Family
	name   string    // family name or "custom"
	tuning []float64 // the constants in use
	desc   string    // one line for headings
	// spec and given are the psi and its tuning constants as a scenario
	// file would write them (given nil for the family's defaults).
	spec  scenarios.PsiSpec
	given scenarios.Numbers
}

// build resolves the psi options. given says which flags were set.
func (p *psiFlags) build(given map[string]bool) (choice, error) {
	if p.expr != "" {
		if given["psi"] || given["tuning"] {
			return choice{}, usagef("--psi-expr replaces --psi and --tuning; give constants with --const")
		}
		spec := psi.CustomSpec{Psi: p.expr, Rho: p.rho, Deriv: p.deriv, Constants: p.consts}
		if len(p.kinks) > 0 {
			spec.Kinks = p.kinks
		}
		c, err := psi.NewCustom(spec)
		if err != nil {
			return choice{}, usageError{err}
		}
		fam, _ := c.Family("")
		desc := "custom psi " + p.expr
		for _, k := range p.consts {
			desc += fmt.Sprintf(", %s = %s", k.Name, constText(k.Value))
		}
		cp := &scenarios.CustomPsi{Expr: spec.Psi, Rho: spec.Rho, Deriv: spec.Deriv, Kinks: spec.Kinks}
		for _, k := range spec.Constants {
			cp.Constants = append(cp.Constants, scenarios.NamedNumber{Name: k.Name, Value: k.Value})
		}
		return choice{psi: c, family: fam, name: "custom", tuning: fam.Defaults, desc: desc, spec: scenarios.PsiSpec{Custom: cp}}, nil
	}
	for _, f := range exprFlagNames() {
		if given[f] {
			return choice{}, usagef("--%s goes with --psi-expr", f)
		}
	}
	fam, ok := psi.LookupFamily(string(p.family))
	if !ok {
		return choice{}, usagef("--psi %q: unknown family; valid: %s (or --psi-expr for your own)", p.family, strings.Join(psi.FamilyNames(), ", "))
	}
	tc := []float64(p.tuning)
	tuning := scenarios.Numbers(tc)
	psi, err := fam.New(tc)
	if err != nil {
		return choice{}, usageError{err}
	}
	if len(tc) == 0 {
		tc = fam.Defaults
	}
	desc := fam.Name
	for i, n := range fam.Params {
		desc += fmt.Sprintf(" %s = %s", n, constText(tc[i]))
	}
	return choice{psi: psi, family: fam, name: fam.Name, tuning: tc, desc: desc, spec: scenarios.PsiSpec{Family: fam.Name}, given: tuning}, nil
}

// givenFlags returns the names of the flags set on the command line.
func givenFlags(fs *flag.FlagSet) map[string]bool {
	given := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { given[f.Name] = true })
	return given
}

// constText formats a psi constant for headings, to six significant digits
// as estimator descriptions in results tables show them.
func constText(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
