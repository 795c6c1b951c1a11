package harness

import (
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// breakdownView builds the bias curves and empirical breakdown points of a
// run whose scenario has a breakdown section; res.Cells are the results of
// st.Cells, in order. The fraction of a cell is its swept number, as the
// loader read it.
func breakdownView(st *scenarios.Study, res *results.Results) *results.Breakdown {
	b := st.Cells[0].Scenario.Breakdown
	if b == nil || b.Fraction == "" {
		return nil
	}
	out := &results.Breakdown{Fraction: b.Fraction, WorstOver: b.WorstOver, Threshold: b.Threshold}
	// The sweeps named by the breakdown section, by position.
	fraction := -1
	worst := make([]bool, len(st.Base.Vary))
	for i, sw := range st.Base.Vary {
		if sw.Path == b.Fraction {
			fraction = i
		}
		worst[i] = slices.Contains(b.WorstOver, sw.Path)
	}
	// Group the cells that differ only in the worst-over sweeps.
	type group struct {
		settings []results.Setting
		cells    []*results.Cell
		fraction float64
	}
	var groups []*group
	index := map[string]*group{}
	for i := range res.Cells {
		c := &res.Cells[i]
		var keep []results.Setting
		for j, s := range c.Settings {
			if !worst[j] {
				keep = append(keep, s)
			}
		}
		key := settingsKey(keep)
		g, ok := index[key]
		if !ok {
			g = &group{settings: keep, fraction: math.NaN()}
			if fraction >= 0 {
				g.fraction = st.Cells[i].Settings[fraction].Number
			}
			index[key] = g
			groups = append(groups, g)
		}
		g.cells = append(g.cells, c)
	}
	for _, g := range groups {
		frac := g.fraction
		for ei, e := range g.cells[0].Estimators {
			pt := results.BiasPoint{Settings: g.settings, Fraction: frac, Estimator: e.Label}
			var sum, se2 float64
			best := -1.0
			var at *results.Cell
			k := 0
			for _, c := range g.cells {
				m := c.Estimators[ei].SlopeBias
				v := float64(m.Value)
				if math.IsNaN(v) {
					continue
				}
				k++
				sum += v
				se2 += float64(m.MCSE) * float64(m.MCSE)
				if v > best {
					best, at = v, c
				}
			}
			nan := results.Num(math.NaN())
			pt.Bias, pt.Worst = results.Measure{Value: nan, MCSE: nan}, results.Measure{Value: nan, MCSE: nan}
			if k > 0 {
				// Cells draw independent replicates, so the MCSE of the
				// mean over positions combines theirs in quadrature.
				pt.Bias = results.Measure{Value: results.Num(sum / float64(k)), MCSE: results.Num(math.Sqrt(se2) / float64(k))}
				pt.Worst = at.Estimators[ei].SlopeBias
				for j, s := range at.Settings {
					if worst[j] {
						pt.WorstAt = append(pt.WorstAt, s)
					}
				}
				pt.PastThreshold = at.Estimators[ei].PastThreshold
			}
			out.Curve = append(out.Curve, pt)
		}
	}
	if b.Threshold > 0 {
		out.Points = breakdownPoints(b, out.Curve)
	}
	return out
}

// breakdownPoints finds, per estimator and group of the other sweeps, the
// smallest fraction whose worst slope-bias norm exceeds the threshold.
func breakdownPoints(b *scenarios.Breakdown, curve []results.BiasPoint) []results.BreakdownPoint {
	type key struct{ rest, est string }
	var order []key
	pts := map[key][]results.BiasPoint{}
	rests := map[key][]results.Setting{}
	for _, pt := range curve {
		var rest []results.Setting
		for _, s := range pt.Settings {
			if s.Path != b.Fraction {
				rest = append(rest, s)
			}
		}
		k := key{settingsKey(rest), pt.Estimator}
		if _, ok := pts[k]; !ok {
			order = append(order, k)
			rests[k] = rest
		}
		pts[k] = append(pts[k], pt)
	}
	var out []results.BreakdownPoint
	for _, k := range order {
		list := pts[k]
		sort.SliceStable(list, func(i, j int) bool { return list[i].Fraction < list[j].Fraction })
		bp := results.BreakdownPoint{Settings: rests[k], Estimator: k.est, Fraction: results.Num(math.NaN())}
		for _, pt := range list {
			if float64(pt.Worst.Value) > b.Threshold {
				bp.Fraction = results.Num(pt.Fraction)
				bp.PastThreshold = pt.PastThreshold
				break
			}
		}
		out = append(out, bp)
	}
	return out
}

// settingsKey joins settings into a map key.
func settingsKey(s []results.Setting) string {
	parts := make([]string, len(s))
	for i, x := range s {
		parts[i] = x.Path + "=" + x.Value
	}
	return strings.Join(parts, "\x00")
}
