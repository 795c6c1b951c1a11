package csvdata

import (
	"math"
	"math/bits"
)

// decimal is a decimal number read from a cell: (-1)^neg × mant × 10^exp,
// with mant holding at most 19 significant digits. When the cell has more,
// or an exponent too large to hold, exact is false and only strconv can
// round it.
type decimal struct {
	mant  uint64
	exp   int
	neg   bool
	exact bool
}

// maxExp bounds the value of the exponent read into decimal.exp; beyond it the
// number is left to strconv, which reports the range error.
const maxExp = 1 << 20

// scanDecimal reads s if it is [+-]digits[.digits][(e|E)[+-]digits], with
// at least one digit before the exponent, and reports whether it is.
func scanDecimal(s string) (decimal, bool) {
	d, i, ok := scanDecimalPrefix(s)
	return d, ok && i == len(s)
}

// scanDecimalPrefix reads the longest start of s that scanDecimal takes,
// and returns it and its length; false when s starts with no such number,
// or with one whose exponent has no digits.
func scanDecimalPrefix(s string) (decimal, int, bool) {
	d := decimal{exact: true}
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		d.neg = s[i] == '-'
		i++
	}
	// Leading zeros carry no significant digit; the digits after them are
	// gathered into mant (which wraps past 19 of them: exact is then false).
	start := i
	for i < len(s) && s[i] == '0' {
		i++
	}
	digits := i - start
	first := i
	for i < len(s) && s[i]-'0' <= 9 {
		d.mant = d.mant*10 + uint64(s[i]-'0')
		i++
	}
	sig := i - first
	if i < len(s) && s[i] == '.' {
		i++
		start := i
		if sig == 0 {
			for i < len(s) && s[i] == '0' {
				i++
			}
		}
		first := i
		for i < len(s) && s[i]-'0' <= 9 {
			d.mant = d.mant*10 + uint64(s[i]-'0')
			i++
		}
		digits += first - start
		sig += i - first
		d.exp -= i - start
	}
	digits += sig
	if sig > 19 {
		d.exact = false // too many digits for mant: strconv rounds
	}
	if digits == 0 {
		return d, i, false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		neg := false
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			neg = s[i] == '-'
			i++
		}
		start, e := i, 0
		for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			if e < maxExp {
				e = e*10 + int(s[i]-'0')
			}
		}
		if i == start {
			return d, i, false
		}
		if e >= maxExp {
			d.exact = false
		}
		if neg {
			e = -e
		}
		d.exp += e
	}
	return d, i, true
}

// isDecimal reports whether s is [+-]digits[.digits][(e|E)[+-]digits],
// with at least one digit before the exponent.
func isDecimal(s string) bool {
	_, ok := scanDecimal(s)
	return ok
}

// float returns d as the nearest float64 (ties to even), as
// strconv.ParseFloat would, and true; or false when d is beyond this
// short path: more than 19 significant digits, or a power of ten past
// what one exactly rounded operation covers.
//
// Three exact paths. (1) Clinger's: when mant ≤ 2^53 and |exp| ≤ 22, mant
// and 10^|exp| are both exact float64s, so one IEEE multiplication or
// division rounds the exact value once (Clinger (1990), How to read
// floating point numbers accurately, PLDI). (2) A division mant / 10^k,
// k ≤ 19, done in integers: a 64-bit quotient and its remainder give the
// 53-bit significand, a round bit and a sticky bit. (3) A product
// mant × 10^k that fits in 64 bits, converted once.
func (d decimal) float() (float64, bool) {
	if !d.exact {
		return 0, false
	}
	var v float64
	switch m, e := d.mant, d.exp; {
	case m == 0:
		v = 0
	case e == 0:
		v = float64(m)
	case m <= 1<<53 && e >= -22 && e <= 22:
		if e < 0 {
			v = float64(m) / math.Pow10(-e)
		} else {
			v = float64(m) * math.Pow10(e)
		}
	case e < 0 && e >= -19:
		v = divPow10(m, pow10u(-e))
	case e > 0 && e <= 19:
		hi, lo := bits.Mul64(m, pow10u(e))
		if hi != 0 {
			return 0, false
		}
		v = float64(lo)
	default:
		return 0, false
	}
	if d.neg {
		v = -v
	}
	return v, true
}

// pow10u returns 10^k for 0 ≤ k ≤ 19.
func pow10u(k int) uint64 {
	return uint64(math.Pow10(k)) // exact: 10^19 = 2^19 × 5^19 and 5^19 < 2^53
}

// divPow10 returns m / p rounded to the nearest float64, ties to even,
// for m > 0 and 10 ≤ p < 2^64: the quotient of m·2^s by p, with s chosen
// so that it has 63 or 64 bits, is cut to 53 bits and rounded on the bits
// cut and the remainder. The result lies in [1e-19, 2^64), a normal
// float64, so Ldexp is exact.
func divPow10(m, p uint64) float64 {
	lz := bits.LeadingZeros64(m)
	mn := m << lz // top bit set
	t := bits.Len64(p) - 1
	// mn·2^t / p lies in (2^62, 2^64), and the high word mn >> (64-t) is
	// below 2^(t) ≤ p, as Div64 needs.
	q, r := bits.Div64(mn>>(64-t), mn<<t, p)
	extra := bits.Len64(q) - 53
	mant := q >> extra
	cut := q & (1<<extra - 1)
	half := uint64(1) << (extra - 1)
	if cut > half || (cut == half && (r != 0 || mant&1 == 1)) {
		mant++
	}
	return math.Ldexp(float64(mant), extra-lz-t)
}
