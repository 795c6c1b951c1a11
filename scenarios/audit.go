package scenarios

import (
	"fmt"

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
		if !psi.Redescending(fn) {
			c.fail(path, "needs a redescending psi (bisquare, hampel, andrews, welsch, cauchy, talwar or one of your own that returns to 0): the estimating equations of a monotone psi such as %s have one root", e.Psi.Name())
		}
	}
}
