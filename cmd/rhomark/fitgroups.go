package main

import (
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
	obs []fitObservation
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

// fitRecords is how many records are in flight: one being fitted, one
// being written and one waiting, so that neither side waits on the other
// when their times per group vary.
const fitRecords = 3

// run fits every group and gives each record to out as soon as it is
// made, in group order, and returns how many groups could not be fitted.
// The fits run in a goroutine of their own while the records before them
// are written: a fit depends only on its data and the seed given to the
// workspace, so the output is the same, byte for byte, as one loop's.
func (fr *fitter) run(out *fitWriter) (failed int, err error) {
	free := make(chan *fitRecord, fitRecords)
	for range fitRecords {
		free <- new(fitRecord)
	}
	ready := make(chan *fitRecord, fitRecords) // never full: fitRecords records exist
	stop := make(chan struct{})
	go func() {
		defer close(ready)
		var ws estimators.Workspace
		var res estimators.Result
		var buf fitBuffers
		for _, g := range fr.design.groups {
			var rec *fitRecord
			select {
			case rec = <-free:
			case <-stop:
				return
			}
			rec.err = fr.fit(g, rec, &ws, &res, &buf)
			ready <- rec
		}
	}()
	// end stops the fits and waits for their goroutine to finish.
	end := func() {
		close(stop)
		for range ready {
		}
	}
	for rec := range ready {
		if rec.err != nil {
			end()
			return failed, rec.err
		}
		if rec.fj.Error != "" {
			failed++
		}
		if err := out.fit(&rec.fj); err != nil {
			end()
			return failed, err
		}
		free <- rec
	}
	return failed, nil
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
	ws.SeedRandom(fr.seed, 0)
	if err := fr.est.Fit(x, y, ws, res); err != nil {
		fj.Status, fj.Error = "not-fitted", err.Error()
		return nil
	}
	fj.Coefficients = numMap(&rec.coefficients)
	for k, n := range fr.names {
		fj.Coefficients[n] = jsonFloat(res.Coefficients[k])
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
