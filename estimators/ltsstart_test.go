package estimators

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
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
	var fast, slow ltsWork
	slow.start.qrOnly = true
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

// TestLTSSelectBits checks ltsSelectBits against a full sort, on values
// with many ties and without.
func TestLTSSelectBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	for trial := 0; trial < 2000; trial++ {
		n := 1 + rng.IntN(300)
		a := make([]uint64, n)
		for i := range a {
			switch trial % 3 {
			case 0:
				a[i] = math.Float64bits(rng.ExpFloat64())
			case 1:
				a[i] = uint64(rng.IntN(1 + n/4))
			default:
				a[i] = uint64(rng.IntN(3))
			}
		}
		sorted := append([]uint64(nil), a...)
		slices.Sort(sorted)
		k := rng.IntN(n)
		if got := ltsSelectBits(a, make([]uint64, n), k); got != sorted[k] {
			t.Fatalf("n %d k %d: got %d, want %d", n, k, got, sorted[k])
		}
	}
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
