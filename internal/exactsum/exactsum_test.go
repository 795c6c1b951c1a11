package exactsum

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

// reference computes the correctly rounded sum with math/big at a precision
// large enough to hold any sum of these float64 values exactly.
func reference(xs []float64) float64 {
	acc := new(big.Float).SetPrec(4000)
	for _, x := range xs {
		acc.Add(acc, new(big.Float).SetPrec(4000).SetFloat64(x))
	}
	f, _ := acc.Float64()
	return f
}

func TestSumMatchesBigFloat(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	cases := []struct {
		name string
		gen  func() float64
	}{
		{"unit normals", rng.NormFloat64},
		{"wide exponents", func() float64 { return math.Ldexp(rng.NormFloat64(), rng.IntN(600)-300) }},
		{"subnormals", func() float64 { return math.Ldexp(rng.Float64(), -1070) * float64(1-2*rng.IntN(2)) }},
		{"huge", func() float64 { return math.Ldexp(rng.Float64(), 1020) * float64(1-2*rng.IntN(2)) }},
	}
	for _, c := range cases {
		xs := make([]float64, 2000)
		for i := range xs {
			xs[i] = c.gen()
		}
		var s Sum
		for _, x := range xs {
			s.Add(x)
		}
		if got, want := s.Float64(), reference(xs); got != want && !(math.IsInf(got, 0) && math.IsInf(want, 0)) {
			t.Errorf("%s: sum = %v, want %v", c.name, got, want)
		}
	}
}

func TestSumOrderIndependent(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	xs := make([]float64, 5000)
	for i := range xs {
		xs[i] = math.Ldexp(rng.NormFloat64(), rng.IntN(80)-40)
	}
	var a, b Sum
	for _, x := range xs {
		a.Add(x)
	}
	rng.Shuffle(len(xs), func(i, j int) { xs[i], xs[j] = xs[j], xs[i] })
	// b is built from three partial sums merged, as shards would be.
	var p [3]Sum
	for i, x := range xs {
		p[i%3].Add(x)
	}
	for i := range p {
		b.Merge(&p[i])
	}
	if a.Float64() != b.Float64() {
		t.Fatalf("order changed the sum: %v vs %v", a.Float64(), b.Float64())
	}
}

func TestCancellation(t *testing.T) {
	var s Sum
	s.Add(1e300)
	s.Add(1)
	s.Add(-1e300)
	s.Add(1e-300)
	if got := s.Float64(); got != 1 {
		t.Fatalf("1e300 + 1 - 1e300 + 1e-300 = %v, want 1", got)
	}
	var z Sum
	z.Add(0.1)
	z.Add(-0.1)
	if got := z.Float64(); got != 0 {
		t.Fatalf("0.1 - 0.1 = %v", got)
	}
}

func TestAddProductExact(t *testing.T) {
	a, b := 1+math.Ldexp(1, -30), 1-math.Ldexp(1, -30) // a*b = 1 - 2^-60 exactly
	var s Sum
	s.AddProduct(a, b)
	s.Add(-1)
	if got, want := s.Float64(), -math.Ldexp(1, -60); got != want {
		t.Fatalf("exact product residue = %v, want %v", got, want)
	}
}

func TestNonFinite(t *testing.T) {
	cases := []struct {
		in   []float64
		want float64
	}{
		{[]float64{1, math.Inf(1)}, math.Inf(1)},
		{[]float64{1, math.Inf(-1)}, math.Inf(-1)},
		{[]float64{math.Inf(1), math.Inf(-1)}, math.NaN()},
		{[]float64{math.NaN(), 2}, math.NaN()},
		{[]float64{math.MaxFloat64, math.MaxFloat64}, math.Inf(1)},
	}
	for _, c := range cases {
		var s Sum
		for _, x := range c.in {
			s.Add(x)
		}
		got := s.Float64()
		if !(got == c.want || (math.IsNaN(got) && math.IsNaN(c.want))) {
			t.Errorf("sum of %v = %v, want %v", c.in, got, c.want)
		}
	}
}

func TestTextRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	var s Sum
	for i := 0; i < 100; i++ {
		s.Add(math.Ldexp(rng.NormFloat64(), rng.IntN(200)-100))
	}
	s.Add(math.Inf(1))
	text, err := s.MarshalText()
	if err != nil {
		t.Fatal(err)
	}
	var u Sum
	if err := u.UnmarshalText(text); err != nil {
		t.Fatal(err)
	}
	if got, want := u.Float64(), s.Float64(); got != want {
		t.Fatalf("round trip: %v, want %v", got, want)
	}
	// Merging the decoded copy must act like merging the original.
	var m1, m2 Sum
	m1.Add(3)
	m2.Add(3)
	m1.Merge(&s)
	m2.Merge(&u)
	if m1.Float64() != m2.Float64() {
		t.Fatal("decoded sum merges differently")
	}
	for _, bad := range []string{"", "1:2", "a:b:c:d:e", "0:0:0:0:xyz", "0:-1:0:0:0"} {
		if err := u.UnmarshalText([]byte(bad)); err == nil {
			t.Errorf("UnmarshalText(%q) accepted malformed input", bad)
		}
	}
}

func BenchmarkAdd(b *testing.B) {
	var s Sum
	x := 0.123456789
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		s.Add(x)
		x = -x * 1.0000001
	}
}
