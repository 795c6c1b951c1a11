package psi

import (
	"errors"
	"fmt"
	"math"

	"github.com/rhomark/rhomark/internal/root"
)

// PsiCheck is the outcome of one property check of a psi.
type PsiCheck struct {
	// Property names the property checked.
	Property string `json:"property"`
	// Required properties must hold for a psi to be used by the solvers
	// and the theory; the others describe its shape.
	Required bool `json:"required"`
	// OK reports whether the property holds.
	OK bool `json:"ok"`
	// At is the first point (standardised residual) where it fails, or
	// NaN.
	At float64 `json:"at"`
	// Detail explains the outcome in a line.
	Detail string `json:"detail"`
}

// PsiReport is the outcome of CheckPsi.
type PsiReport struct {
	// Checks holds each property, required ones first.
	Checks []PsiCheck `json:"checks"`
	// Jumps lists the non-negative points where psi jumps.
	Jumps []float64 `json:"jumps"`
	// OK reports whether every required property holds.
	OK bool `json:"ok"`
}

// checkGrid returns the points at which properties are checked: fine on
// [0, 20], then geometric out to 1e12.
func checkGrid() []float64 {
	var g []float64
	for u := 0.0; u <= 20; u += 0.01 {
		g = append(g, u)
	}
	for u := 21.0; u <= 1e12; u *= 1.1 {
		g = append(g, u)
	}
	return g
}

// CheckPsi checks that psi is well formed, reporting for each property the
// first point where it fails: psi(0) = 0; psi odd; psi = rho'; psi'
// consistent with psi; the weight psi(u)/u finite, non-negative and
// continuous at 0; and, as description, bounded, monotone or redescending,
// and where psi jumps. Derivatives are compared by central differences away
// from kinks and jumps (where the difference quotients do not settle).
func CheckPsi(psi Psi) PsiReport {
	grid := checkGrid()
	var r PsiReport
	add := func(name string, required, ok bool, at float64, detail string) {
		r.Checks = append(r.Checks, PsiCheck{Property: name, Required: required, OK: ok, At: at, Detail: detail})
	}
	nan := math.NaN()

	// Values must be finite.
	bad := nan
	for _, u := range grid {
		for _, v := range []float64{psi.Psi(u), psi.Psi(-u), psi.Rho(u), psi.Deriv(u), psi.Weight(u)} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				if math.IsNaN(bad) {
					bad = u
				}
			}
		}
	}
	add("finite values", true, math.IsNaN(bad), bad, okOr(math.IsNaN(bad), "psi, rho, psi' and the weight are finite on the grid", fmt.Sprintf("a value is NaN or infinite at ±%g", bad)))

	p0 := psi.Psi(0)
	add("psi(0) = 0", true, p0 == 0, pick(p0 == 0, nan, 0), okOr(p0 == 0, "psi(0) = 0", fmt.Sprintf("psi(0) = %g", p0)))

	odd := nan
	for _, u := range grid {
		a, b := psi.Psi(u), psi.Psi(-u)
		if math.Abs(a+b) > 1e-12*math.Max(1, math.Abs(a)) {
			odd = u
			break
		}
	}
	add("odd symmetry", true, math.IsNaN(odd), odd, okOr(math.IsNaN(odd), "psi(−u) = −psi(u)",
		fmt.Sprintf("psi(%g) = %g but psi(%g) = %g", odd, psi.Psi(odd), -odd, psi.Psi(-odd))))

	r.Jumps = findJumps(psi, grid)
	// Derivative checks skip the neighbourhood of jumps and of declared
	// kinks (a kink narrower than the difference step would fool them).
	avoid := append(append([]float64(nil), r.Jumps...), breaksOf(psi)...)
	nearJump := func(u float64) bool {
		for _, j := range avoid {
			if math.Abs(u-j) < math.Max(1e-3*math.Max(1, j), 3e-5*math.Max(1, u)) {
				return true
			}
		}
		return false
	}

	// psi = rho': compare the difference quotient of rho with psi where psi
	// is continuous.
	notDeriv := nan
	for _, u := range grid {
		if u > 1e6 || nearJump(u) {
			continue
		}
		h := 1e-5 * math.Max(1, u)
		d := (psi.Rho(u+h) - psi.Rho(u-h)) / (2 * h)
		p := psi.Psi(u)
		if math.Abs(d-p) > 1e-4*math.Max(1, math.Abs(p)) && settled(psi.Rho, u) {
			notDeriv = u
			break
		}
	}
	add("psi = rho'", true, math.IsNaN(notDeriv), notDeriv, okOr(math.IsNaN(notDeriv), "the derivative of rho matches psi",
		fmt.Sprintf("at %g rho' ≈ %g but psi = %g", notDeriv, derivAt(psi.Rho, notDeriv), psi.Psi(notDeriv))))

	// psi' consistent with psi, where the difference quotients settle.
	badDeriv := nan
	for _, u := range grid {
		if u > 1e6 || nearJump(u) || !settled(psi.Psi, u) {
			continue
		}
		d := derivAt(psi.Psi, u)
		if math.Abs(d-psi.Deriv(u)) > 1e-4*math.Max(1, math.Abs(d)) {
			badDeriv = u
			break
		}
	}
	add("psi' consistent with psi", true, math.IsNaN(badDeriv), badDeriv, okOr(math.IsNaN(badDeriv), "psi' matches the derivative of psi away from kinks",
		fmt.Sprintf("at %g psi' = %g but the derivative of psi ≈ %g", badDeriv, psi.Deriv(badDeriv), derivAt(psi.Psi, badDeriv))))

	// The weight at 0 and away from it.
	w0, wt := psi.Weight(0), psi.Weight(1e-9)
	wBad := nan
	for _, u := range grid {
		if w := psi.Weight(u); !(w >= 0) || math.IsInf(w, 0) {
			wBad = u
			break
		}
		if u != 0 {
			if w, q := psi.Weight(u), psi.Psi(u)/u; math.Abs(w-q) > 1e-9*math.Max(1, math.Abs(q)) {
				wBad = u
				break
			}
		}
	}
	cont := math.Abs(w0-wt) <= 1e-6*math.Max(1, math.Abs(w0))
	wOK := math.IsNaN(wBad) && cont && w0 >= 0 && !math.IsInf(w0, 0)
	detail := "psi(u)/u is finite, non-negative and continuous at 0"
	switch {
	case !math.IsNaN(wBad):
		detail = fmt.Sprintf("at %g the weight is %g, psi/u = %g (must be finite, ≥ 0 and equal)", wBad, psi.Weight(wBad), psi.Psi(wBad)/wBad)
	case !cont:
		detail = fmt.Sprintf("weight(0) = %g but weight(1e-9) = %g: not continuous at 0", w0, wt)
		wBad = 0
	}
	add("IRLS weight", true, wOK, wBad, detail)

	_, b := Moments(psi, 1)
	add("E[psi'] > 0 at the normal", true, b > 0, pick(b > 0, nan, 0), okOr(b > 0, fmt.Sprintf("E[psi'(Z)] = %.6g", b), fmt.Sprintf("E[psi'(Z)] = %.6g: psi must increase near 0 for the estimator to exist", b)))

	sh := describeShape(psi)
	add("bounded", false, sh.bounded, nan, okOr(sh.bounded, fmt.Sprintf("sup|psi| = %.6g", sh.sup), "psi is unbounded: one observation can move the estimate without limit"))
	add("monotone", false, sh.monotone, nan, okOr(sh.monotone, "psi is non-decreasing on [0, ∞): the estimate is unique for a fixed scale", "psi decreases somewhere on [0, ∞)"))
	rd := "psi does not tend to 0"
	if sh.redescending {
		rd = "psi tends to 0"
		if !math.IsInf(sh.rejection, 1) {
			rd = fmt.Sprintf("psi is 0 beyond %.6g", sh.rejection)
		}
	}
	add("redescending", false, sh.redescending, nan, rd)
	jd := "no jumps"
	if len(r.Jumps) > 0 {
		jd = fmt.Sprintf("psi jumps at ±%v", r.Jumps)
	}
	add("continuous", false, len(r.Jumps) == 0, nan, jd)

	r.OK = true
	for _, c := range r.Checks {
		if c.Required && !c.OK {
			r.OK = false
		}
	}
	return r
}

func okOr(ok bool, yes, no string) string {
	if ok {
		return yes
	}
	return no
}

func pick(c bool, a, b float64) float64 {
	if c {
		return a
	}
	return b
}

// derivAt is a central difference of f at u.
func derivAt(f func(float64) float64, u float64) float64 {
	h := 1e-5 * math.Max(1, math.Abs(u))
	return (f(u+h) - f(u-h)) / (2 * h)
}

// settled reports whether f is smooth around u: its left and right
// difference quotients agree (they differ by about h·f” where f is smooth,
// and by the jump of f' at a kink).
func settled(f func(float64) float64, u float64) bool {
	h := 1e-5 * math.Max(1, math.Abs(u))
	fu := f(u)
	left := (fu - f(u-h)) / h
	right := (f(u+h) - fu) / h
	return math.Abs(left-right) <= 1e-3*math.Max(1, math.Abs(left))
}

// Discontinuous reports whether psi jumps somewhere: for a built-in family,
// at one of its declared kinks; for any other psi (a custom one's declared
// kinks are optional), anywhere a scan of [0, 20] finds.
func Discontinuous(psi Psi) bool {
	if _, custom := psi.(*Custom); custom {
		return len(findJumps(psi, checkGrid())) > 0
	}
	if k, ok := psi.(Kinked); ok {
		for _, x := range k.Kinks() {
			lo, hi := psi.Psi(x*(1-1e-9)), psi.Psi(x*(1+1e-9))
			if math.Abs(hi-lo) > 1e-6*math.Max(1, math.Abs(lo)) {
				return true
			}
		}
		return false
	}
	return len(findJumps(psi, checkGrid())) > 0
}

// findJumps locates discontinuities of psi on [0, 20]: in each grid
// interval [a, b] whose change is large, bisection finds where
// |psi(u) − psi(a)| − |psi(b) − psi(u)| changes sign, the point that
// splits the change in two; a jump is where the change across the final
// bracket does not shrink.
func findJumps(psi Psi, grid []float64) []float64 {
	var jumps []float64
	for i := 0; i+1 < len(grid) && grid[i+1] <= 20; i++ {
		a, b := grid[i], grid[i+1]
		d := math.Abs(psi.Psi(b) - psi.Psi(a))
		if d < 1e-9 {
			continue
		}
		pa, pb := psi.Psi(a), psi.Psi(b)
		split := func(u float64) float64 {
			pu := psi.Psi(u)
			return math.Abs(pu-pa) - math.Abs(pb-pu)
		}
		lo, hi, err := root.Bisect(split, a, b, root.Tolerance{Abs: 1e-15, Rel: 1e-15, MaxIter: 60})
		if err != nil && !errors.Is(err, root.ErrMaxIter) {
			continue // psi is NaN here, which the other checks report
		}
		a, b = lo, hi
		if jump := math.Abs(psi.Psi(b) - psi.Psi(a)); jump > 1e-6*math.Max(1, d) && jump > d/4 {
			if len(jumps) == 0 || math.Abs(jumps[len(jumps)-1]-b) > 1e-9 {
				jumps = append(jumps, b)
			}
		}
	}
	return jumps
}
