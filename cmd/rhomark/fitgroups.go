package main

import (
	"math"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/csvdata"
)

// fitter fits the groups of a design, one after another.
type fitter struct {
	t         *csvdata.Table
	design    design
	est       estimators.Estimator
	seed      uint64
	intercept bool
	names     []string // the coefficients' names
	cut       float64  // the outlier cut
}

// fitRecord is the record of one group's fit and the storage it keeps
// (its maps and observations), reused from one group to another.
type fitRecord struct {
	fj  fitJSON
	err error // a problem with the data, which ends the command
	// nonFinite: the fit ended with coefficients or a scale that are not
	// finite (status non-finite), as data near the float64 limit give.
	nonFinite bool
	obs       []fitObservation
	// The maps of the record, by coefficient name.
	coefficients, standardErrors map[string]jsonFloat
	intervals                    map[string][2]jsonFloat
}

// numMap returns *m emptied, making it first if need be.
func numMap(m *map[string]jsonFloat) map[string]jsonFloat {
	if *m == nil {
		*m = map[string]jsonFloat{}
	}
	clear(*m)
	return *m
}

// The fits are handed to the writer in batches of fitBatch records,
// fitBatches batches in flight: one being fitted, one being written and
// one waiting, so that neither side waits on the other when their times
// per group vary, and the goroutines wake each other once a batch rather
// than once a group.
const (
	fitBatch   = 8
	fitBatches = 3
)

// run fits every group and gives each record to out as soon as its batch
// is made, in group order, and returns how many groups could not be
// fitted and how many fits ended with numbers that are not finite. The fits run in a goroutine of their own while the records
// before them are written: a fit depends only on its data and the seed
// given to the workspace, so the output is the same, byte for byte, as
// one loop's.
func (fr *fitter) run(out *fitWriter) (failed, nonFinite int, err error) {
	free := make(chan []fitRecord, fitBatches)
	for range fitBatches {
		free <- make([]fitRecord, fitBatch)
	}
	ready := make(chan []fitRecord, fitBatches) // never full: fitBatches batches exist
	stop := make(chan struct{})
	go func() {
		defer close(ready)
		var ws estimators.Workspace
		var res estimators.Result
		var buf fitBuffers
		groups := fr.design.groups
		for len(groups) > 0 {
			var batch []fitRecord
			select {
			case batch = <-free:
			case <-stop:
				return
			}
			batch = batch[:min(len(groups), cap(batch))]
			for i := range batch {
				batch[i].err = fr.fit(groups[i], &batch[i], &ws, &res, &buf)
				if batch[i].err != nil {
					batch = batch[:i+1]
					break
				}
			}
			groups = groups[len(batch):]
			ready <- batch
		}
	}()
	// end stops the fits and waits for their goroutine to finish.
	end := func() {
		close(stop)
		for range ready {
		}
	}
	for batch := range ready {
		for i := range batch {
			rec := &batch[i]
			if rec.err != nil {
				end()
				return failed, nonFinite, rec.err
			}
			if rec.fj.Error != "" {
				failed++
			}
			if rec.nonFinite {
				nonFinite++
			}
			if err := out.fit(&rec.fj); err != nil {
				end()
				return failed, nonFinite, err
			}
		}
		free <- batch
	}
	return failed, nonFinite, nil
}

// fit fits group g into rec, with ws, res and buf as scratch. An error is
// a problem with the data; a fit that fails is recorded in rec.
func (fr *fitter) fit(g fitGroup, rec *fitRecord, ws *estimators.Workspace, res *estimators.Result, buf *fitBuffers) error {
	x, y, err := fr.design.matricesInto(fr.t, g.rows, fr.intercept, buf)
	if err != nil {
		return err
	}
	fj := &rec.fj
	*fj = fitJSON{Group: g.name, Rows: len(g.rows), Order: fr.names}
	rec.nonFinite = false
	ws.SeedRandom(fr.seed, 0)
	if err := fr.est.Fit(x, y, ws, res); err != nil {
		fj.Status, fj.Error = "not-fitted", err.Error()
		return nil
	}
	fj.Coefficients = numMap(&rec.coefficients)
	rec.nonFinite = res.Status == estimators.NonFinite || !finite(res.Scale)
	for k, n := range fr.names {
		fj.Coefficients[n] = jsonFloat(res.Coefficients[k])
		rec.nonFinite = rec.nonFinite || !finite(res.Coefficients[k])
	}
	fj.Scale, fj.Iterations, fj.Status = jsonFloat(res.Scale), res.Iterations, res.Status.String()
	fj.Converged, fj.EquationNorm, fj.Objective = res.Status.Converged(), jsonFloat(res.EquationNorm), jsonFloat(res.Objective)
	if res.SRefinement != estimators.RefinementNone {
		fj.SRefinement, fj.SSteps = res.SRefinement.String(), res.SSteps
	}
	addInference(fj, fr.est, x, ws, res, fr.names, buf, rec)
	fj.Observations = observations(fr.est, x, y, res, fr.cut, buf, &rec.obs)
	for i := range fj.Observations {
		fj.Observations[i].Row = g.rows[i] + 1
		fj.Observations[i].Line = fr.t.Line(g.rows[i])
		if fj.Observations[i].Flag {
			fj.Outliers++
		}
	}
	return nil
}

// finite reports whether v is neither infinite nor NaN.
func finite(v float64) bool { return !math.IsInf(v, 0) && !math.IsNaN(v) }
