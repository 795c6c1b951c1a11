package results

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Moments are the summaries of the errors e_i = estimate_i − true value of
// one coefficient over N replicates, from which the performance measures
// follow. The harness computes them from exact sums, so no cancellation
// enters here.
type Moments struct {
	// N is the number of replicates.
	N int64
	// Mean is the mean error (the bias).
	Mean float64
	// SS is Σ(e_i − Mean)².
	SS float64
	// MSE is Σe_i²/N.
	MSE float64
	// SSMSE is Σ(e_i² − MSE)².
	SSMSE float64
}

// Bias returns the bias with MCSE √(SS/(N(N−1))) (Morris et al. 2019, Table 6).
func (m Moments) Bias() Measure {
	n := float64(m.N)
	return Measure{Value: Num(m.Mean), MCSE: Num(math.Sqrt(m.SS / (n * (n - 1))))}
}

// EmpSE returns the empirical standard error √(SS/(N−1)) with MCSE
// EmpSE/√(2(N−1)) (Morris et al. 2019, Table 6).
func (m Moments) EmpSE() Measure {
	n := float64(m.N)
	se := math.Sqrt(m.SS / (n - 1))
	return Measure{Value: Num(se), MCSE: Num(se / math.Sqrt(2*(n-1)))}
}

// MeanSquaredError returns the MSE with MCSE √(Σ(e²−MSE)²/(N(N−1))) (Morris
// et al. 2019, Table 6).
func (m Moments) MeanSquaredError() Measure {
	n := float64(m.N)
	return Measure{Value: Num(m.MSE), MCSE: Num(math.Sqrt(m.SSMSE / (n * (n - 1))))}
}

// Paired are the summaries of the errors of an estimator (A) and the
// reference estimator (B) over the N replicates where both converged.
type Paired struct {
	// N is the number of replicates in which both estimators converged.
	N int64
	// SSA and SSB are the centred sums of squares of A's and B's errors,
	// SAB their centred cross product.
	SSA, SSB, SAB float64
}

// RelativeEfficiency returns Var(B)/Var(A), the efficiency of A relative to
// the reference B, with MCSE 2·RE·√((1−ρ²)/(N−1)) where ρ is the
// correlation of the paired estimates (Morris et al. 2019, Table 6, relative
// precision).
func (p Paired) RelativeEfficiency() Measure {
	n := float64(p.N)
	re := p.SSB / p.SSA
	rho := p.SAB / math.Sqrt(p.SSA*p.SSB)
	rho2 := math.Min(1, rho*rho)
	return Measure{Value: Num(re), MCSE: Num(2 * re * math.Sqrt((1-rho2)/(n-1)))}
}

// Proportion returns k/n with its MCSE. Inside (0, 1) the MCSE is the
// binomial √(p(1−p)/n) (Morris et al. 2019, Stat. Med., Table 6). At k = 0
// or k = n that formula gives 0, which would claim certainty from a finite
// run; there the MCSE is the half-width of the Wilson 95% interval divided
// by 1.96, so 0 of 1000 fits reads "0 ± 0.001" (the Wilson interval is
// [0, 0.0038]), which says what 1000 fits can show.
func Proportion(k, n int64) Measure {
	if n <= 0 {
		return Measure{Value: Num(math.NaN()), MCSE: Num(math.NaN())}
	}
	p := float64(k) / float64(n)
	if k == 0 || k == n {
		w := Wilson(k, n)
		return Measure{Value: Num(p), MCSE: (w.High - w.Low) / Num(2*distuv.UnitNormal.Quantile(0.975))}
	}
	return Measure{Value: Num(p), MCSE: Num(math.Sqrt(p * (1 - p) / float64(n)))}
}

// Wilson returns k/n with its Wilson score 95% interval (Wilson 1927,
// J. Amer. Statist. Assoc. 22:209-212).
func Wilson(k, n int64) Rate {
	if n == 0 {
		nan := Num(math.NaN())
		return Rate{Value: nan, Low: nan, High: nan}
	}
	z := distuv.UnitNormal.Quantile(0.975)
	nf := float64(n)
	p := float64(k) / nf
	den := 1 + z*z/nf
	centre := (p + z*z/(2*nf)) / den
	half := z / den * math.Sqrt(p*(1-p)/nf+z*z/(4*nf*nf))
	low, high := math.Max(0, centre-half), math.Min(1, centre+half)
	// At k = 0 and k = n the bounds are exactly 0 and 1; rounding would
	// leave a speck.
	if k == 0 {
		low = 0
	}
	if k == n {
		high = 1
	}
	return Rate{Value: Num(p), Low: Num(low), High: Num(high)}
}
