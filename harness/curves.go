package harness

import (
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/rhomark/rhomark/results"
	"github.com/rhomark/rhomark/scenarios"
)

// breakdownView builds the bias curves and empirical breakdown points of a
// run whose scenario has a breakdown section.
func breakdownView(b *scenarios.Breakdown, res *results.Results) *results.Breakdown {
	if b == nil || b.Fraction == "" {
		return nil
	}
	out := &results.Breakdown{Fraction: b.Fraction, WorstOver: b.WorstOver, Threshold: b.Threshold}
	worst := map[string]bool{}
	for _, w := range b.WorstOver {
		worst[w] = true
	}
	// Group the cells that differ only in the worst-over paths.
	type group struct {
		settings []results.Setting
		cells    []*results.Cell
	}
	var groups []*group
	index := map[string]*group{}
	for i := range res.Cells {
		c := &res.Cells[i]
		var keep []results.Setting
		for _, s := range c.Settings {
			if !worst[s.Path] {
				keep = append(keep, s)
			}
		}
		key := settingsKey(keep)
		g, ok := index[key]
		if !ok {
			g = &group{settings: keep}
			index[key] = g
			groups = append(groups, g)
		}
		g.cells = append(g.cells, c)
	}
	for _, g := range groups {
		frac := math.NaN()
		for _, s := range g.settings {
			if s.Path == b.Fraction {
				frac, _ = strconv.ParseFloat(s.Value, 64)
			}
		}
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
				for _, s := range at.Settings {
					if worst[s.Path] {
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
