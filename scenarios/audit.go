package scenarios

import (
	"fmt"
	"math"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
)

// validateAudits checks the solver-study keys of the estimators:
// solver-audit applies to any method (a direct method's error is 0), roots
// only to an M-estimator with a redescending psi, whose estimating
// equations can have several roots.
func (s *Scenario) validateAudits(c checker) {
	p := s.Coefficients()
	for i := range s.Estimators {
		e := &s.Estimators[i]
		if e.Outside() {
			// rhomark cannot continue or restart another program's
			// iteration: it sees only the program's answer.
			if e.SolverAudit {
				c.fail(fmt.Sprintf("estimators[%d].solver-audit", i), "is not available for method %s: rhomark sees only the program's answer, not its iteration, so it cannot continue it to its fixed point; audit rhomark's own estimators", e.Method)
			}
			if e.Roots {
				c.fail(fmt.Sprintf("estimators[%d].roots", i), "is not available for method %s: rhomark cannot restart another program's iteration from other starts", e.Method)
			}
			continue
		}
		if !e.Roots {
			continue
		}
		path := fmt.Sprintf("estimators[%d].roots", i)
		m, ok := estimators.ParseMethod(e.Method)
		if !ok {
			continue // reported with the method
		}
		if !m.TakesPsi() {
			c.fail(path, "is used only by %s with a redescending psi (method %s has no estimating equation to have several roots)", methodsWhere(func(i estimators.MethodInfo) bool { return i.TakesPsi }), e.Method)
			continue
		}
		if s.Model.N < 2*p {
			c.fail(path, "needs n ≥ 2 × coefficients = %d observations for its S-estimate start, got n = %d", 2*p, s.Model.N)
			continue
		}
		fn, err := e.BuildPsi()
		if err != nil {
			continue // reported with the psi
		}
		if !Redescending(fn) {
			c.fail(path, "needs a redescending psi (bisquare, hampel, andrews, welsch, cauchy, talwar or one of your own that returns to 0): the estimating equations of a monotone psi such as %s have one root", e.Psi.Name())
		}
	}
}

// Redescending reports whether psi returns to zero far out: |psi(1e12)| is
// at most 1e-6 times the largest |psi(u)| on a grid over [0, 50], the
// rule psi.Theory uses for its shape.
func Redescending(fn psi.Psi) bool {
	sup := 0.0
	for k := 1; k <= 2000; k++ {
		sup = math.Max(sup, math.Abs(fn.Psi(float64(k)/40)))
	}
	far := math.Abs(fn.Psi(1e12))
	return sup > 0 && far <= 1e-6*sup
}
