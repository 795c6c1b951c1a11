package external

import (
	"fmt"
	"math"
	"strconv"
	"unicode/utf8"

	"gonum.org/v1/gonum/mat"
)

// Request is one dataset to fit.
type Request struct {
	// Replicate identifies the dataset in messages (FitError, and the
	// "replicate" field the program may print in its own messages).
	Replicate int
	// X is the n×p design, intercept column of ones first when the model
	// has one. It is only read.
	X *mat.Dense
	// Y holds the n responses.
	Y []float64
	// Names holds the p coefficient names, in column order.
	Names []string
	// Seed is a seed the program may use for its own randomness, so that
	// its fits can be reproduced.
	Seed uint64
}

// check returns a message saying why req cannot be sent, or "".
func (req *Request) check() string {
	if req.X == nil {
		return "no design matrix"
	}
	n, p := req.X.Dims()
	switch {
	case n == 0 || p == 0:
		return fmt.Sprintf("empty design (%d×%d)", n, p)
	case len(req.Y) != n:
		return fmt.Sprintf("%d responses for a design of %d rows", len(req.Y), n)
	case len(req.Names) != p:
		return fmt.Sprintf("%d names for a design of %d columns", len(req.Names), p)
	case !finite(req.Y):
		return "a response is not finite"
	}
	raw := req.X.RawMatrix()
	for i := 0; i < raw.Rows; i++ {
		if !finite(raw.Data[i*raw.Stride : i*raw.Stride+raw.Cols]) {
			return fmt.Sprintf("row %d of the design is not finite", i+1)
		}
	}
	return ""
}

// finite reports whether every value of v is finite.
func finite(v []float64) bool {
	for _, f := range v {
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return false
		}
	}
	return true
}

// appendRequest appends req as one line of JSON (see the package
// documentation) to b. On failure it returns b unchanged and a message
// saying why. It allocates nothing once b is large enough.
func appendRequest(b []byte, req *Request) ([]byte, string) {
	if msg := req.check(); msg != "" {
		return b, msg
	}
	start := len(b)
	b = append(b, `{"replicate":`...)
	b = strconv.AppendInt(b, int64(req.Replicate), 10)
	b = append(b, `,"seed":`...)
	b = strconv.AppendUint(b, req.Seed, 10)
	b = append(b, `,"names":[`...)
	for j, name := range req.Names {
		if j > 0 {
			b = append(b, ',')
		}
		b = appendString(b, name)
	}
	b = append(b, `],"y":`...)
	var ok bool
	if b, ok = appendFloats(b, req.Y); !ok {
		return b[:start], "a response is not finite"
	}
	b = append(b, `,"x":[`...)
	raw := req.X.RawMatrix()
	for i := 0; i < raw.Rows; i++ {
		if i > 0 {
			b = append(b, ',')
		}
		if b, ok = appendFloats(b, raw.Data[i*raw.Stride:i*raw.Stride+raw.Cols]); !ok {
			return b[:start], fmt.Sprintf("row %d of the design is not finite", i+1)
		}
	}
	b = append(b, "]}\n"...)
	return b, ""
}

// appendFloats appends v as a JSON array of numbers, each written with the
// fewest digits that read back to the same float64. It reports false if a
// value is not finite.
func appendFloats(b []byte, v []float64) ([]byte, bool) {
	b = append(b, '[')
	for i, f := range v {
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return b, false
		}
		if i > 0 {
			b = append(b, ',')
		}
		b = strconv.AppendFloat(b, f, 'g', -1, 64)
	}
	return append(b, ']'), true
}

// appendString appends s as a JSON string: quote, backslash and control
// characters escaped, invalid UTF-8 replaced by U+FFFD.
func appendString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			switch {
			case c == '"' || c == '\\':
				b = append(b, '\\', c)
			case c < 0x20:
				b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
			default:
				b = append(b, c)
			}
			i++
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 {
			b = append(b, "\ufffd"...)
		} else {
			b = append(b, s[i:i+size]...)
		}
		i += size
	}
	return append(b, '"')
}
