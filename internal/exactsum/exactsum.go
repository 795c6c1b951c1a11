// Package exactsum adds float64 values without rounding error.
//
// A Sum holds the exact sum of every value added to it, as a fixed-point
// integer split into 32-bit digits, so the result does not depend on the
// order in which values arrive. The Monte Carlo harness relies on this: the
// summaries of a run are bit-identical whatever the number of workers, the
// order in which replicates finish, or how a study is split into shards and
// merged again. Only the final conversion back to float64 rounds, and it rounds
// correctly (to nearest, ties to even).
package exactsum

import (
	"fmt"
	"math"
	"math/big"
	"strings"
)

// bias is the bit position of 2^0 in the fixed-point representation: digit k
// holds bits [32k-bias, 32k-bias+32). It places 2^-1074, the smallest
// subnormal, at bit 26, so every finite float64 has a non-negative position.
const bias = 1100

// digitBits is the width of one digit.
const digitBits = 32

// carryEvery is how many additions may pass before carries are propagated.
// Each addition changes a digit by less than 2^32, so 2^30 additions keep
// every digit well inside int64.
const carryEvery = 1 << 30

// Sum is an exact accumulator of float64 values. The zero value is an empty
// sum ready to use. Non-finite inputs are counted apart and make the value
// NaN or an infinity, as IEEE addition would.
type Sum struct {
	lo     int     // index of digits[0]
	digits []int64 // little-endian digits, each nominally in [0, 2^32)
	adds   int     // additions since the last carry propagation
	nan    int64   // NaN values added
	posInf int64   // +Inf values added
	negInf int64   // -Inf values added
}

// Add adds x to the sum exactly.
//
// It runs once per statistic per fit in a Monte Carlo run, so the common
// case is written without data-dependent branches: a finite non-zero x is
// told apart by its exponent alone, and the sign is applied to the digits
// arithmetically (errors are as often negative as positive, a branch on
// the sign would be mispredicted half the time).
func (s *Sum) Add(x float64) {
	bits := math.Float64bits(x)
	exp := int(bits>>52) & 0x7ff
	mant := bits & (1<<52 - 1)
	switch {
	case exp == 0x7ff:
		s.addNonFinite(x)
		return
	case exp == 0:
		if mant == 0 {
			return // ±0
		}
		exp = 1 // subnormal
	default:
		mant |= 1 << 52
	}
	pos := exp - 1075 + bias // bit position of the mantissa's lowest bit, ≥ 0
	k, shift := pos/digitBits, uint(pos%digitBits)
	// mant<<shift spans at most 53+31 = 84 bits: three digits.
	// mant<<shift as a 128-bit value split into three 32-bit digits (a
	// shift by 64 gives 0).
	lo := mant << shift
	hi := mant >> (64 - shift)
	neg := -int64(bits >> 63) // 0, or −1 (all ones) for a negative x
	d0 := (int64(lo&0xffffffff) ^ neg) - neg
	d1 := (int64(lo>>32) ^ neg) - neg
	d2 := (int64(hi) ^ neg) - neg
	i := k - s.lo
	if i < 0 || i+2 >= len(s.digits) {
		s.reserve(k, k+2)
		i = k - s.lo
	}
	d := s.digits[i : i+3 : i+3]
	d[0] += d0
	d[1] += d1
	d[2] += d2
	s.adds++
	if s.adds >= carryEvery {
		s.normalize()
	}
}

// addNonFinite counts a NaN or an infinity.
func (s *Sum) addNonFinite(x float64) {
	switch {
	case math.IsNaN(x):
		s.nan++
	case x > 0:
		s.posInf++
	default:
		s.negInf++
	}
}

// AddProduct adds the exact product a*b (not its rounded value) to the sum.
func (s *Sum) AddProduct(a, b float64) {
	p := a * b
	s.Add(p)
	if p != 0 && !math.IsInf(p, 0) && !math.IsNaN(p) {
		s.Add(math.FMA(a, b, -p))
	}
}

// Merge adds every value held by t to s. t is unchanged.
func (s *Sum) Merge(t *Sum) {
	s.nan += t.nan
	s.posInf += t.posInf
	s.negInf += t.negInf
	if len(t.digits) == 0 {
		return
	}
	s.reserve(t.lo, t.lo+len(t.digits)-1)
	off := t.lo - s.lo
	for i, d := range t.digits {
		s.digits[off+i] += d
	}
	s.adds += t.adds + 1
	if s.adds >= carryEvery/2 {
		s.normalize()
	}
}

// Reset empties the sum, keeping its storage.
func (s *Sum) Reset() {
	clear(s.digits)
	s.adds, s.nan, s.posInf, s.negInf = 0, 0, 0, 0
}

// reserve makes digits lo..hi (absolute indices) addressable.
func (s *Sum) reserve(lo, hi int) {
	if len(s.digits) == 0 {
		s.lo = lo
		s.digits = make([]int64, hi-lo+3)
		return
	}
	curHi := s.lo + len(s.digits) - 1
	if lo >= s.lo && hi <= curHi {
		return
	}
	newLo := min(lo, s.lo)
	newHi := max(hi, curHi) + 2 // headroom for carries
	d := make([]int64, newHi-newLo+1)
	copy(d[s.lo-newLo:], s.digits)
	s.lo, s.digits = newLo, d
}

// normalize propagates carries so every digit but the top one is in
// [0, 2^32); the top digit carries the sign.
func (s *Sum) normalize() {
	s.adds = 0
	var carry int64
	for i := range s.digits {
		v := s.digits[i] + carry
		carry = v >> digitBits // arithmetic shift: floor division
		s.digits[i] = v - carry<<digitBits
	}
	if carry != 0 {
		s.digits = append(s.digits, carry)
	}
}

// bigInt returns the fixed-point integer Σ digits[i]·2^(32(lo+i)).
func (s *Sum) bigInt() *big.Int {
	v := new(big.Int)
	t := new(big.Int)
	for i := len(s.digits) - 1; i >= 0; i-- {
		v.Lsh(v, digitBits)
		t.SetInt64(s.digits[i])
		v.Add(v, t)
	}
	return v
}

// Float64 returns the sum rounded to the nearest float64 (ties to even).
// It returns NaN if a NaN, or both infinities, were added, and ±Inf if one
// infinity was added or the exact sum overflows.
func (s *Sum) Float64() float64 {
	switch {
	case s.nan > 0 || (s.posInf > 0 && s.negInf > 0):
		return math.NaN()
	case s.posInf > 0:
		return math.Inf(1)
	case s.negInf > 0:
		return math.Inf(-1)
	case len(s.digits) == 0:
		return 0
	}
	v := s.bigInt()
	if v.Sign() == 0 {
		return 0
	}
	f := new(big.Float).SetPrec(0).SetMode(big.ToNearestEven)
	f.SetInt(v) // exact: precision grows to fit
	f.SetMantExp(f, digitBits*s.lo-bias)
	x, _ := f.Float64()
	return x
}

// MarshalText encodes the exact state as text: the counts of non-finite
// values and the fixed-point integer in hexadecimal with its digit offset.
// Decoding it restores a Sum that merges and rounds exactly as the original.
func (s *Sum) MarshalText() ([]byte, error) {
	v := big.NewInt(0)
	lo := 0
	if len(s.digits) > 0 {
		v, lo = s.bigInt(), s.lo
	}
	return fmt.Appendf(nil, "%d:%d:%d:%d:%s", lo, s.nan, s.posInf, s.negInf, v.Text(16)), nil
}

// UnmarshalText decodes the form written by MarshalText.
func (s *Sum) UnmarshalText(text []byte) error {
	parts := strings.Split(string(text), ":")
	if len(parts) != 5 {
		return fmt.Errorf("exactsum: malformed sum %q: want lo:nan:+inf:-inf:hex", text)
	}
	var lo int
	var nan, pinf, ninf int64
	if _, err := fmt.Sscanf(strings.Join(parts[:4], " "), "%d %d %d %d", &lo, &nan, &pinf, &ninf); err != nil {
		return fmt.Errorf("exactsum: malformed sum %q: %v", text, err)
	}
	if nan < 0 || pinf < 0 || ninf < 0 || lo < -1000 || lo > 1000 {
		return fmt.Errorf("exactsum: malformed sum %q: count or offset out of range", text)
	}
	v, ok := new(big.Int).SetString(parts[4], 16)
	if !ok || v.BitLen() > 4096 {
		return fmt.Errorf("exactsum: malformed sum %q: bad hexadecimal digits", text)
	}
	*s = Sum{nan: nan, posInf: pinf, negInf: ninf}
	if v.Sign() == 0 {
		return nil
	}
	neg := v.Sign() < 0
	mag := new(big.Int).Abs(v)
	words := (mag.BitLen() + digitBits - 1) / digitBits
	s.lo = lo
	s.digits = make([]int64, words+1)
	mask := big.NewInt(0xffffffff)
	t := new(big.Int)
	for i := 0; i < words; i++ {
		t.Rsh(mag, uint(digitBits*i)).And(t, mask)
		d := t.Int64()
		if neg {
			d = -d
		}
		s.digits[i] = d
	}
	return nil
}

// Big returns the exact sum as a big.Float, and false if a non-finite value
// was added (the sum is then NaN or infinite and Big returns nil).
func (s *Sum) Big() (*big.Float, bool) {
	if s.nan > 0 || s.posInf > 0 || s.negInf > 0 {
		return nil, false
	}
	f := new(big.Float).SetPrec(0)
	if len(s.digits) == 0 {
		return f.SetPrec(64), true
	}
	f.SetInt(s.bigInt())
	f.SetMantExp(f, digitBits*s.lo-bias)
	return f, true
}
