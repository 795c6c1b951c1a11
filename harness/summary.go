package harness

import (
	"fmt"
	"math"
	"reflect"
	"runtime"
	"runtime/debug"
	"slices"
	"strconv"
	"time"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/psi"
	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// summarise turns the tallies into results.
func summarise(st *scenarios.Study, plans []cellPlan, tallies []*cellTally, seed uint64, reps int) *results.Results {
	res := &results.Results{
		Schema: results.SchemaVersion,
		Scenario: results.ScenarioInfo{
			Name:       st.Base.Name,
			File:       st.File,
			Hash:       st.Hash,
			Normalised: st.Normalised,
		},
		Seed:       seed,
		Replicates: reps,
		Complete:   true,
		Reference:  st.Base.Reference,
	}
	for i, p := range plans {
		t := tallies[i]
		cell := results.Cell{Index: i, Replicates: t.replicates}
		for _, s := range p.cell.Settings {
			cell.Settings = append(cell.Settings, results.Setting{Path: s.Path, Value: s.Value})
		}
		if t.replicates < int64(reps) {
			res.Complete = false
		}
		sc := p.cell.Scenario
		names := sc.CoefficientNames()
		theory := cellTheory(p)
		for j, spec := range sc.Estimators {
			et := &t.ests[j]
			method, psiName, tuning := describe(spec, p.ests[j])
			est := results.Estimator{
				Label:            spec.Label,
				Method:           method,
				Psi:              psiName,
				Tuning:           tuning,
				Convergence:      convergence(et),
				TheoryEfficiency: results.Num(theory[j]),
			}
			est.SlopeBias = slopeBias(p, et)
			auditSummary(&est.Convergence, &p, j, et, names)
			if p.threshold > 0 {
				r := results.Wilson(et.past, et.fits)
				est.PastThreshold = &r
			}
			for k, name := range names {
				c := coefficient(name, p.truth[k], &et.coefs[k], j == p.ref)
				c.TheoryGap = results.Num((float64(c.RelEff.Value) - theory[j]) / float64(c.RelEff.MCSE))
				if j == p.ref || math.IsNaN(theory[j]) {
					c.TheoryGap = results.Num(math.NaN())
				}
				est.Coefficients = append(est.Coefficients, c)
				if k >= p.firstSlope && c.HeavyTails {
					// The slope-bias MCSE rests on the slopes' covariance.
					est.SlopeBias.MCSE = results.Num(math.NaN())
				}
			}
			cell.Estimators = append(cell.Estimators, est)
		}
		v := results.Decide(cell, res.Reference)
		cell.Verdict = &v
		res.Cells = append(res.Cells, cell)
	}
	res.Recommendation = results.Recommend(res, results.DefaultTargetEfficiency)
	return res
}

// cellTheory returns, per estimator, its asymptotic efficiency against the
// reference at the normal model, or NaN where the cell's data are not from
// that model (noise not normal, heteroscedastic, or contaminated) or the
// estimator has no such theory. An M-estimator with MAD scale standardises
// residuals by the noise SD asymptotically; one with a fixed scale S by S,
// so its psi is seen at κZ with κ = SD/S.
func cellTheory(p cellPlan) []float64 {
	sc := p.cell.Scenario
	out := make([]float64, len(p.ests))
	for i := range out {
		out[i] = math.NaN()
	}
	sd, normal := p.gen.NormalNoise()
	if !normal {
		return out
	}
	for _, c := range sc.Contamination {
		if c.Fraction > 0 {
			return out
		}
	}
	n, _ := p.gen.Dims()
	abs := make([]float64, len(p.ests))
	for i, e := range p.ests {
		abs[i] = methodTheory(e, sd, n, len(p.truth))
	}
	for i := range out {
		out[i] = abs[i] / abs[p.ref]
	}
	return out
}

// functionCurves samples the psi, rho and weight of the first cell's
// estimators that have a psi to draw (estimators.Estimator.CurvePsi:
// M-estimators, the M-step of MM, and the bisquare rho of S).
func functionCurves(p cellPlan) []results.FunctionCurve {
	var out []results.FunctionCurve
	for i, e := range p.ests {
		spec := p.cell.Scenario.Estimators[i]
		_, desc, tuning := describe(spec, e)
		fn, name := e.CurvePsi()
		if name != "" {
			desc = name
		}
		if fn == nil {
			continue
		}
		for _, t := range tuning {
			desc += " " + strconv.FormatFloat(t, 'g', -1, 64)
		}
		fc := results.FunctionCurve{Estimator: spec.Label, Psi: desc}
		// 401 equally spaced points over [0, 8] (a step of 0.02, fine
		// enough to draw a corner where it is), plus each kink inside the
		// range exactly, so that a corner such as Huber's at k is drawn
		// at k and not cut off between two grid points.
		const steps = 400
		us := make([]float64, 0, steps+4)
		for k := 0; k <= steps; k++ {
			us = append(us, 8*float64(k)/steps)
		}
		if kk, ok := fn.(psi.Kinked); ok {
			for _, x := range kk.Kinks() {
				if x > 0 && x < 8 && !math.IsNaN(x) {
					us = append(us, x)
				}
			}
			slices.Sort(us)
			us = slices.Compact(us)
		}
		for _, u := range us {
			fc.U = append(fc.U, u)
			fc.PsiValues = append(fc.PsiValues, results.Num(fn.Psi(u)))
			fc.Rho = append(fc.Rho, results.Num(fn.Rho(u)))
			fc.Weight = append(fc.Weight, results.Num(fn.Weight(u)))
		}
		out = append(out, fc)
	}
	return out
}

// tuningCurves computes the asymptotic efficiency, against the reference,
// over a range of the first tuning constant of every estimator whose tuning
// is swept (a path estimators.LABEL.tuning), spanning the swept values.
func tuningCurves(st *scenarios.Study, plans []cellPlan) []results.TuningCurve {
	var out []results.TuningCurve
	for _, sw := range st.Base.Vary {
		idx := sw.Target.Index
		if sw.Target.Kind != scenarios.SweepTuning || sw.Target.Name != "" || idx < 0 || len(plans) == 0 {
			continue
		}
		p := plans[0]
		spec := p.cell.Scenario.Estimators[idx]
		fam, ok := psi.LookupFamily(spec.Psi.Family)
		if !ok || len(fam.Params) == 0 || spec.Psi.Custom != nil {
			continue
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := range plans {
			t := plans[i].cell.Scenario.Estimators[idx].Tuning
			if len(t) > 0 {
				lo, hi = math.Min(lo, t[0]), math.Max(hi, t[0])
			}
		}
		if !(hi >= lo) || lo <= 0 {
			continue
		}
		lo, hi = lo/1.25, hi*1.25
		sd := *p.cell.Scenario.Noise.Scale
		n, _ := p.gen.Dims()
		refEff := methodTheory(p.ests[p.ref], sd, n, len(p.truth))
		tc := results.TuningCurve{Path: sw.Path, Estimator: spec.Label}
		for k := 0; k <= 60; k++ {
			c := lo * math.Pow(hi/lo, float64(k)/60)
			psi, err := fam.New(fam.WithFirst(c))
			if err != nil {
				continue
			}
			e := p.ests[idx]
			e.Psi = psi
			tc.Constants = append(tc.Constants, c)
			tc.Efficiency = append(tc.Efficiency, results.Num(methodTheory(e, sd, n, len(p.truth))/refEff))
		}
		out = append(out, tc)
	}
	return out
}

// methodTheory returns the asymptotic efficiency at the normal with noise SD
// sd of an estimator against least squares, as the estimator declares it
// (estimators.NormalTheory), or NaN when it declares none.
func methodTheory(e estimators.Fitter, sd float64, n, p int) float64 {
	if t, ok := e.(estimators.NormalTheory); ok {
		return t.NormalEfficiency(sd, n, p)
	}
	return math.NaN()
}

// coefficient computes the measures of one coefficient.
// reference says the coefficient is the reference estimator's own.
func coefficient(name string, truth float64, t *coefTally, reference bool) results.Coefficient {
	c := results.Coefficient{Name: name, True: truth, Used: t.n, Paired: t.np}
	nan := results.Measure{Value: results.Num(math.NaN()), MCSE: results.Num(math.NaN())}
	c.Mean, c.Bias, c.EmpSE, c.MSE, c.RMSE, c.MSERatio, c.RelEff = nan, nan, nan, nan, nan, nan, nan
	if t.n > 0 {
		m := results.Moments{
			N:     t.n,
			Mean:  t.s1.Float64() / float64(t.n),
			SS:    centred(&t.s1, &t.s2, t.n),
			SS4:   fourthAbout(&t.s1, &t.s2, &t.s3, &t.s4, t.n),
			MSE:   t.s2.Float64() / float64(t.n),
			SSMSE: fourthCentred(&t.s2, &t.s4, t.n),
		}
		c.Bias = m.Bias()
		c.Mean = results.Measure{Value: c.Bias.Value + results.Num(truth), MCSE: c.Bias.MCSE}
		c.EmpSE = m.EmpSE()
		c.MSE = m.MeanSquaredError()
		c.RMSE = m.RootMeanSquaredError()
		c.TailRatio = results.Num(results.TailRatio(m.SS, m.SS4))
		if m.HeavyTailed() {
			// The spread rests on a few replicates: no MCSE built on a
			// second moment means anything.
			c.HeavyTails = true
			c.Bias.MCSE, c.Mean.MCSE, c.EmpSE.MCSE, c.MSE.MCSE, c.RMSE.MCSE = nan.MCSE, nan.MCSE, nan.MCSE, nan.MCSE, nan.MCSE
		}
	}
	c.Intervals = t.nInt
	c.Coverage, c.Width = nan, nan
	if t.nInt > 0 {
		n := float64(t.nInt)
		c.Coverage = results.Proportion(t.covered, t.nInt)
		w := t.w1.Float64() / n
		c.Width = results.Measure{Value: results.Num(w), MCSE: results.Num(math.Sqrt(math.Max(0, centred(&t.w1, &t.w2, t.nInt)) / (n * (n - 1))))}
	}
	if t.np > 1 {
		pr := results.Paired{
			N:     t.np,
			SSA:   centred(&t.pa1, &t.pa2, t.np),
			SSB:   centred(&t.pb1, &t.pb2, t.np),
			SAB:   crossCentred(&t.pa1, &t.pb1, &t.pab, t.np),
			SSA4:  fourthAbout(&t.pa1, &t.pa2, &t.pa3, &t.pa4, t.np),
			SSB4:  fourthAbout(&t.pb1, &t.pb2, &t.pb3, &t.pb4, t.np),
			SAB22: crossFourthAbout(&t.pa1, &t.pb1, &t.pa2, &t.pb2, &t.pab, &t.pa2b, &t.pab2, &t.pa2b2, t.np),
		}
		c.RelEff = pr.RelativeEfficiency()
		sq := results.PairedSquares{
			N:     t.np,
			SumA2: t.pa2.Float64(),
			SumB2: t.pb2.Float64(),
			SSA2:  centred(&t.pa2, &t.pa4, t.np),
			SSB2:  centred(&t.pb2, &t.pb4, t.np),
			SA2B2: crossCentred(&t.pa2, &t.pb2, &t.pa2b2, t.np),
		}
		c.MSERatio = sq.MSERatio()
		if pr.HeavyTailed() {
			c.RelEffHeavyTails = true
			c.RelEff.MCSE, c.MSERatio.MCSE = nan.MCSE, nan.MCSE
		}
	}
	if reference && t.n > 0 {
		// Against itself the ratio is 1 by definition, not a measurement.
		c.MSERatio = results.Measure{Value: 1, MCSE: nan.MCSE}
	}
	return c
}

// slopeBias returns the norm of the slope bias vector b, debiased: the
// plain norm of the mean error overshoots, E‖b̂‖² = ‖b‖² + tr Σ/n, so the
// value is √max(0, ‖b̂‖² − tr Σ̂/n). Its MCSE is the delta-method √(uᵀΣu/n),
// u = b̂/‖b̂‖ and Σ the covariance of the slope errors (√(tr Σ/n) when
// b̂ = 0). Beyond maxCrossSlopes slopes the cross covariances are not kept
// and Σ is taken as diagonal.
func slopeBias(p cellPlan, et *estTally) results.Measure {
	nan := results.Num(math.NaN())
	first := p.firstSlope
	k := len(p.truth) - first
	if k == 0 || et.coefs[first].n < 2 {
		return results.Measure{Value: nan, MCSE: nan}
	}
	n := et.coefs[first].n
	nf := float64(n)
	b := make([]float64, k)
	var norm2 float64
	for j := 0; j < k; j++ {
		b[j] = et.coefs[first+j].s1.Float64() / nf
		norm2 += b[j] * b[j]
	}
	cov := func(a, c int) float64 {
		ta, tc := &et.coefs[first+a], &et.coefs[first+c]
		if a == c {
			return centred(&ta.s1, &ta.s2, n) / (nf - 1)
		}
		if et.cross == nil {
			return 0
		}
		if a > c {
			a, c = c, a
		}
		// Index of (a, c), a < c, in the row-by-row upper triangle.
		idx := a*k - a*(a+1)/2 + (c - a - 1)
		return crossCentred(&ta.s1, &tc.s1, &et.cross[idx], n) / (nf - 1)
	}
	norm := math.Sqrt(norm2)
	var trace float64
	for j := 0; j < k; j++ {
		trace += cov(j, j)
	}
	debiased := math.Sqrt(math.Max(0, norm2-trace/nf))
	var v float64
	if norm == 0 {
		v = trace
	} else {
		for a := 0; a < k; a++ {
			for c := 0; c < k; c++ {
				v += b[a] / norm * cov(a, c) * b[c] / norm
			}
		}
	}
	return results.Measure{Value: results.Num(debiased), MCSE: results.Num(math.Sqrt(math.Max(0, v) / nf))}
}

// convergence summarises the statuses and iterations of one estimator.
func convergence(t *estTally) results.Convergence {
	c := results.Convergence{
		Fits:      t.fits,
		Halvings:  t.halvings,
		Fallbacks: t.fallbacks,
		QRSolves:  t.qrSolves,
	}
	for _, s := range estimators.Statuses() {
		k := t.statuses[int(s)]
		if s.Converged() {
			c.Converged += k
		}
		if k > 0 {
			c.Statuses = append(c.Statuses, results.StatusCount{Status: s.String(), Converged: s.Converged(), Count: k, Rate: results.Wilson(k, t.fits)})
		}
	}
	c.FailureRate = results.Wilson(t.fits-c.Converged, t.fits)
	nan := results.Num(math.NaN())
	c.MeanIterations = results.Measure{Value: nan, MCSE: nan}
	c.MedianIterations = nan
	if t.fits > 0 {
		n := float64(t.fits)
		mean := float64(t.iterSum) / n
		// Integer sums are exact; the variance is formed in float64 from
		// them (iteration counts are small, so nothing cancels badly).
		ss := float64(t.iterSum2) - float64(t.iterSum)*mean
		c.MeanIterations = results.Measure{Value: results.Num(mean), MCSE: results.Num(math.Sqrt(math.Max(0, ss) / (n * (n - 1))))}
		c.MedianIterations = results.Num(histMedian(t.iterHist, t.fits))
	}
	c.MaxIterations = t.iterMax
	for k := len(t.iterHist) - 1; k >= 0; k-- {
		if t.iterHist[k] > 0 {
			c.IterationHistogram = append([]int64(nil), t.iterHist[:k+1]...)
			break
		}
	}
	return c
}

// histMedian returns the median of n values given as a histogram (the mean
// of the two middle values for even n).
func histMedian(hist []int64, n int64) float64 {
	lo, hi := (n-1)/2, n/2 // 0-based ranks of the middle values
	var seen int64
	var a, b float64 = -1, -1
	for k, c := range hist {
		if a < 0 && seen+c > lo {
			a = float64(k)
		}
		if b < 0 && seen+c > hi {
			b = float64(k)
			break
		}
		seen += c
	}
	return (a + b) / 2
}

// provenance records the run's circumstances.
func provenance(workers int, started time.Time, plans []cellPlan, tallies []*cellTally) results.Provenance {
	p := results.Provenance{
		GoVersion: runtime.Version(),
		OS:        runtime.GOOS,
		Arch:      runtime.GOARCH,
		Workers:   workers,
		Started:   started.UTC(),
		Finished:  time.Now().UTC(),
	}
	if bi, ok := debug.ReadBuildInfo(); ok {
		p.Build = map[string]string{"path": bi.Path, "module_version": bi.Main.Version}
		for _, s := range bi.Settings {
			switch s.Key {
			case "vcs.revision", "vcs.time", "vcs.modified", "GOAMD64", "CGO_ENABLED":
				p.Build[s.Key] = s.Value
			}
		}
	}
	for i, pl := range plans {
		for j, spec := range pl.cell.Scenario.Estimators {
			et := &tallies[i].ests[j]
			if et.fits == 0 {
				continue
			}
			p.Timing = append(p.Timing, results.Timing{Cell: i, Estimator: spec.Label,
				SecondsPer: float64(et.nanos) / float64(et.fits) / 1e9})
		}
	}
	return p
}

// describe returns the method, psi family and tuning constants that the
// results record for an estimator: those of its scenario entry, unless
// Options.Adjust changed the built estimator's method or psi, in which case
// those of the estimator that was fitted: a built-in family by its name and
// constants, a custom psi as "custom", a psi type of the caller's own by its
// type name.
func describe(spec scenarios.EstimatorSpec, e estimators.Estimator) (method, psiName string, tuning []float64) {
	method, psiName, tuning = spec.Method, spec.Psi.Name(), spec.Tuning
	if spec.Outside() {
		return method, psiName, tuning
	}
	if m := e.Method.String(); m != method {
		method = m
	}
	if e.Psi == nil {
		return method, psiName, tuning
	}
	built, err := spec.BuildPsi()
	if err == nil && built != nil && reflect.TypeOf(built) == reflect.TypeOf(e.Psi) && reflect.TypeOf(built).Comparable() && built == e.Psi {
		return method, psiName, tuning
	}
	if name, t, ok := psi.Describe(e.Psi); ok {
		return method, name, t
	}
	if _, ok := e.Psi.(*psi.Custom); ok {
		return method, "custom", nil
	}
	// A psi type of the caller's own: its Go type name.
	t := reflect.TypeOf(e.Psi)
	if t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t.Name() != "" {
		return method, t.Name(), nil
	}
	return method, fmt.Sprintf("%T", e.Psi), nil
}
