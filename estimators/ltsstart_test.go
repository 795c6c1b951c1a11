package estimators

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// ltsStartCase is a problem on which the C-steps of the starts by normal
// equations must give the same fit as by QR alone.
type ltsStartCase struct {
	name string
	x    *mat.Dense
	y    []float64
	s    ltsSettings
}

// ltsStartCases returns problems of every kind the proofs of startSteps
// must survive: plain and contaminated regressions of many shapes, small
// integer data with tied residuals, exact fits, duplicated rows,
// near-collinear and badly scaled columns, huge outliers, an indicator
// column, and a large n with nested blocks.
func ltsStartCases() []ltsStartCase {
	var cs []ltsStartCase
	add := func(name string, x *mat.Dense, y []float64, s ltsSettings) {
		cs = append(cs, ltsStartCase{name, x, y, s})
	}
	rng := rand.New(rand.NewPCG(17, 18))
	for seed := uint64(1); seed <= 24; seed++ {
		n := 12 + rng.IntN(300)
		p := 1 + rng.IntN(colMaxP)
		n = max(n, 2*p+2)
		x, y := simulated(seed, n, p, 0.3*rng.Float64())
		s := ltsSettings{Subsets: 50 + rng.IntN(300)}
		if seed%4 == 0 {
			s.H = p + rng.IntN(n-p+1)
		}
		if seed%5 == 0 {
			s.CSteps = 1 + rng.IntN(4)
		}
		add(fmt.Sprintf("simulated %d (n %d p %d)", seed, n, p), x, y, s)
	}
	// Small integers: many residuals tie exactly, at the boundary too.
	for seed := uint64(1); seed <= 6; seed++ {
		n, p := 40+int(seed)*10, 1+int(seed)%3
		x := mat.NewDense(n, p, nil)
		y := make([]float64, n)
		for i := range y {
			x.Set(i, 0, 1)
			for j := 1; j < p; j++ {
				x.Set(i, j, float64(rng.IntN(5)))
			}
			y[i] = float64(rng.IntN(4))
		}
		add(fmt.Sprintf("integers %d", seed), x, y, ltsSettings{Subsets: 200})
	}
	// More than h rows on a line: residuals zero to rounding.
	ex, ey := ltsLine(5, 60)
	for i := range ey {
		ey[i] = 3 - ex.At(i, 1)/3
		if i%4 == 0 {
			ey[i] += 5 + float64(i)
		}
	}
	add("exact fit", ex, ey, ltsSettings{})
	// Every row twice.
	dx, dy := simulated(31, 80, 3, 0.2)
	for i := 40; i < 80; i++ {
		dx.SetRow(i, dx.RawRowView(i-40))
		dy[i] = dy[i-40]
	}
	add("duplicated rows", dx, dy, ltsSettings{})
	// Near-collinear columns, and columns far from zero.
	for _, eps := range []float64{1e-3, 1e-6, 1e-9} {
		cx, cy := simulated(32, 100, 4, 0.1)
		for i := 0; i < 100; i++ {
			cx.Set(i, 3, cx.At(i, 2)+eps*cx.At(i, 3))
		}
		add(fmt.Sprintf("collinear %g", eps), cx, cy, ltsSettings{})
	}
	for _, off := range []float64{1e4, 1e8} {
		ox, oy := simulated(33, 100, 3, 0.1)
		for i := 0; i < 100; i++ {
			ox.Set(i, 1, off+ox.At(i, 1))
			oy[i] += 2 * off
		}
		add(fmt.Sprintf("offset %g", off), ox, oy, ltsSettings{})
	}
	hx, hy := simulated(34, 100, 5, 0.2)
	for i := 0; i < 20; i++ {
		hy[i] = 1e150 * float64(i+1)
	}
	add("huge outliers", hx, hy, ltsSettings{})
	one, oneY := simulated(4, 40, 3, 0.1)
	for i := 0; i < 40; i++ {
		one.Set(i, 2, 0)
	}
	one.Set(17, 2, 1)
	add("one indicator", one, oneY, ltsSettings{})
	bx, by := simulated(35, 100, 5, 0.1)
	add("benchmark shape", bx, by, ltsSettings{})
	lx, ly := simulated(36, 2000, 3, 0.15)
	add("nested", lx, ly, ltsSettings{})
	wx, wy := simulated(37, 1200, 3, 0.2)
	add("windowed selection", wx, wy, ltsSettings{Subsets: 100})
	ax, ay := simulated(38, 60, 4, 0.1)
	add("all rows", ax, ay, ltsSettings{H: 60, Subsets: 100})
	return cs
}

// TestLTSStartStepsExact: the C-steps of the starts by normal equations
// (startSteps) leave the fit bit-identical to C-steps by QR alone
// (offerSteps): coefficients, objective, scale, steps, status, and every
// kept candidate with its objective and status.
func TestLTSStartStepsExact(t *testing.T) {
	for _, never := range []bool{false, true} {
		t.Run(fmt.Sprintf("never give up %v", never), func(t *testing.T) { ltsStartStepsExact(t, never) })
	}
}

// ltsStartStepsExact is TestLTSStartStepsExact, with startSteps giving up
// on hard designs as it does in fits, or never (so that its proofs are
// tried on every start of them).
func ltsStartStepsExact(t *testing.T, never bool) {
	var fast, slow ltsWork
	slow.start.qrOnly = true
	fast.start.never = never
	redone, refitted, resolved, starts := 0, 0, 0, 0
	for _, c := range ltsStartCases() {
		raw := c.x.RawMatrix()
		_, p := c.x.Dims()
		for seed := uint64(1); seed <= 2; seed++ {
			b1, b2 := make([]float64, p), make([]float64, p)
			o1, s1, k1, st1 := fast.fit(raw, c.y, b1, rand.New(rand.NewPCG(seed, 3)), c.s)
			o2, s2, k2, st2 := slow.fit(raw, c.y, b2, rand.New(rand.NewPCG(seed, 3)), c.s)
			same := math.Float64bits(o1) == math.Float64bits(o2) && math.Float64bits(s1) == math.Float64bits(s2) &&
				k1 == k2 && st1 == st2 && fast.nKept == slow.nKept
			for j := range b1 {
				same = same && math.Float64bits(b1[j]) == math.Float64bits(b2[j])
			}
			for k := 0; same && k < fast.nKept*p; k++ {
				same = math.Float64bits(fast.candBeta[k]) == math.Float64bits(slow.candBeta[k])
			}
			for k := 0; same && k < fast.nKept; k++ {
				same = math.Float64bits(fast.candObj[k]) == math.Float64bits(slow.candObj[k]) && fast.candSt[k] == slow.candSt[k]
			}
			if !same {
				t.Errorf("%s, seed %d: normal equations %v obj %v scale %v steps %d %v; QR %v obj %v scale %v steps %d %v",
					c.name, seed, b1, o1, s1, k1, st1, b2, o2, s2, k2, st2)
			}
			if seed == 1 {
				t.Logf("%-28s %v: %4d starts redone by QR, %4d refitted by QR, %4d solved again by QR",
					c.name, st1, fast.start.redone, fast.start.refitted, fast.start.resolved)
			}
			resolved += fast.start.resolved
			redone += fast.start.redone
			refitted += fast.start.refitted
			starts += c.s.withDefaults(c.x.Dims()).Subsets
		}
	}
	t.Logf("all cases: %d of about %d starts redone by QR, %d refitted by QR at the end, %d solved again by QR",
		redone, starts, refitted, resolved)
}

// TestLTSHypot: ltsHypot is math.Hypot bit for bit, on ordinary values,
// values near underflow and overflow, zeros and the special values.
func TestLTSHypot(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 11))
	special := []float64{0, math.Copysign(0, -1), 1, -1, math.SmallestNonzeroFloat64, math.MaxFloat64,
		-math.MaxFloat64, math.Inf(1), math.Inf(-1), math.NaN(), 1e-300, 1e300}
	check := func(p, q float64) {
		got, want := ltsHypot(p, q), math.Hypot(p, q)
		if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("ltsHypot(%v, %v) = %v, math.Hypot %v", p, q, got, want)
		}
	}
	for _, p := range special {
		for _, q := range special {
			check(p, q)
		}
	}
	for k := 0; k < 200000; k++ {
		p := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(601)-300))
		q := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(601)-300))
		if k%2 == 0 {
			q = p * (1 + rng.NormFloat64())
		}
		check(p, q)
	}
}

// TestLTSElementalBounds checks the claims of luStart and givensSolve on
// random elemental subsets of well and badly conditioned designs: when
// either accepts its rows, the rank tests of draw pass for them, the
// Householder fit draw would make exists, and every residual at the
// accepted fit lies within sw.delta0 of the same residual at the
// Householder fit. It also requires both to accept most rows of a
// well-conditioned design, or the fast paths would be dead code.
func TestLTSElementalBounds(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 13))
	accepted, tried := [2]int{}, 0
	var worst [2]float64 // largest residual difference over its bound
	for trial := 0; trial < 3000; trial++ {
		p := 1 + rng.IntN(colMaxP)
		n := 3*p + rng.IntN(40)
		x, y := simulated(uint64(trial), n, p, 0.2)
		switch trial % 4 {
		case 1: // near-collinear last column
			if p > 2 {
				e := math.Pow(10, -float64(rng.IntN(12)))
				for i := 0; i < n; i++ {
					x.Set(i, p-1, x.At(i, p-2)+e*rng.NormFloat64())
				}
			}
		case 2: // badly scaled columns
			for j := 0; j < p; j++ {
				s := math.Pow(10, float64(rng.IntN(13)-6))
				for i := 0; i < n; i++ {
					x.Set(i, j, s*x.At(i, j))
				}
			}
		case 3: // a column far from zero
			off := math.Pow(10, float64(rng.IntN(9)))
			for i := 0; i < n; i++ {
				x.Set(i, p-1, off+x.At(i, p-1))
			}
		}
		raw := x.RawMatrix()
		var lw ltsWork
		lw.reserve(n, p, (n+p+1)/2, 1)
		lw.sc = lw.columns(raw)
		lw.loadStart(lw.sc, y)
		for i := range lw.idx {
			lw.idx[i] = i
		}
		rng.Shuffle(n, func(a, b int) { lw.idx[a], lw.idx[b] = lw.idx[b], lw.idx[a] })
		// The Givens factor and column sums as draw makes them.
		clear(lw.gr)
		clear(lw.gss)
		qy := lw.start.gqy[:p]
		clear(qy)
		for _, i := range lw.idx[:p] {
			for k, v := range row(raw, i) {
				lw.gz[k] = v
				lw.gss[k] += v * v
			}
			ltsGivensAddRow(lw.gr, lw.gz, p, qy, y[i])
		}
		rankOK := lw.givensFullRank(p)
		a := make([]float64, p*p)
		yy := make([]float64, p)
		for k, i := range lw.idx[:p] {
			for j, v := range row(raw, i) {
				a[j*p+k] = v
			}
			yy[k] = y[i]
		}
		ref := make([]float64, p)
		hhOK := householderSolve(a, p, p, yy, ref, make([]float64, p), make([]float64, p))
		rRef := make([]float64, n)
		lw.sc.residuals(y, ref, rRef)
		tried++
		for m, solve := range []func() bool{func() bool { return lw.luStart(raw, y) }, lw.givensSolve} {
			lw.start.approx = false
			if !solve() {
				continue
			}
			accepted[m]++
			if !rankOK || !hhOK {
				t.Fatalf("trial %d (p %d): method %d accepted rows that fail the rank test (Givens %v, Householder %v)", trial, p, m, rankOK, hhOK)
			}
			r := make([]float64, n)
			lw.sc.residuals(y, lw.trial[:p], r)
			for i := range r {
				d := math.Abs(r[i] - rRef[i])
				if !(d <= lw.start.delta0) {
					t.Fatalf("trial %d (p %d): method %d residual %d off by %g, bound %g", trial, p, m, i, d, lw.start.delta0)
				}
				worst[m] = max(worst[m], d/lw.start.delta0)
			}
		}
	}
	t.Logf("of %d subsets, LU accepted %d, Givens %d; largest residual difference %.2g and %.2g of the bound",
		tried, accepted[0], accepted[1], worst[0], worst[1])
	if accepted[0] < tried/2 || accepted[1] < tried/2 {
		t.Errorf("LU accepted %d and Givens %d of %d subsets, want most", accepted[0], accepted[1], tried)
	}
}

// TestLTSNormalBound checks the claim of normalSolve on random h-subsets of
// well and badly conditioned designs, with the sums formed afresh and
// updated row by row: when it accepts a subset, refitQR fits it too, and
// every residual at the normal-equation fit lies within the bound of the
// same residual at the QR fit.
func TestLTSNormalBound(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 15))
	accepted, tried := 0, 0
	var worst float64
	for trial := 0; trial < 600; trial++ {
		p := 1 + rng.IntN(colMaxP)
		n := 3*p + rng.IntN(200)
		x, y := simulated(uint64(trial), n, p, 0.2)
		switch trial % 4 {
		case 1:
			if p > 2 {
				e := math.Pow(10, -float64(rng.IntN(8)))
				for i := 0; i < n; i++ {
					x.Set(i, p-1, x.At(i, p-2)+e*rng.NormFloat64())
				}
			}
		case 2:
			for j := 0; j < p; j++ {
				s := math.Pow(10, float64(rng.IntN(13)-6))
				for i := 0; i < n; i++ {
					x.Set(i, j, s*x.At(i, j))
				}
			}
		case 3:
			off := math.Pow(10, float64(rng.IntN(7)))
			for i := 0; i < n; i++ {
				x.Set(i, p-1, off+x.At(i, p-1))
			}
		}
		raw := x.RawMatrix()
		var lw ltsWork
		h := p + rng.IntN(n-p+1)
		lw.reserve(n, p, h, 1)
		lw.sc = lw.columns(raw)
		lw.loadStart(lw.sc, y)
		b, ref := make([]float64, p), make([]float64, p)
		r, rRef := make([]float64, n), make([]float64, n)
		for step := 0; step < 6; step++ {
			// A random subset of h rows, or the last one with a few swapped.
			lw.cur, lw.prev = lw.prev, lw.cur
			if step == 0 || step%3 == 0 {
				perm := rng.Perm(n)
				clear(lw.cur[:n])
				for _, i := range perm[:h] {
					lw.cur[i] = true
				}
			} else {
				copy(lw.cur[:n], lw.prev[:n])
				for s := 0; s < 1+rng.IntN(5); s++ {
					i, j := rng.IntN(n), rng.IntN(n)
					if lw.cur[i] != lw.cur[j] {
						lw.cur[i], lw.cur[j] = lw.cur[j], lw.cur[i]
					}
				}
			}
			tried++
			delta, ok := lw.normalSolve(b, step == 0 || step%3 == 0)
			if !ok {
				continue
			}
			accepted++
			if !lw.refitQR(raw, y, ref) {
				t.Fatalf("trial %d step %d (n %d p %d h %d): normal equations accepted a subset QR finds singular", trial, step, n, p, h)
			}
			lw.sc.residuals(y, b, r)
			lw.sc.residuals(y, ref, rRef)
			for i := range r {
				d := math.Abs(r[i] - rRef[i])
				if !(d <= delta) {
					t.Fatalf("trial %d step %d (n %d p %d h %d): residual %d off by %g, bound %g", trial, step, n, p, h, i, d, delta)
				}
				worst = max(worst, d/delta)
			}
		}
	}
	t.Logf("normal equations accepted %d of %d subsets; largest residual difference %.2g of the bound", accepted, tried, worst)
	if accepted < tried/2 {
		t.Errorf("normal equations accepted %d of %d subsets, want most", accepted, tried)
	}
}
