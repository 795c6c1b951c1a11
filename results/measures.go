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
	// SS4 is Σ(e_i − Mean)⁴, for the MCSE of the empirical SE and the
	// heavy-tail check.
	SS4 float64
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

// EmpSE returns the empirical standard error s = √(SS/(N−1)) with an MCSE
// that holds for any distribution with a finite fourth moment: by the
// delta method, MCSE(s) = √Var(s²) / (2s), with
//
//	Var(s²) = (m₄ − (N−3)/(N−1) s⁴) / N,  m₄ = SS4/N,
//
// the variance of the sample variance (Cramér (1946), Mathematical Methods
// of Statistics, §27.4, from memory). At the normal, m₄ = 3σ⁴ makes it
// s/√(2(N−1)), the normal-theory form of Morris, White & Crowther (2019),
// Stat. Med. 38:2074-2102, Table 6, which is too small under heavy tails.
func (m Moments) EmpSE() Measure {
	n := float64(m.N)
	s2 := m.SS / (n - 1)
	se := math.Sqrt(s2)
	return Measure{Value: Num(se), MCSE: Num(math.Sqrt(varianceOfVariance(m.SS4/n, s2, n)) / (2 * se))}
}

// varianceOfVariance returns Var(s²) ≈ (m₄ − (n−3)/(n−1) s⁴)/n, floored at
// zero.
func varianceOfVariance(m4, s2, n float64) float64 {
	return math.Max(0, (m4-(n-3)/(n-1)*s2*s2)/n)
}

// MeanSquaredError returns the MSE with MCSE √(Σ(e²−MSE)²/(N(N−1))) (Morris
// et al. 2019, Table 6).
func (m Moments) MeanSquaredError() Measure {
	n := float64(m.N)
	return Measure{Value: Num(m.MSE), MCSE: Num(math.Sqrt(m.SSMSE / (n * (n - 1))))}
}

// RootMeanSquaredError returns RMSE = √MSE with the delta-method MCSE
// MCSE(MSE)/(2·RMSE) (d√x/dx = 1/(2√x); common practice), MCSE(MSE) as in
// MeanSquaredError. At RMSE = 0 (every error exactly 0) the MCSE is 0.
func (m Moments) RootMeanSquaredError() Measure {
	mse := m.MeanSquaredError()
	rmse := math.Sqrt(float64(mse.Value))
	mcse := float64(mse.MCSE) / (2 * rmse)
	if rmse == 0 {
		mcse = 0
	}
	return Measure{Value: Num(rmse), MCSE: Num(mcse)}
}

// HeavyTailed reports whether the errors look as if they had no finite
// variance, in which case the empirical SE, the MSE, the relative
// efficiency and every MCSE built on a second moment are not meaningful.
// See TailRatio.
func (m Moments) HeavyTailed() bool { return HeavyTails(TailRatio(m.SS, m.SS4), m.N) }

// TailRatio returns Q = Σ(e−ē)⁴ / (Σ(e−ē)²)², the sample kurtosis divided
// by N. With y_i = (e_i−ē)² and R = max y_i / Σy_i, the ratio of the
// largest squared deviation to their sum, R² ≤ Q ≤ R. R tends to 0 as N
// grows exactly when the variance is finite (the ratio of maximum to sum,
// Embrechts, Klüppelberg & Mikosch (1997), Modelling Extremal Events,
// §6.2.6, from memory), so Q does too, at the rate κ/N when the fourth
// moment is finite (κ the kurtosis); without a finite variance R, and with
// it Q ≥ R², stays of order one, since a few replicates carry most of
// Σ(e−ē)². 1/Q is also the effective number of replicates behind the sum
// of squares, in the sense of Kish's effective sample size (common
// practice). NaN when SS is 0 or not finite.
func TailRatio(ss, ss4 float64) float64 {
	if !(ss > 0) || math.IsInf(ss, 0) {
		return math.NaN()
	}
	return ss4 / (ss * ss)
}

// tailThreshold is c in the heavy-tail rule Q > c/√N. Under finite
// variance Q·√N tends to 0 (at normal errors it is about 3/√N); without
// one it grows like √N. Simulated with 2000 samples of iid draws each
// (fixed seed), the rule with c = 2 flagged: the normal never (N = 100 to
// 5000; Q·√N never exceeded 0.53); Student t with 5 degrees of freedom in
// 1.4% of samples at N = 100, 0.9% at 200 and 0.25% at 1000 and 5000;
// t with 3 (finite variance, no fourth moment, where the MCSE of the SE
// has nothing to rest on either) in 9-10%; the Cauchy in 84% at N = 100,
// 94% at 200, 99.7% at 1000 and all at 5000.
const tailThreshold = 2

// HeavyTails reports whether the tail ratio q of n errors (see TailRatio)
// says that the sum of squares rests on a few replicates: q > 2/√n, that
// is, fewer than √n/2 effective replicates. NaN q (no spread) is not heavy.
func HeavyTails(q float64, n int64) bool {
	return n > 1 && q > tailThreshold/math.Sqrt(float64(n))
}

// Paired are the summaries of the errors of an estimator (A) and the
// reference estimator (B) over the N replicates where both converged.
type Paired struct {
	// N is the number of replicates in which both estimators converged.
	N int64
	// SSA and SSB are the centred sums of squares of A's and B's errors,
	// SAB their centred cross product.
	SSA, SSB, SAB float64
	// SSA4 and SSB4 are Σ(a−ā)⁴ and Σ(b−b̄)⁴, SAB22 is Σ(a−ā)²(b−b̄)².
	SSA4, SSB4, SAB22 float64
}

// RelativeEfficiency returns RE = Var(B)/Var(A), the efficiency of A
// relative to the reference B, with an MCSE by the delta method on
// log RE = log s_B² − log s_A² that holds for any distribution with
// finite fourth moments:
//
//	Var(log RE) = Var(s_A²)/s_A⁴ + Var(s_B²)/s_B⁴ − 2 Cov(s_A², s_B²)/(s_A² s_B²),
//	Cov(s_A², s_B²) = (m₂₂ − s_A² s_B²)/N + 2 s_AB²/(N(N−1)),
//
// with Var(s²) as in Moments.EmpSE and m₂₂ = SAB22/N (the covariance of
// two sample variances, Cramér (1946), §27.4, from memory; at A = B it
// is Var(s²)). At the bivariate normal, m₂₂ = σ_A²σ_B² + 2σ_AB², and the
// MCSE becomes 2·RE·√((1−ρ²)/(N−1)), the normal-theory form of Morris,
// White & Crowther (2019), Stat. Med. 38:2074-2102, Table 6.
func (p Paired) RelativeEfficiency() Measure {
	n := float64(p.N)
	sa2, sb2, sab := p.SSA/(n-1), p.SSB/(n-1), p.SAB/(n-1)
	re := p.SSB / p.SSA
	va := varianceOfVariance(p.SSA4/n, sa2, n) / (sa2 * sa2)
	vb := varianceOfVariance(p.SSB4/n, sb2, n) / (sb2 * sb2)
	cov := ((p.SAB22/n-sa2*sb2)/n + 2*sab*sab/(n*(n-1))) / (sa2 * sb2)
	return Measure{Value: Num(re), MCSE: Num(re * math.Sqrt(math.Max(0, va+vb-2*cov)))}
}

// PairedSquares are the summaries of the squared errors of an estimator
// (a) and the reference (b) over the N replicates where both converged,
// for the MSE ratio. The harness forms them from exact sums.
type PairedSquares struct {
	// N is the number of replicates in which both estimators converged.
	N int64
	// SumA2 and SumB2 are Σa² and Σb².
	SumA2, SumB2 float64
	// SSA2 and SSB2 are Σ(a² − Σa²/N)² and Σ(b² − Σb²/N)², SA2B2 the
	// centred cross product Σ(a² − Σa²/N)(b² − Σb²/N).
	SSA2, SSB2, SA2B2 float64
}

// MSERatio returns R = MSE_B/MSE_A = Σb²/Σa², the reference's MSE over
// this estimator's on the same replicates (above 1: A is the more
// accurate), with an MCSE by the delta method on
// log R = log mean(b²) − log mean(a²), the two means being paired:
//
//	Var(log R) = N/(N−1) · (SSB2/SumB2² + SSA2/SumA2² − 2·SA2B2/(SumA2·SumB2)),
//
// since Var(mean x) ≈ Σ(x − x̄)²/(N(N−1)) and Var(log x̄) ≈ Var(x̄)/x̄²
// (the delta method for a ratio of paired means; common practice), and
// MCSE(R) = R·√Var(log R). It needs finite fourth moments of the errors.
func (p PairedSquares) MSERatio() Measure {
	n := float64(p.N)
	r := p.SumB2 / p.SumA2
	v := n / (n - 1) * (p.SSB2/(p.SumB2*p.SumB2) + p.SSA2/(p.SumA2*p.SumA2) - 2*p.SA2B2/(p.SumA2*p.SumB2))
	return Measure{Value: Num(r), MCSE: Num(r * math.Sqrt(math.Max(0, v)))}
}

// HeavyTailed reports whether either estimator's paired errors look as if
// they had no finite variance (see TailRatio), in which case the relative
// efficiency and its MCSE are not meaningful.
func (p Paired) HeavyTailed() bool {
	return HeavyTails(TailRatio(p.SSA, p.SSA4), p.N) || HeavyTails(TailRatio(p.SSB, p.SSB4), p.N)
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
