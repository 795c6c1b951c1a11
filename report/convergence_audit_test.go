package report

import (
	"bytes"
	"context"
	"strings"
	"testing"

	"github.com/rhomark/rhomark/harness"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

const auditedScenario = `
seed: 7
model:
  n: 40
  intercept: 20
  columns: [{name: volume, slope: 0.98, dist: levels, levels: [5, 10, 20, 50, 100]}]
noise: {dist: normal, scale: 0.5}
estimators:
  - {label: ls, method: ls}
  - {label: huber-loose, method: irls, psi: huber, stop: {change: 1e-3}}
  - {label: huber, method: irls, psi: huber}
`

// TestSolverAuditInReport: an audited run's report has the section and
// the two tolerance figures; a run without the audit has neither.
func TestSolverAuditInReport(t *testing.T) {
	st, err := scenarios.Parse("audit.yaml", []byte(auditedScenario), scenarios.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	for _, audit := range []bool{true, false} {
		r, err := harness.Run(context.Background(), st, harness.Options{Replicates: 12, AuditSolvers: audit})
		if err != nil {
			t.Fatal(err)
		}
		figs, _, err := Figures(r)
		if err != nil {
			t.Fatal(err)
		}
		names := map[string]bool{}
		for _, f := range figs {
			names[f.Name] = true
		}
		var page bytes.Buffer
		if err := Write(&page, Input{Results: r, Figures: figs}); err != nil {
			t.Fatal(err)
		}
		html := page.String()
		has := strings.Contains(html, `<section id="solver-audit">`) && strings.Contains(html, "huber-loose (change 1e-3): stopping rule leaves the estimate")
		if has != audit || names["iterations-vs-tolerance"] != audit || names["error-vs-tolerance"] != audit {
			t.Errorf("audit %v: section %v, figures %v", audit, has, names)
		}
		if audit != results.HasSolverStudy(r) {
			t.Errorf("audit %v: HasSolverStudy says %v", audit, !audit)
		}
	}
}
