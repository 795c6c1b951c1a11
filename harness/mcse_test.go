package harness

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/results"
)

const mcseScenario = `
seed: 31
model:
  n: 60
  intercept: 1
  columns:
    - {name: x1, slope: 2, dist: normal}
    - {name: x2, slope: -1, dist: uniform, min: -2, max: 2}
noise: {dist: %s}
estimators:
  - {label: ls, method: ls}
  - {label: huber, method: irls, psi: huber}
`

// keptErrors runs src with kept replicates and returns, per estimator and
// coefficient, the errors of its converged fits (own), and the errors of
// the replicates where it and the reference (estimator 0) both converged,
// its own (pair) and the reference's (ref), so that pairs line up; with
// the run's results.
func keptErrors(t *testing.T, src string, reps int) (own, pair, ref [][][]float64, res *results.Results) {
	t.Helper()
	var buf bytes.Buffer
	res, err := Run(context.Background(), parse(t, src), Options{Replicates: reps, KeepReplicates: &buf})
	if err != nil {
		t.Fatal(err)
	}
	rr, err := results.NewReplicateReader(&buf)
	if err != nil {
		t.Fatal(err)
	}
	cell := res.Cells[0]
	byRep := map[int][][]float64{} // nil where the fit did not converge
	for {
		rec, err := rr.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if byRep[rec.Replicate] == nil {
			byRep[rec.Replicate] = make([][]float64, len(cell.Estimators))
		}
		if st, _ := estimators.ParseStatus(rec.Status); !st.Converged() {
			continue
		}
		e := make([]float64, len(rec.Coefficients))
		for k, b := range rec.Coefficients {
			e[k] = b - cell.Estimators[rec.Estimator].Coefficients[k].True
		}
		byRep[rec.Replicate][rec.Estimator] = e
	}
	shape := func() [][][]float64 {
		out := make([][][]float64, len(cell.Estimators))
		for j := range out {
			out[j] = make([][]float64, len(cell.Estimators[j].Coefficients))
		}
		return out
	}
	own, pair, ref = shape(), shape(), shape()
	for r := 0; r < reps; r++ {
		fits := byRep[r]
		for j, e := range fits {
			for k, v := range e {
				own[j][k] = append(own[j][k], v)
				if fits[0] != nil {
					pair[j][k] = append(pair[j][k], v)
					ref[j][k] = append(ref[j][k], fits[0][k])
				}
			}
		}
	}
	return own, pair, ref, res
}

func variance(x []float64, idx []int) float64 {
	var m float64
	for _, i := range idx {
		m += x[i]
	}
	m /= float64(len(idx))
	var ss float64
	for _, i := range idx {
		ss += (x[i] - m) * (x[i] - m)
	}
	return ss / float64(len(idx)-1)
}

// bootstrapSD returns the standard deviation of stat over b resamples of
// 0..n−1 (with replacement) and its own standard error, √((k−1)/(4b))·SD
// with k the kurtosis of the b bootstrap values: the delta method on the
// square root of a sample variance of b draws (the same form as the
// EmpSE MCSE).
func bootstrapSD(rng *rand.Rand, n, b int, stat func(idx []int) float64) (sd, se float64) {
	vals := make([]float64, b)
	idx := make([]int, n)
	for i := range vals {
		for k := range idx {
			idx[k] = rng.IntN(n)
		}
		vals[i] = stat(idx)
	}
	var m float64
	for _, v := range vals {
		m += v
	}
	m /= float64(b)
	var m2, m4 float64
	for _, v := range vals {
		d := (v - m) * (v - m)
		m2 += d
		m4 += d * d
	}
	m2 /= float64(b)
	m4 /= float64(b)
	sd = math.Sqrt(m2 * float64(b) / float64(b-1))
	return sd, sd * math.Sqrt((m4/(m2*m2)-1)/(4*float64(b)))
}

// TestMCSEAgainstBootstrap checks the MCSEs of the empirical SE, the RMSE,
// the MSE ratio and the relative efficiency against a bootstrap over the run's own kept
// replicates (Efron & Tibshirani (1993), An Introduction to the Bootstrap,
// Chapman & Hall, ch. 6, from memory), under normal noise and under t3
// noise, where the normal-theory forms of Morris, White & Crowther (2019),
// Stat. Med. 38:2074-2102, Table 6 are too small. Both the formulas and the
// bootstrap estimate the same sampling SD of the run's statistic; the
// formulas are deterministic given the replicates, the bootstrap SD has
// its own Monte Carlo error with B = 2000 resamples, estimated from the
// bootstrap values' kurtosis (see bootstrapSD). Tolerance: 4 of those
// errors plus 2% for the delta method's O(1/N) linearisation and
// small-sample terms (at N = 1000 these are well under 1%). Under t3 the
// normal-theory MCSE of least squares' SE must fall outside the same
// tolerance, so the check can tell the forms apart.
func TestMCSEAgainstBootstrap(t *testing.T) {
	const reps, boot = 1000, 2000
	for _, tc := range []struct{ name, noise string }{{"normal", "normal"}, {"t3", "student-t, df: 3"}} {
		noise := tc.name
		errs, pairs, refs, res := keptErrors(t, fmt.Sprintf(mcseScenario, tc.noise), reps)
		cell := res.Cells[0]
		rng := rand.New(rand.NewPCG(5, 6))
		for j, est := range cell.Estimators {
			for k, c := range est.Coefficients {
				e := errs[j][k]
				n := len(e)
				if int64(n) != c.Used {
					t.Fatalf("%s %s: %d kept errors, %d used", est.Label, c.Name, n, c.Used)
				}
				// The summary's fourth moments come from exact sums; they
				// must match the same formula computed from the replicates.
				all := make([]int, n)
				for i := range all {
					all[i] = i
				}
				var mean, m4 float64
				for _, v := range e {
					mean += v
				}
				mean /= float64(n)
				for _, v := range e {
					m4 += math.Pow(v-mean, 4)
				}
				s2 := variance(e, all)
				direct := results.Moments{N: int64(n), SS: s2 * float64(n-1), SS4: m4}.EmpSE().MCSE
				if d := math.Abs(float64(c.EmpSE.MCSE - direct)); d > 1e-9*float64(direct) {
					t.Errorf("%s %s %s: SE MCSE %v from the tallies, %v from the replicates", noise, est.Label, c.Name, c.EmpSE.MCSE, direct)
				}
				sd, se := bootstrapSD(rng, n, boot, func(idx []int) float64 { return math.Sqrt(variance(e, idx)) })
				tol := 4*se + 0.02*sd
				got := float64(c.EmpSE.MCSE)
				normal := float64(c.EmpSE.Value) / math.Sqrt(2*float64(n-1))
				t.Logf("%-8s %-5s %-9s SE MCSE: formula %.5f, bootstrap %.5f ± %.5f, normal theory %.5f (%+.0f%%), tail ratio %.4f",
					noise, est.Label, c.Name, got, sd, se, normal, 100*(normal/sd-1), float64(c.TailRatio))
				if math.Abs(got-sd) > tol {
					t.Errorf("%s %s %s: SE MCSE %.5f, bootstrap %.5f (tolerance %.5f)", noise, est.Label, c.Name, got, sd, tol)
				}
				if noise != "normal" && est.Label == "ls" && math.Abs(normal-sd) <= tol {
					t.Errorf("%s %s %s: the normal-theory MCSE %.5f is within tolerance of the bootstrap %.5f", noise, est.Label, c.Name, normal, sd)
				}
				if c.HeavyTails {
					t.Errorf("%s %s %s: flagged heavy-tailed (tail ratio %v)", noise, est.Label, c.Name, c.TailRatio)
				}
				// RMSE: √mean(e²) over the same replicates.
				rmse := func(x []float64, idx []int) float64 {
					var s float64
					for _, i := range idx {
						s += x[i] * x[i]
					}
					return math.Sqrt(s / float64(len(idx)))
				}
				sd, se = bootstrapSD(rng, n, boot, func(idx []int) float64 { return rmse(e, idx) })
				tol = 4*se + 0.02*sd
				got = float64(c.RMSE.MCSE)
				t.Logf("%-8s %-5s %-9s RMSE MCSE: formula %.5f, bootstrap %.5f ± %.5f", noise, est.Label, c.Name, got, sd, se)
				if math.Abs(got-sd) > tol {
					t.Errorf("%s %s %s: RMSE MCSE %.5f, bootstrap %.5f (tolerance %.5f)", noise, est.Label, c.Name, got, sd, tol)
				}
				if d := math.Abs(float64(c.RMSE.Value) - rmse(e, all)); d > 1e-12*rmse(e, all) {
					t.Errorf("%s %s %s: RMSE %v from the tallies, %v from the replicates", noise, est.Label, c.Name, c.RMSE.Value, rmse(e, all))
				}
				if est.Label == res.Reference {
					if c.MSERatio.Value != 1 || !math.IsNaN(float64(c.MSERatio.MCSE)) {
						t.Errorf("%s %s %s: reference's MSE ratio %v ± %v, want exactly 1 with no MCSE", noise, est.Label, c.Name, c.MSERatio.Value, c.MSERatio.MCSE)
					}
					continue
				}
				// The efficiency pairs the replicates where both converged.
				e, ref := pairs[j][k], refs[j][k]
				n = len(e)
				if int64(n) != c.Paired {
					t.Fatalf("%s %s: %d kept pairs, %d used by the efficiency", est.Label, c.Name, n, c.Paired)
				}
				all = all[:0]
				for i := range n {
					all = append(all, i)
				}
				// MSE ratio MSE(ref)/MSE(e), paired.
				ratio := func(idx []int) float64 { r := rmse(ref, idx) / rmse(e, idx); return r * r }
				sd, se = bootstrapSD(rng, n, boot, ratio)
				tol = 4*se + 0.02*sd
				got = float64(c.MSERatio.MCSE)
				t.Logf("%-8s %-5s %-9s MSE ratio %.4f MCSE: formula %.5f, bootstrap %.5f ± %.5f", noise, est.Label, c.Name, float64(c.MSERatio.Value), got, sd, se)
				if math.Abs(got-sd) > tol {
					t.Errorf("%s %s %s: MSE ratio MCSE %.5f, bootstrap %.5f (tolerance %.5f)", noise, est.Label, c.Name, got, sd, tol)
				}
				if d := math.Abs(float64(c.MSERatio.Value) - ratio(all)); d > 1e-12*ratio(all) {
					t.Errorf("%s %s %s: MSE ratio %v from the tallies, %v from the replicates", noise, est.Label, c.Name, c.MSERatio.Value, ratio(all))
				}
				sd, se = bootstrapSD(rng, n, boot, func(idx []int) float64 { return variance(ref, idx) / variance(e, idx) })
				tol = 4*se + 0.02*sd
				got = float64(c.RelEff.MCSE)
				var sab, ma, mb float64
				for _, i := range all {
					ma += e[i]
					mb += ref[i]
				}
				ma /= float64(n)
				mb /= float64(n)
				for _, i := range all {
					sab += (e[i] - ma) * (ref[i] - mb)
				}
				sab /= float64(n - 1)
				r := sab / math.Sqrt(variance(e, all)*variance(ref, all))
				normalRE := 2 * float64(c.RelEff.Value) * math.Sqrt((1-r*r)/float64(n-1))
				t.Logf("%-8s %-5s %-9s RE MCSE: formula %.5f, bootstrap %.5f ± %.5f, normal theory %.5f", noise, est.Label, c.Name, got, sd, se, normalRE)
				if math.Abs(got-sd) > tol {
					t.Errorf("%s %s %s: RE MCSE %.5f, bootstrap %.5f (tolerance %.5f)", noise, est.Label, c.Name, got, sd, tol)
				}
			}
		}
	}
}

// TestHeavyTailsFlagged: least squares under Cauchy noise has no finite
// variance (its estimates are weighted sums of Cauchy errors, themselves
// Cauchy; common practice), so its SE and MCSEs must be flagged as not
// meaningful, and so must every efficiency against it; the Huber
// M-estimator, with a bounded psi, has a finite asymptotic variance at
// any noise (Huber (1964), Ann. Math. Statist. 35:73-101) and must not be
// flagged; under t5 noise nothing is. Fixed seeds; the rates of the rule
// are stated on results.HeavyTails.
func TestHeavyTailsFlagged(t *testing.T) {
	for _, tc := range []struct {
		noise      string
		heavyLS    bool
		heavyHuber bool
	}{
		{"student-t, df: 1", true, false},
		{"student-t, df: 5", false, false},
		{"normal", false, false},
	} {
		res, err := Run(context.Background(), parse(t, fmt.Sprintf(mcseScenario, tc.noise)), Options{Replicates: 1000})
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range res.Cells[0].Estimators {
			want := tc.heavyLS
			if e.Label == "huber" {
				want = tc.heavyHuber
			}
			for _, c := range e.Coefficients {
				t.Logf("%s %s %s: tail ratio %.4f, heavy %v, efficiency flagged %v", tc.noise, e.Label, c.Name, c.TailRatio, c.HeavyTails, c.RelEffHeavyTails)
				if c.HeavyTails != want {
					t.Errorf("%s %s %s: heavy tails %v (tail ratio %v), want %v", tc.noise, e.Label, c.Name, c.HeavyTails, c.TailRatio, want)
				}
				if c.RelEffHeavyTails != tc.heavyLS {
					t.Errorf("%s %s %s: efficiency flagged %v, want %v", tc.noise, e.Label, c.Name, c.RelEffHeavyTails, tc.heavyLS)
				}
				if c.HeavyTails && !(math.IsNaN(float64(c.EmpSE.MCSE)) && math.IsNaN(float64(c.RMSE.MCSE))) {
					t.Errorf("%s %s %s: SE MCSE %v or RMSE MCSE %v given under heavy tails", tc.noise, e.Label, c.Name, c.EmpSE.MCSE, c.RMSE.MCSE)
				}
				if c.RelEffHeavyTails && !math.IsNaN(float64(c.MSERatio.MCSE)) {
					t.Errorf("%s %s %s: MSE ratio MCSE %v given under heavy tails", tc.noise, e.Label, c.Name, c.MSERatio.MCSE)
				}
			}
		}
		var table bytes.Buffer
		if err := results.WriteTable(&table, res, 80); err != nil {
			t.Fatal(err)
		}
		if got := bytes.Contains(table.Bytes(), []byte("not meaningful")); got != tc.heavyLS {
			t.Errorf("%s: table says 'not meaningful': %v, want %v\n%s", tc.noise, got, tc.heavyLS, table.String())
		}
		// Heavy-tailed least squares has no meaningful MSE: it must not be
		// recommended, and the verdict must say why.
		v := results.Decide(res.Cells[0], res.Reference)
		excluded := len(v.NotRecommended) > 0 && v.NotRecommended[0].Estimator == "ls" && v.NotRecommended[0].Reason == results.HeavyTailedEstimates
		if excluded != tc.heavyLS {
			t.Errorf("%s: least squares not recommended for heavy tails: %v, want %v (%+v)", tc.noise, excluded, tc.heavyLS, v.NotRecommended)
		}
	}
}

// TestOldPartialTalliesRefused: a partial written before the third and
// fourth moments were kept has ten sums per coefficient; its moments
// cannot be recovered, so reading it must fail with an error, not panic
// or give MCSEs without those moments.
func TestOldPartialTalliesRefused(t *testing.T) {
	c := newCellTally(1, 2, 1)
	c.ests[0].coefs[0].add(0.5)
	j := c.encode()
	for k := range j.Ests[0].Coefs {
		j.Ests[0].Coefs[k].Sums = j.Ests[0].Coefs[k].Sums[:10]
	}
	if err := newCellTally(1, 2, 1).decode(j, nil); err == nil {
		t.Error("a tally with ten sums per coefficient was accepted")
	}
}
