package results

import (
	"math"
	"testing"
)

func TestPairedExactP(t *testing.T) {
	// Exact binomial arithmetic (common practice): given b + c discordant
	// pairs, b ~ Bin(b+c, 1/2) and p = 2·P(Bin ≤ min(b, c)), capped at 1.
	for _, c := range []struct {
		b, c int64
		want float64
	}{
		{16, 0, 2 * math.Pow(0.5, 16)}, // 3.05e-5
		{0, 16, 2 * math.Pow(0.5, 16)},
		{5, 1, 2 * 7.0 / 64},     // P(X ≤ 1) = (1 + 6)/64
		{10, 2, 2 * 79.0 / 4096}, // P(X ≤ 2) = (1 + 12 + 66)/4096
		{3, 3, 1},                // 2·42/64 > 1
		{0, 0, 1},                // nothing changed
		{1, 0, 1},                // one change cannot be significant
	} {
		if got := PairedExactP(c.b, c.c); math.Abs(got-c.want) > 1e-12*c.want {
			t.Errorf("PairedExactP(%d, %d) = %g, want %g", c.b, c.c, got, c.want)
		}
	}
}

func TestFisherExactP(t *testing.T) {
	for _, c := range []struct {
		k1, n1, k2, n2 int64
		want           float64
	}{
		// Fisher (1935), The Design of Experiments, the tea-tasting
		// table 3/4 vs 1/4 (from memory): hypergeometric probabilities
		// 1, 16, 36, 16, 1 over 70, so the two-sided p is 34/70.
		{3, 4, 1, 4, 34.0 / 70},
		{1, 4, 3, 4, 34.0 / 70},
		// 0 of 2 vs 2 of 2: tables 0,1,2 have probabilities 1/6, 4/6,
		// 1/6; the observed one and the other extreme give 2/6 (exact
		// arithmetic, common practice).
		{0, 2, 2, 2, 2.0 / 6},
		{0, 200, 0, 200, 1},
		{5, 10, 5, 10, 1},
	} {
		if got := FisherExactP(c.k1, c.n1, c.k2, c.n2); math.Abs(got-c.want) > 1e-10 {
			t.Errorf("FisherExactP(%d/%d, %d/%d) = %g, want %g", c.k1, c.n1, c.k2, c.n2, got, c.want)
		}
	}
	// 0 of 200 against 16 of 200: the table is symmetric, so p is twice
	// P(X = 0) = C(200,16)/C(400,16) = Π_{i<16} (200−i)/(400−i).
	want := 2.0
	for i := 0.0; i < 16; i++ {
		want *= (200 - i) / (400 - i)
	}
	if p := FisherExactP(0, 200, 16, 200); math.Abs(p-want) > 1e-9*want {
		t.Errorf("0/200 vs 16/200: p = %g, want %g", p, want)
	}
}

func TestHolmCriticalZ(t *testing.T) {
	// With one measure the critical z is the threshold itself; with m it
	// is the two-sided normal quantile of α/m (Holm 1979, first step).
	alpha := math.Erfc(4 / math.Sqrt2)
	if z := holmCriticalZ(alpha, 1); math.Abs(z-4) > 1e-9 {
		t.Errorf("m = 1: %g, want 4", z)
	}
	for _, m := range []int{2, 10, 104} {
		z := holmCriticalZ(alpha, m)
		if p := math.Erfc(z / math.Sqrt2); math.Abs(p-alpha/float64(m)) > 1e-9*alpha {
			t.Errorf("m = %d: z %g has p %g, want %g", m, z, p, alpha/float64(m))
		}
	}
}
