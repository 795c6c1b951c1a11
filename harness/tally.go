package harness

import (
	"math"
	"math/big"

	"github.com/rhomark/rhomark/estimators"
	"github.com/rhomark/rhomark/internal/exactsum"
)

// coefTally accumulates the errors e = estimate − truth of one coefficient
// of one estimator, exactly.
type coefTally struct {
	n      int64
	s1, s2 exactsum.Sum // Σe, Σe² over converged fits
	s3, s4 exactsum.Sum // Σe³, Σe⁴ (for the MCSEs of the MSE and the SE)
	// Over replicates where this estimator and the reference converged:
	// a = this estimator's error, b = the reference's.
	np                 int64
	pa1, pb1, pa2, pb2 exactsum.Sum
	pab                exactsum.Sum
	// Third and fourth moments of the pairs, for the MCSE of the relative
	// efficiency: Σa³, Σa⁴, Σb³, Σb⁴, Σa²b, Σab², Σa²b².
	pa3, pa4, pb3, pb4 exactsum.Sum
	pa2b, pab2, pa2b2  exactsum.Sum
	// 95% intervals: how many, how many covered the truth, Σwidth, Σwidth².
	nInt, covered int64
	w1, w2        exactsum.Sum
}

// addInterval records one interval of width w that did or did not cover
// the true value.
func (t *coefTally) addInterval(w float64, covered bool) {
	t.nInt++
	if covered {
		t.covered++
	}
	t.w1.Add(w)
	t.w2.AddProduct(w, w)
}

// add records one converged fit's error e.
func (t *coefTally) add(e float64) {
	t.n++
	t.s1.Add(e)
	t.s2.AddProduct(e, e)
	// e² is rounded once; the sums of e²·e and e²·e² are then exact, so
	// they are the same for any order of replicates.
	e2 := e * e
	t.s3.AddProduct(e2, e)
	t.s4.AddProduct(e2, e2)
}

// addPair records one replicate where both this estimator (a) and the
// reference (b) converged.
func (t *coefTally) addPair(a, b float64) {
	t.np++
	t.pa1.Add(a)
	t.pb1.Add(b)
	t.pa2.AddProduct(a, a)
	t.pb2.AddProduct(b, b)
	t.pab.AddProduct(a, b)
	a2, b2 := a*a, b*b
	t.pa3.AddProduct(a2, a)
	t.pa4.AddProduct(a2, a2)
	t.pb3.AddProduct(b2, b)
	t.pb4.AddProduct(b2, b2)
	t.pa2b.AddProduct(a2, b)
	t.pab2.AddProduct(a, b2)
	t.pa2b2.AddProduct(a2, b2)
}

// sums lists a coefTally's exact sums, in their serialised order (an array,
// so that listing them allocates nothing). The first ten are those of
// partials written before the third and fourth moments were kept; a
// partial with ten sums per coefficient is refused when read (its
// moments cannot be recovered).
func (t *coefTally) sums() [18]*exactsum.Sum {
	return [18]*exactsum.Sum{&t.s1, &t.s2, &t.s4, &t.pa1, &t.pb1, &t.pa2, &t.pb2, &t.pab, &t.w1, &t.w2,
		&t.s3, &t.pa3, &t.pa4, &t.pb3, &t.pb4, &t.pa2b, &t.pab2, &t.pa2b2}
}

// reset empties the tally, keeping the sums' storage.
func (t *coefTally) reset() {
	t.n, t.np, t.nInt, t.covered = 0, 0, 0, 0
	for _, s := range t.sums() {
		s.Reset()
	}
}

// merge adds u's counts and sums to t's.
func (t *coefTally) merge(u *coefTally) {
	t.n += u.n
	t.np += u.np
	t.nInt += u.nInt
	t.covered += u.covered
	us := u.sums()
	for k, s := range t.sums() {
		s.Merge(us[k])
	}
}

// iterHistCap bounds the iteration histogram: fits that took iterHistCap
// or more iterations share its last bin. It is the largest iteration cap
// a scenario accepts (stop.max-iter ≤ 1,000,000), so an iterative fit
// never reaches the shared bin and the median is exact. The histogram
// grows only to the most iterations any fit took, so its size follows the
// work actually done (a bin per iteration of the longest fit), not the
// cap.
const iterHistCap = 1_000_000

// estTally accumulates the fits of one estimator in one cell.
type estTally struct {
	fits      int64
	statuses  [statusSlots]int64
	iterHist  []int64 // iterHist[k] = fits that took k iterations; the last bin, iterHistCap, counts k ≥ iterHistCap
	iterMax   int64   // most iterations of any fit
	iterSum   int64
	iterSum2  int64 // Σ iterations², for the MCSE of the mean
	halvings  int64
	fallbacks int64
	qrSolves  int64
	nanos     int64 // wall time spent fitting (not deterministic)
	coefs     []coefTally
	// cross holds Σ e_j e_k over converged fits for slope pairs j < k
	// (upper triangle, row by row), for the MCSE of the slope-bias norm;
	// nil when there are more than maxCrossSlopes slopes.
	cross []exactsum.Sum
	// past counts converged fits whose slope error norm exceeds the
	// breakdown threshold.
	past int64
	aud  *auditTally // the solver study (harness/audit.go); nil when off
}

// maxCrossSlopes bounds the slopes whose cross moments are kept.
const maxCrossSlopes = 16

// statusSlots is the number of Status values counted.
const statusSlots = estimators.NumStatuses

func newEstTally(p, slopes int) estTally {
	t := estTally{coefs: make([]coefTally, p)}
	if slopes <= maxCrossSlopes {
		t.cross = make([]exactsum.Sum, slopes*(slopes-1)/2)
	}
	return t
}

// record adds one fit's outcome.
func (t *estTally) record(res *estimators.Result) {
	t.fits++
	if s := int(res.Status); s >= 0 && s < statusSlots {
		t.statuses[s]++
	}
	k := min(res.Iterations, iterHistCap)
	t.iterMax = max(t.iterMax, int64(res.Iterations))
	if k >= len(t.iterHist) {
		grown := make([]int64, k+1)
		copy(grown, t.iterHist)
		t.iterHist = grown
	}
	t.iterHist[k]++
	t.iterSum += int64(res.Iterations)
	t.iterSum2 += int64(res.Iterations) * int64(res.Iterations)
	t.halvings += int64(res.Halvings)
	t.fallbacks += int64(res.Fallbacks)
	t.qrSolves += int64(res.QRSolves)
}

func (t *estTally) merge(u *estTally) {
	t.fits += u.fits
	for i := range t.statuses {
		t.statuses[i] += u.statuses[i]
	}
	if len(u.iterHist) > len(t.iterHist) {
		grown := make([]int64, len(u.iterHist))
		copy(grown, t.iterHist)
		t.iterHist = grown
	}
	for i, c := range u.iterHist {
		t.iterHist[i] += c
	}
	t.iterSum += u.iterSum
	t.iterSum2 += u.iterSum2
	t.iterMax = max(t.iterMax, u.iterMax)
	t.halvings += u.halvings
	t.fallbacks += u.fallbacks
	t.qrSolves += u.qrSolves
	t.nanos += u.nanos
	t.past += u.past
	for i := range t.coefs {
		t.coefs[i].merge(&u.coefs[i])
	}
	for i := range t.cross {
		t.cross[i].Merge(&u.cross[i])
	}
	t.aud.merge(u.aud)
}

// cellTally accumulates one cell.
type cellTally struct {
	replicates int64
	ests       []estTally
}

func newCellTally(estimators, p, slopes int) *cellTally {
	c := &cellTally{ests: make([]estTally, estimators)}
	for i := range c.ests {
		c.ests[i] = newEstTally(p, slopes)
	}
	return c
}

func (c *cellTally) merge(u *cellTally) {
	c.replicates += u.replicates
	for i := range c.ests {
		c.ests[i].merge(&u.ests[i])
	}
}

// reset empties the tally, keeping its storage.
func (c *cellTally) reset() {
	c.replicates = 0
	for i := range c.ests {
		e := &c.ests[i]
		coefs, hist, cross := e.coefs, e.iterHist, e.cross
		clear(hist)
		for j := range coefs {
			coefs[j].reset()
		}
		for j := range cross {
			cross[j].Reset()
		}
		e.aud.reset()
		*e = estTally{coefs: coefs, iterHist: hist, cross: cross, aud: e.aud}
	}
}

// prec is the working precision of the big-float arithmetic that turns exact
// sums into centred moments.
const prec = 256

// centred returns Σx² − (Σx)²/n from exact sums, rounded once.
func centred(s1, s2 *exactsum.Sum, n int64) float64 { return crossCentred(s1, s1, s2, n) }

// crossCentred returns Σab − (Σa)(Σb)/n from exact sums.
func crossCentred(a1, b1, ab *exactsum.Sum, n int64) float64 {
	a, ok1 := a1.Big()
	b, ok2 := b1.Big()
	c, ok3 := ab.Big()
	if !ok1 || !ok2 || !ok3 || n == 0 {
		return math.NaN()
	}
	nb := new(big.Float).SetPrec(prec).SetInt64(n)
	p := new(big.Float).SetPrec(prec).Mul(a, b)
	p.Quo(p, nb)
	r := new(big.Float).SetPrec(prec).Sub(c, p)
	f, _ := r.Float64()
	return f
}

// bigSums converts exact sums to big floats; ok is false if any is not
// finite.
func bigSums(sums ...*exactsum.Sum) ([]*big.Float, bool) {
	out := make([]*big.Float, len(sums))
	for i, s := range sums {
		v, ok := s.Big()
		if !ok {
			return nil, false
		}
		out[i] = new(big.Float).SetPrec(prec).Set(v)
	}
	return out, true
}

// polyAt returns Σ c_k·x_k for big floats, rounded once to float64.
func polyAt(terms ...[2]*big.Float) float64 {
	acc := new(big.Float).SetPrec(prec)
	t := new(big.Float).SetPrec(prec)
	for _, c := range terms {
		acc.Add(acc, t.Mul(c[0], c[1]))
	}
	f, _ := acc.Float64()
	return f
}

// bf returns x as a big float of the working precision.
func bf(x float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(x) }

// bmul returns the product of its arguments in big floats.
func bmul(xs ...*big.Float) *big.Float {
	p := new(big.Float).SetPrec(prec).SetInt64(1)
	for _, x := range xs {
		p.Mul(p, x)
	}
	return p
}

// fourthAbout returns Σ(e−μ)⁴ = S4 − 4μS3 + 6μ²S2 − 3nμ⁴ with μ = S1/n,
// from exact sums.
func fourthAbout(s1, s2, s3, s4 *exactsum.Sum, n int64) float64 {
	v, ok := bigSums(s1, s2, s3, s4)
	if !ok || n == 0 {
		return math.NaN()
	}
	nb := new(big.Float).SetPrec(prec).SetInt64(n)
	mu := new(big.Float).SetPrec(prec).Quo(v[0], nb)
	mu2 := bmul(mu, mu)
	return polyAt(
		[2]*big.Float{bf(1), v[3]},
		[2]*big.Float{bf(-4), bmul(mu, v[2])},
		[2]*big.Float{bf(6), bmul(mu2, v[1])},
		[2]*big.Float{bf(-3), bmul(nb, mu2, mu2)},
	)
}

// crossFourthAbout returns Σ(a−α)²(b−β)² with α = Σa/n, β = Σb/n:
// Σa²b² − 2βΣa²b − 2αΣab² + β²Σa² + α²Σb² + 4αβΣab − 3nα²β².
func crossFourthAbout(a1, b1, a2, b2, ab, a2b, ab2, a2b2 *exactsum.Sum, n int64) float64 {
	v, ok := bigSums(a1, b1, a2, b2, ab, a2b, ab2, a2b2)
	if !ok || n == 0 {
		return math.NaN()
	}
	nb := new(big.Float).SetPrec(prec).SetInt64(n)
	al := new(big.Float).SetPrec(prec).Quo(v[0], nb)
	be := new(big.Float).SetPrec(prec).Quo(v[1], nb)
	return polyAt(
		[2]*big.Float{bf(1), v[7]},
		[2]*big.Float{bf(-2), bmul(be, v[5])},
		[2]*big.Float{bf(-2), bmul(al, v[6])},
		[2]*big.Float{bf(1), bmul(be, be, v[2])},
		[2]*big.Float{bf(1), bmul(al, al, v[3])},
		[2]*big.Float{bf(4), bmul(al, be, v[4])},
		[2]*big.Float{bf(-3), bmul(nb, al, al, be, be)},
	)
}

// fourthCentred returns Σ(e² − m)² = Σe⁴ − 2mΣe² + n m² with m = Σe²/n.
func fourthCentred(s2, s4 *exactsum.Sum, n int64) float64 {
	return centred(s2, s4, n) // the same identity, with x = e²
}
