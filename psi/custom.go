package psi

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"slices"
	"sort"
	"strings"
	"sync"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/ast"
	"github.com/expr-lang/expr/parser"
	"github.com/expr-lang/expr/vm"
)

// CustomSpec is a psi function written by the user as expressions in the
// standardised residual r and named constants, for example
//
//	psi:       r / (1 + abs(r)/c)
//	constants: c = 1.4
//
// Expressions are compiled and run by the expr library
// (github.com/expr-lang/expr). They may use numbers, r, the constants, pi,
// the operators + - * / ^ ** (power), comparisons, && || !, the conditional
// cond ? a : b, and the functions abs, sign, sqrt, exp, log, log1p, sin,
// cos, tan, asin, acos, atan, sinh, cosh, tanh, min, max, pow. Nothing else
// is allowed: no variables, loops, collections, strings or builtins, so an
// evaluation touches no file or network and takes time bounded by the size
// of the expression (at most maxExprNodes nodes).
type CustomSpec struct {
	// Psi is the psi expression (required).
	Psi string
	// Rho is the rho expression; empty means rho is the integral of psi
	// from 0 to |r|, by quadrature.
	Rho string
	// Deriv is the expression of psi'; empty means a numerical derivative
	// (central differences with Richardson extrapolation).
	Deriv string
	// Constants are the named constants, in order. Their names are
	// identifiers other than r and pi.
	Constants []Constant
	// Kinks lists non-negative points where psi or psi' jumps, to guide
	// quadrature (optional).
	Kinks []float64
}

// Constant is a named constant of a custom psi.
type Constant struct {
	Name  string  // identifier used in the expressions; not r, pi or a function name
	Value float64 // finite value substituted for Name
}

// maxExprNodes bounds the size of an expression.
const maxExprNodes = 400

var identPattern = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// mathFunctions are the functions a custom expression may call, with their
// arity.
func mathFunctions() map[string]int {
	return map[string]int{
		"abs": 1, "sign": 1, "sqrt": 1, "exp": 1, "log": 1, "log1p": 1,
		"sin": 1, "cos": 1, "tan": 1, "asin": 1, "acos": 1, "atan": 1,
		"sinh": 1, "cosh": 1, "tanh": 1, "min": 2, "max": 2, "pow": 2,
	}
}

// exprOptions returns the compile options shared by every expression: the
// whitelisted functions, no builtins, a float result, a node limit.
func exprOptions(env map[string]any) []expr.Option {
	unary := map[string]func(float64) float64{
		"abs": math.Abs, "sqrt": math.Sqrt, "exp": math.Exp, "log": math.Log, "log1p": math.Log1p,
		"sin": math.Sin, "cos": math.Cos, "tan": math.Tan, "asin": math.Asin, "acos": math.Acos,
		"atan": math.Atan, "sinh": math.Sinh, "cosh": math.Cosh, "tanh": math.Tanh,
		"sign": func(x float64) float64 {
			switch {
			case x > 0:
				return 1
			case x < 0:
				return -1
			}
			return 0
		},
	}
	binary := map[string]func(float64, float64) float64{"min": math.Min, "max": math.Max, "pow": math.Pow}
	opts := []expr.Option{expr.Env(env), expr.DisableAllBuiltins(), expr.AsFloat64(), expr.MaxNodes(maxExprNodes), expr.Patch(floatLiterals{})}
	names := make([]string, 0, len(unary))
	for n := range unary {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fn := unary[n]
		opts = append(opts, expr.Function(n, func(p ...any) (any, error) {
			return fn(toFloat(p[0])), nil
		}, new(func(float64) float64)))
	}
	for _, n := range []string{"max", "min", "pow"} {
		fn := binary[n]
		opts = append(opts, expr.Function(n, func(p ...any) (any, error) {
			return fn(toFloat(p[0]), toFloat(p[1])), nil
		}, new(func(float64, float64) float64)))
	}
	return opts
}

// floatLiterals turns every integer literal into a float64 literal, so that
// all arithmetic of an expression is in float64: integer arithmetic in the
// expr VM wraps around silently on overflow (10000000000 * 10000000000 would
// be negative), while float64 arithmetic rounds and overflows to ±Inf, which
// the finiteness checks catch.
type floatLiterals struct{}

// Visit replaces an integer literal by the same value as a float literal.
func (floatLiterals) Visit(node *ast.Node) {
	if n, ok := (*node).(*ast.IntegerNode); ok {
		ast.Patch(node, &ast.FloatNode{Value: float64(n.Value)})
	}
}

// toFloat converts a numeric value from the expr VM to float64.
func toFloat(v any) float64 {
	switch x := v.(type) {
	case float64:
		return x
	case int:
		return float64(x)
	}
	return math.NaN()
}

// whitelist rejects every node an expression may not contain.
type whitelist struct {
	allowed map[string]bool // identifiers
	funcs   map[string]int
	err     error
}

// Visit checks one node of the syntax tree and records in w.err the first
// node that is not a number, r, pi, a declared constant, an allowed
// operator, a conditional or a call of an allowed function with the right
// number of arguments. Once w.err is set it ignores the remaining nodes.
func (w *whitelist) Visit(node *ast.Node) {
	if w.err != nil {
		return
	}
	switch n := (*node).(type) {
	case *ast.IntegerNode, *ast.FloatNode, *ast.BoolNode:
	case *ast.IdentifierNode:
		if _, isFunc := w.funcs[n.Value]; !w.allowed[n.Value] && !isFunc {
			w.err = fmt.Errorf("unknown name %q (the residual is r; constants must be declared)", n.Value)
		}
	case *ast.UnaryNode:
		if n.Operator != "-" && n.Operator != "+" && n.Operator != "!" && n.Operator != "not" {
			w.err = fmt.Errorf("operator %q is not allowed", n.Operator)
		}
	case *ast.BinaryNode:
		switch n.Operator {
		case "+", "-", "*", "/", "^", "**", "<", "<=", ">", ">=", "==", "!=", "&&", "||", "and", "or":
		default:
			w.err = fmt.Errorf("operator %q is not allowed; use + - * / ^ comparisons && || and ?:", n.Operator)
		}
	case *ast.ConditionalNode:
	case *ast.BuiltinNode:
		// The parser marks names it knows (abs, max, min, ...) as builtins;
		// only those of our list are accepted, and they compile to ours.
		w.checkCall(n.Name, len(n.Arguments))
	case *ast.CallNode:
		id, ok := n.Callee.(*ast.IdentifierNode)
		if !ok {
			w.err = errors.New("only the listed math functions may be called")
			return
		}
		w.checkCall(id.Value, len(n.Arguments))
	default:
		w.err = fmt.Errorf("%T is not allowed in a psi expression (only arithmetic, comparisons, ?: and math functions)", n)
	}
}

// checkCall records an error unless name is a listed function taking
// args arguments.
func (w *whitelist) checkCall(name string, args int) {
	arity, ok := w.funcs[name]
	switch {
	case !ok:
		w.err = fmt.Errorf("function %q is not allowed; allowed: %s", name, funcList(w.funcs))
	case args != arity:
		w.err = fmt.Errorf("%s takes %d argument(s), got %d", name, arity, args)
	}
}

func funcList(f map[string]int) string {
	names := make([]string, 0, len(f))
	for n := range f {
		names = append(names, n)
	}
	sort.Strings(names)
	return strings.Join(names, ", ")
}

// Custom is a psi built from a CustomSpec. It is safe for concurrent use.
// It is slower than a built-in family (every value is an interpreter call)
// and allocates a little per call.
type Custom struct {
	spec            CustomSpec
	psi, rho, deriv *vm.Program
	env             map[string]any
	pool            sync.Pool
	table           rhoTable
}

// rhoTable caches the integral of psi from 0 to each knot of a grid, so
// that rho, when it must be integrated, costs one short integral from the
// nearest knot below rather than one from 0. Built on first use. A kink
// that is not declared costs accuracy, as it would in any quadrature.
type rhoTable struct {
	once  sync.Once
	knots []float64 // 0 = knots[0] < knots[1] < ..., the kinks among them
	cum   []float64 // cum[i] = ∫ psi over [0, knots[i]]
}

// Reach and spacing of the rho table. Residuals beyond rhoTableReach are
// integrated from its last knot.
const (
	rhoTableReach = 32.0
	rhoTableStep  = 1.0 / 16
)

// evalState is one goroutine's interpreter and environment.
type evalState struct {
	vm  vm.VM
	env map[string]any
}

// SpecError is an error of NewCustom: what is wrong, and the field of the
// CustomSpec at fault, so that a caller can point at its own name for it.
// Its message is Err's.
type SpecError struct {
	// Field is the CustomSpec field at fault: Psi, Rho, Deriv, Constants
	// or Kinks.
	Field string
	// Err says what is wrong.
	Err error
}

// Error returns Err's message.
func (e *SpecError) Error() string { return e.Err.Error() }

// Unwrap returns Err.
func (e *SpecError) Unwrap() error { return e.Err }

// NewCustom compiles a custom psi. Errors are *SpecError, name the
// expression and say what is wrong.
func NewCustom(spec CustomSpec) (*Custom, error) {
	bad := func(field string, err error) (*Custom, error) { return nil, &SpecError{Field: field, Err: err} }
	if strings.TrimSpace(spec.Psi) == "" {
		return bad("Psi", errors.New("a custom psi needs a psi expression in r"))
	}
	env := map[string]any{"r": 0.0, "pi": math.Pi}
	seen := map[string]bool{}
	for _, c := range spec.Constants {
		switch {
		case !identPattern.MatchString(c.Name):
			return bad("Constants", fmt.Errorf("constant name %q is not an identifier", c.Name))
		case c.Name == "r" || c.Name == "pi":
			return bad("Constants", fmt.Errorf("constant name %q is reserved", c.Name))
		case seen[c.Name]:
			return bad("Constants", fmt.Errorf("constant %q is declared twice", c.Name))
		case math.IsNaN(c.Value) || math.IsInf(c.Value, 0):
			return bad("Constants", fmt.Errorf("constant %s = %v is not a finite number", c.Name, c.Value))
		}
		if _, ok := mathFunctions()[c.Name]; ok {
			return bad("Constants", fmt.Errorf("constant name %q is a function name", c.Name))
		}
		seen[c.Name] = true
		env[c.Name] = c.Value
	}
	for _, k := range spec.Kinks {
		if !(k >= 0) || math.IsInf(k, 0) {
			return bad("Kinks", fmt.Errorf("kink %v must be a finite number ≥ 0", k))
		}
	}
	c := &Custom{spec: spec, env: env}
	var err error
	if c.psi, err = compileExpr("psi", spec.Psi, env); err != nil {
		return bad("Psi", err)
	}
	if spec.Rho != "" {
		if c.rho, err = compileExpr("rho", spec.Rho, env); err != nil {
			return bad("Rho", err)
		}
	}
	if spec.Deriv != "" {
		if c.deriv, err = compileExpr("psi'", spec.Deriv, env); err != nil {
			return bad("Deriv", err)
		}
	}
	c.pool.New = func() any {
		e := make(map[string]any, len(env))
		for k, v := range env {
			e[k] = v
		}
		return &evalState{env: e}
	}
	if err := c.checkFinite(); err != nil {
		return nil, err
	}
	return c, nil
}

// checkFinite evaluates each expression on a grid of residuals, and at the
// declared kinks, and reports the first place one is not a finite number. A
// psi that gives NaN or an infinity somewhere would otherwise surface only
// as failed fits deep inside a run. The error is a *SpecError.
func (c *Custom) checkFinite() error {
	const half, steps = 20.0, 800
	grid := make([]float64, 0, steps+1+2*len(c.spec.Kinks))
	for i := 0; i <= steps; i++ {
		grid = append(grid, -half+2*half*float64(i)/steps)
	}
	for _, k := range c.spec.Kinks {
		grid = append(grid, k, -k)
	}
	exprs := []struct {
		field, what, src string
		prog             *vm.Program
	}{{"Psi", "psi", c.spec.Psi, c.psi}, {"Rho", "rho", c.spec.Rho, c.rho}, {"Deriv", "psi'", c.spec.Deriv, c.deriv}}
	for _, e := range exprs {
		if e.prog == nil {
			continue
		}
		for _, u := range grid {
			if v := c.eval(e.prog, u); math.IsNaN(v) || math.IsInf(v, 0) {
				return &SpecError{Field: e.field, Err: fmt.Errorf("%s expression %q gives %v at r = %v; it must be a finite number for every residual (checked on [%v, %v] and at the kinks)", e.what, e.src, v, u, -half, half)}
			}
		}
	}
	return nil
}

// compileExpr checks an expression against the whitelist and compiles it.
func compileExpr(what, src string, env map[string]any) (prog *vm.Program, err error) {
	defer func() {
		if r := recover(); r != nil {
			prog, err = nil, fmt.Errorf("%s expression %q: %v", what, src, r)
		}
	}()
	if len(src) > 4000 {
		return nil, fmt.Errorf("%s expression is %d characters; the limit is 4000", what, len(src))
	}
	tree, err := parser.Parse(src)
	if err != nil {
		return nil, fmt.Errorf("%s expression %q: %v", what, src, firstLine(err.Error()))
	}
	allowed := map[string]bool{}
	for k := range env {
		allowed[k] = true
	}
	w := &whitelist{allowed: allowed, funcs: mathFunctions()}
	ast.Walk(&tree.Node, w)
	if w.err != nil {
		return nil, fmt.Errorf("%s expression %q: %v", what, src, w.err)
	}
	prog, err = expr.Compile(src, exprOptions(env)...)
	if err != nil {
		return nil, fmt.Errorf("%s expression %q: %v", what, src, firstLine(err.Error()))
	}
	return prog, nil
}

func firstLine(s string) string {
	line, _, _ := strings.Cut(s, "\n")
	return line
}

// eval runs a program at r = u. A run-time failure gives NaN, which the
// solvers report as a non-finite status.
func (c *Custom) eval(p *vm.Program, u float64) float64 {
	st := c.pool.Get().(*evalState)
	st.env["r"] = u
	out, err := st.vm.Run(p, st.env)
	c.pool.Put(st)
	if err != nil {
		return math.NaN()
	}
	return toFloat(out)
}

// Psi evaluates the psi expression.
func (c *Custom) Psi(u float64) float64 { return c.eval(c.psi, u) }

// Rho evaluates the rho expression, or integrates psi from 0 to |u|.
func (c *Custom) Rho(u float64) float64 {
	if c.rho != nil {
		return c.eval(c.rho, u)
	}
	a := math.Abs(u)
	if a == 0 || math.IsNaN(a) {
		return a // 0, or NaN for NaN
	}
	t := &c.table
	t.once.Do(c.buildTable)
	last := len(t.knots) - 1
	if a >= t.knots[last] {
		return t.cum[last] + c.integrateAcross(t.knots[last], a)
	}
	k := sort.SearchFloat64s(t.knots, a) // knots[k-1] < a ≤ knots[k], k ≥ 1
	if t.knots[k] == a {
		return t.cum[k]
	}
	// The remainder lies inside one segment, which holds no declared kink:
	// one 12-point Gauss-Legendre panel, exact for polynomials of degree 23,
	// is accurate to rounding for a smooth psi over a width of 1/16.
	return t.cum[k-1] + gauss(c.Psi, t.knots[k-1], a)
}

// buildTable fills the rho table: knots every rhoTableStep up to
// rhoTableReach, plus the declared kinks, so that no table segment
// straddles a kink.
func (c *Custom) buildTable() {
	t := &c.table
	for i := 0; float64(i)*rhoTableStep <= rhoTableReach; i++ {
		t.knots = append(t.knots, float64(i)*rhoTableStep)
	}
	for _, k := range c.spec.Kinks {
		if k > 0 && k < rhoTableReach {
			t.knots = append(t.knots, k)
		}
	}
	sortFloats(t.knots)
	t.knots = slices.Compact(t.knots)
	t.cum = make([]float64, len(t.knots))
	for i := 1; i < len(t.knots); i++ {
		t.cum[i] = t.cum[i-1] + integrate(c.Psi, t.knots[i-1], t.knots[i])
	}
}

// integrateAcross integrates psi from lo to hi, splitting at the kinks in
// between.
func (c *Custom) integrateAcross(lo, hi float64) float64 {
	var sum float64
	for _, k := range c.kinksBetween(lo, hi) {
		sum += integrate(c.Psi, lo, k)
		lo = k
	}
	return sum + integrate(c.Psi, lo, hi)
}

// kinksBetween returns the sorted kinks strictly between lo and hi.
func (c *Custom) kinksBetween(lo, hi float64) []float64 {
	var out []float64
	for _, k := range c.spec.Kinks {
		if k > lo && k < hi {
			out = append(out, k)
		}
	}
	sortFloats(out)
	return out
}

// Deriv evaluates the psi' expression, or differentiates psi numerically.
func (c *Custom) Deriv(u float64) float64 {
	if c.deriv != nil {
		return c.eval(c.deriv, u)
	}
	return numDeriv(c.Psi, u)
}

// numDeriv is a central difference with one Richardson extrapolation.
func numDeriv(f func(float64) float64, u float64) float64 {
	h := 1e-4 * math.Max(1, math.Abs(u))
	d1 := (f(u+h) - f(u-h)) / (2 * h)
	d2 := (f(u+h/2) - f(u-h/2)) / h
	return (4*d2 - d1) / 3
}

// Weight returns psi(u)/u. At u = 0 it returns psi(δ)/δ with δ = 1e-8,
// which for an odd psi differs from the limit psi'(0) by O(δ²) where psi is
// smooth and O(δ) where psi' has a kink at 0, far closer than a numerical
// derivative.
func (c *Custom) Weight(u float64) float64 {
	if u == 0 {
		const delta = 1e-8
		return c.Psi(delta) / delta
	}
	return c.Psi(u) / u
}

// Kinks returns the declared break points.
func (c *Custom) Kinks() []float64 { return append([]float64(nil), c.spec.Kinks...) }

// Spec returns the specification the psi was built from.
func (c *Custom) Spec() CustomSpec { return c.spec }

// Family returns the custom psi as a family whose tuning constants are its
// constants (in order), so it can be tuned and swept like a built-in. With
// only set, the family's single constant is that one and the others stay
// fixed.
func (c *Custom) Family(only string) (Family, error) {
	spec := c.spec
	f := Family{Name: "custom"}
	var idx []int
	for i, k := range spec.Constants {
		if only == "" || k.Name == only {
			f.Params = append(f.Params, k.Name)
			f.Defaults = append(f.Defaults, k.Value)
			idx = append(idx, i)
		}
	}
	if only != "" && len(idx) == 0 {
		return f, fmt.Errorf("the custom psi has no constant %q", only)
	}
	f.build = func(t []float64) Psi {
		s := spec
		s.Constants = append([]Constant(nil), spec.Constants...)
		for j, i := range idx {
			s.Constants[i].Value = t[j]
		}
		p, err := NewCustom(s)
		if err != nil {
			return nanPsi{}
		}
		return p
	}
	return f, nil
}

// nanPsi stands in for a psi that could not be built; every value is NaN,
// which callers report.
type nanPsi struct{}

// Rho returns NaN for every residual.
func (nanPsi) Rho(float64) float64 { return math.NaN() }

// Psi returns NaN for every residual.
func (nanPsi) Psi(float64) float64 { return math.NaN() }

// Deriv returns NaN for every residual.
func (nanPsi) Deriv(float64) float64 { return math.NaN() }

// Weight returns NaN for every residual.
func (nanPsi) Weight(float64) float64 { return math.NaN() }
