package results

import "math"

// logChoose returns log C(n, k).
func logChoose(n, k int64) float64 {
	a, _ := math.Lgamma(float64(n + 1))
	b, _ := math.Lgamma(float64(k + 1))
	c, _ := math.Lgamma(float64(n - k + 1))
	return a - b - c
}

// PairedExactP returns the two-sided p-value of the exact McNemar test of
// b against c, the discordant pairs of two paired binary outcomes (here:
// fits that converged in the baseline and failed in the candidate, and the
// reverse). Under the null hypothesis that both directions are equally
// likely, b is Binomial(b + c, 1/2) given b + c, and
//
//	p = min(1, 2 · P(Bin(b+c, 1/2) ≤ min(b, c))),
//
// the exact form of the test of McNemar (1947), "Note on the sampling error
// of the difference between correlated proportions or percentages",
// Psychometrika 12:153-157. It is 1 when b + c = 0.
func PairedExactP(b, c int64) float64 {
	n, k := b+c, min(b, c)
	if n == 0 {
		return 1
	}
	var sum float64
	ln2 := math.Ln2 * float64(n)
	for i := int64(0); i <= k; i++ {
		sum += math.Exp(logChoose(n, i) - ln2)
	}
	return math.Min(1, 2*sum)
}

// FisherExactP returns the two-sided p-value of Fisher's exact test that
// two independent binomial proportions, k1/n1 and k2/n2, are equal: given
// the total k1 + k2, k1 is hypergeometric, and p sums the probabilities of
// every table no more likely than the one observed (Fisher (1935), "The
// logic of inductive inference", J. R. Statist. Soc. 98:39-82, from
// memory; the two-sided rule is common practice). It is 1 when there is no
// failure, or no fit, in either run.
func FisherExactP(k1, n1, k2, n2 int64) float64 {
	k := k1 + k2
	n := n1 + n2
	if k == 0 || k == n || n1 == 0 || n2 == 0 {
		return 1
	}
	logP := func(x int64) float64 { return logChoose(n1, x) + logChoose(n2, k-x) - logChoose(n, k) }
	obs := logP(k1)
	var sum float64
	for x := max(0, k-n2); x <= min(k, n1); x++ {
		// A relative slack keeps tables exactly as likely as the observed
		// one, which rounding may put a hair above it.
		if lp := logP(x); lp <= obs+1e-7 {
			sum += math.Exp(lp)
		}
	}
	return math.Min(1, sum)
}

// holmCriticalZ returns the |z| that the smallest of m p-values must pass
// under Holm's procedure at family-wise level alpha: the two-sided normal
// quantile of alpha/m.
func holmCriticalZ(alpha float64, m int) float64 {
	if m == 0 {
		return math.NaN()
	}
	return math.Sqrt2 * math.Erfcinv(alpha/float64(m))
}
