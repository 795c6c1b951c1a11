package csvdata

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// sameAsStrconv fails unless parse reads s to the float64 strconv.ParseFloat
// gives, bit for bit, whenever strconv gives a finite number.
func sameAsStrconv(t *testing.T, s string) {
	t.Helper()
	want, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(want, 0) {
		return
	}
	got, err := parse(s)
	if err != nil {
		t.Fatalf("parse(%q): %v; strconv reads %v", s, err, want)
	}
	if math.Float64bits(got) != math.Float64bits(want) {
		t.Fatalf("parse(%q) = %v (%#x), strconv.ParseFloat = %v (%#x)", s, got, math.Float64bits(got), want, math.Float64bits(want))
	}
}

// TestDecimalEdges: the short paths' boundaries (2^53, 19 digits, 10^±19,
// 10^±22, ties, leading and trailing zeros, signed zeros) read as strconv
// reads them.
func TestDecimalEdges(t *testing.T) {
	cases := []string{
		"0", "-0", "+0", "0.0", "-0.000", "0e999999999999", "-0e-99999", ".0", "0.",
		"9007199254740992", "9007199254740993", "9007199254740994", "9007199254740995",
		"18014398509481985", "18014398509481986", "18014398509481987",
		"9999999999999999999", "18446744073709551615", "18446744073709551616", "99999999999999999999",
		"1e19", "1e20", "1e22", "1e23", "9e22", "9007199254740993e3", "18446744073709551615e0",
		"1e-19", "1e-20", "1e-22", "1e-23", "9999999999999999999e-19", "9999999999999999999e-20",
		"0.1", "0.2", "0.3", "0.7", "1.1", "2.675", "0.30000000000000004", "0.1000000000000000055511151231257827",
		"123456789012345678e-18", "1234567890123456789e-1", "0.0000000000000000001", "000000000000000000000001.5",
		"1.00000000000000000000", "100000000000000000000e-20", "1.7976931348623157e308", "4.9e-324", "2.2250738585072014e-308",
		"-1.2345678901234567", "-8.98846567431158e307", "1e+5", "1E-5", "5e-0", "+.5e+1",
		// Ties at 2^53 + 1 and above, written with a fraction.
		"9007199254740993.0", "900719925474099.35e1", "4503599627370496.5", "4503599627370497.5",
	}
	for _, s := range cases {
		sameAsStrconv(t, s)
	}
}

// TestDecimalRandom: millions of random decimals read as strconv reads
// them: random float64s in Go's shortest form and in fixed and exponent
// forms at random precision, and random digit strings with a random point
// and exponent (at 19 and 20 digits, the short path's limit).
func TestDecimalRandom(t *testing.T) {
	n := 1_000_000
	if testing.Short() {
		n = 50_000
	}
	rng := rand.New(rand.NewPCG(7, 19))
	var b []byte
	for i := 0; i < n; i++ {
		// A float64 of random bits, and one of a typical size.
		f := math.Float64frombits(rng.Uint64())
		if math.IsNaN(f) || math.IsInf(f, 0) {
			continue
		}
		g := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(40)-20))
		for _, v := range []float64{f, g} {
			sameAsStrconv(t, strconv.FormatFloat(v, 'g', -1, 64))
			sameAsStrconv(t, strconv.FormatFloat(v, 'e', rng.IntN(22), 64))
			if math.Abs(v) < 1e25 {
				sameAsStrconv(t, strconv.FormatFloat(v, 'f', rng.IntN(25), 64))
			}
		}
		// A random digit string.
		b = b[:0]
		if rng.IntN(2) == 0 {
			b = append(b, '-')
		}
		nd := 1 + rng.IntN(21)
		point := rng.IntN(nd + 1)
		for k := 0; k < nd; k++ {
			if k == point {
				b = append(b, '.')
			}
			b = append(b, byte('0'+rng.IntN(10)))
		}
		if rng.IntN(2) == 0 {
			b = append(b, 'e')
			b = strconv.AppendInt(b, int64(rng.IntN(61)-30), 10)
		}
		sameAsStrconv(t, string(b))
	}
}

// TestDecimalSyntax: scanDecimal accepts exactly the decimal forms.
func TestDecimalSyntax(t *testing.T) {
	for _, c := range []struct {
		s  string
		ok bool
	}{
		{"1", true}, {"-1.5e3", true}, {".5", true}, {"5.", true}, {"+0", true}, {"1E+0", true},
		{"", false}, {".", false}, {"-", false}, {"1.2.3", false}, {"1e", false}, {"1e+", false}, {"e1", false},
		{".e1", false}, {"1_0", false}, {"0x10", false}, {"1e1.5", false}, {"1 ", false}, {"١", false},
		{"1" + strings.Repeat("0", 400), true}, {"1e" + strings.Repeat("9", 40), true},
	} {
		if _, ok := scanDecimal(c.s); ok != c.ok {
			t.Errorf("scanDecimal(%q) ok = %v, want %v", c.s, ok, c.ok)
		}
	}
}

// FuzzDecimal: any string strconv reads as a finite decimal, parse reads
// bit for bit the same; any other string is an error, never a panic.
func FuzzDecimal(f *testing.F) {
	for _, s := range []string{"1", "-0.5", "9007199254740993", "1e-19", "0.1e-22", "1234567890123456789e-5", "1e400", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if isDecimal(strings.TrimSpace(s)) {
			sameAsStrconv(t, s)
		} else if _, err := parse(s); err == nil {
			t.Fatalf("parse(%q) accepted a non-decimal", s)
		}
	})
}

// TestParseRange: a decimal too large for a float64 is refused as out of
// range, with a hint to rescale; one too small reads as the nearest
// float64, zero or subnormal (strconv.ParseFloat's rounding).
func TestParseRange(t *testing.T) {
	for _, s := range []string{"1e400", "-1.8e308", "1e1048577"} {
		if _, err := parse(s); err == nil || !strings.Contains(err.Error(), "beyond the range of a float64 (magnitudes up to about 1.8e308; rescale the column)") {
			t.Errorf("%s: %v", s, err)
		}
	}
	for s, want := range map[string]float64{"1e-400": 0, "-1e-400": math.Copysign(0, -1), "4.9e-324": 5e-324, "1e-1048577": 0} {
		if v, err := parse(s); err != nil || math.Float64bits(v) != math.Float64bits(want) {
			t.Errorf("%s: %v, %v; want %v", s, v, err, want)
		}
	}
}
