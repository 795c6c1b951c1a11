package root

import (
	"errors"
	"math"
	"testing"
)

// counted wraps f to count its evaluations.
func counted(f func(float64) float64, n *int) func(float64) float64 {
	return func(x float64) float64 { *n++; return f(x) }
}

// TestFind: roots of smooth, steep, flat and discontinuous functions,
// against their known values (common practice: closed forms).
func TestFind(t *testing.T) {
	tol := Tolerance{Rel: 1e-14}
	cases := []struct {
		name     string
		f        func(float64) float64
		a, b     float64
		want     float64
		slack    float64 // allowed |x − want|
		maxEvals int     // evaluations Find may take, ends included
	}{
		{"sqrt 2", func(x float64) float64 { return x*x - 2 }, 0, 2, math.Sqrt2, 1e-13, 14},
		{"reversed bracket", func(x float64) float64 { return x*x - 2 }, 2, 0, math.Sqrt2, 1e-13, 14},
		{"cos x = x", func(x float64) float64 { return math.Cos(x) - x }, 0, 1, 0.7390851332151607, 1e-13, 12},
		{"negative root", func(x float64) float64 { return math.Exp(x) - 0.5 }, -5, 5, -math.Ln2, 1e-13, 20},
		// A triple root: f is flat there, so x is known to about the
		// cube root of the error in f; bisection keeps the bracket
		// shrinking all the same.
		{"triple root", func(x float64) float64 { return math.Pow(x-1, 3) }, 0, 3, 1, 1e-10, 200},
		// A jump across zero: interpolation is useless and the
		// safeguard falls back to halving.
		{"step", func(x float64) float64 {
			if x < 1.0/3 {
				return -1
			}
			return 1
		}, 0, 1, 1.0 / 3, 1e-14, 200},
		{"root at the lower end", func(x float64) float64 { return x - 1 }, 1, 4, 1, 0, 2},
		{"root at the upper end", func(x float64) float64 { return x + 2 }, -5, -2, -2, 0, 2},
	}
	for _, c := range cases {
		n := 0
		x, err := Find(counted(c.f, &n), c.a, c.b, tol)
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if math.Abs(x-c.want) > c.slack {
			t.Errorf("%s: root %.17g, want %.17g (±%g)", c.name, x, c.want, c.slack)
		}
		if n > c.maxEvals {
			t.Errorf("%s: %d evaluations, want at most %d", c.name, n, c.maxEvals)
		}
	}
}

// TestBisect: the final bracket holds the sign change, is no wider than
// the tolerance, and keeps a zero met on the way at its upper end.
func TestBisect(t *testing.T) {
	cases := []struct {
		name   string
		f      func(float64) float64
		a, b   float64
		tol    Tolerance
		root   float64
		exactH bool // hi must equal root exactly
	}{
		{"sqrt 2", func(x float64) float64 { return x*x - 2 }, 0, 2, Tolerance{Rel: 1e-15}, math.Sqrt2, false},
		{"predicate", func(x float64) float64 {
			if x < 2.5 {
				return -1
			}
			return 1
		}, 1, 10, Tolerance{Rel: 1e-14}, 2.5, false},
		{"zero at a midpoint", func(x float64) float64 { return x - 1 }, 0, 2, Tolerance{Rel: 1e-15}, 1, true},
		{"absolute tolerance at 0", func(x float64) float64 { return x }, -1, 3, Tolerance{Abs: 1e-12}, 0, false},
		{"root at an end", func(x float64) float64 { return x - 3 }, 1, 3, Tolerance{Rel: 1e-15}, 3, true},
	}
	for _, c := range cases {
		lo, hi, err := Bisect(c.f, c.a, c.b, c.tol)
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if !(lo <= c.root && c.root <= hi) || c.tol.wide(lo, hi) {
			t.Errorf("%s: bracket [%.17g, %.17g] does not hold %v within the tolerance", c.name, lo, hi, c.root)
		}
		if c.exactH && hi != c.root {
			t.Errorf("%s: upper end %.17g, want exactly %v", c.name, hi, c.root)
		}
	}
}

// TestRefusals: a bracket without a sign change, a NaN value at an end or
// inside, a NaN end and a search cut short are errors, not answers.
func TestRefusals(t *testing.T) {
	nanInside := func(x float64) float64 {
		if x > 0.4 && x < 0.6 {
			return math.NaN()
		}
		return x - 0.5
	}
	cases := []struct {
		name string
		f    func(float64) float64
		a, b float64
		tol  Tolerance
		want error
	}{
		{"no sign change", func(x float64) float64 { return x*x + 1 }, -1, 1, Tolerance{Rel: 1e-14}, ErrNoSignChange},
		{"same sign, both negative", func(x float64) float64 { return -1 - x*x }, 0, 1, Tolerance{Rel: 1e-14}, ErrNoSignChange},
		{"NaN at an end", func(x float64) float64 { return math.Log(x) }, -1, 2, Tolerance{Rel: 1e-14}, ErrNaN},
		{"NaN inside", nanInside, 0, 1, Tolerance{Rel: 1e-14}, ErrNaN},
		{"NaN end", func(x float64) float64 { return x }, math.NaN(), 1, Tolerance{Rel: 1e-14}, ErrNaN},
		{"iteration limit", func(x float64) float64 { return math.Copysign(1, x-math.Pi) }, 0, 10, Tolerance{Rel: 1e-15, MaxIter: 5}, ErrMaxIter},
	}
	for _, c := range cases {
		if _, err := Find(c.f, c.a, c.b, c.tol); !errors.Is(err, c.want) {
			t.Errorf("Find, %s: error %v, want %v", c.name, err, c.want)
		}
		if _, _, err := Bisect(c.f, c.a, c.b, c.tol); !errors.Is(err, c.want) {
			t.Errorf("Bisect, %s: error %v, want %v", c.name, err, c.want)
		}
	}
}
