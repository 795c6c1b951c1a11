package external

import (
	"fmt"
	"math"
	"strconv"
	"unicode/utf16"
	"unicode/utf8"
)

// maxDepth bounds the nesting of ignored reply fields, so that a hostile
// reply cannot exhaust the stack.
const maxDepth = 64

// wire is a decoded reply line. It is reused from reply to reply, so
// decoding allocates nothing but the text of a status word or error
// message that differs from the previous one.
type wire struct {
	coefs      []float64
	hasCoefs   bool
	badCoef    int // index of the first non-finite coefficient, or -1
	scale      float64
	hasScale   bool
	badScale   bool // the scale was non-finite
	iterations int
	converged  bool
	status     string
	errMsg     string
	hasErr     bool
	scratch    []byte // unescaped string contents
}

// replyError is a reply that is not valid protocol: its message says why.
type replyError struct{ msg string }

func (e *replyError) Error() string { return e.msg }

// parser reads one reply line.
type parser struct {
	s []byte
	i int
	w *wire
}

// decodeReply decodes line (without its newline) into w. It returns an
// error (a *replyError) if the line is not a JSON object of the protocol;
// non-finite values are not errors here but are noted in w.
func decodeReply(line []byte, w *wire) error {
	w.coefs = w.coefs[:0]
	w.hasCoefs, w.badCoef = false, -1
	w.scale, w.hasScale, w.badScale = 0, false, false
	w.iterations, w.converged = 0, true
	w.hasErr = false
	hasStatus := false
	p := parser{s: line, w: w}
	p.space()
	if !p.eat('{') {
		return p.fail("a reply must be a JSON object on one line")
	}
	p.space()
	if !p.eat('}') {
		for {
			p.space()
			key, err := p.str()
			if err != nil {
				return err
			}
			p.space()
			if !p.eat(':') {
				return p.fail("expected ':' after a field name")
			}
			p.space()
			switch string(key) {
			case "coefficients":
				err = p.coefficients()
			case "scale":
				err = p.scaleField()
			case "iterations":
				err = p.iterationsField()
			case "converged":
				err = p.convergedField()
			case "status":
				hasStatus, err = p.statusField()
			case "error":
				err = p.errorField()
			default:
				err = p.skip(0)
			}
			if err != nil {
				return err
			}
			p.space()
			if p.eat('}') {
				break
			}
			if !p.eat(',') {
				return p.fail("expected ',' or '}' after a field")
			}
		}
	}
	p.space()
	if p.i < len(p.s) {
		return p.fail("text after the reply object")
	}
	if !hasStatus {
		w.status = ""
	}
	return nil
}

// fail returns a replyError at the parser's position.
func (p *parser) fail(msg string) error {
	return &replyError{fmt.Sprintf("%s (at byte %d)", msg, p.i+1)}
}

// space skips JSON white space (and a carriage return before the newline).
func (p *parser) space() {
	for p.i < len(p.s) {
		switch p.s[p.i] {
		case ' ', '\t', '\r', '\n':
			p.i++
		default:
			return
		}
	}
}

// eat consumes c if it is next.
func (p *parser) eat(c byte) bool {
	if p.i < len(p.s) && p.s[p.i] == c {
		p.i++
		return true
	}
	return false
}

// word consumes w if it is next.
func (p *parser) word(w string) bool {
	if len(p.s)-p.i >= len(w) && string(p.s[p.i:p.i+len(w)]) == w {
		p.i += len(w)
		return true
	}
	return false
}

// peek returns the next byte, or 0 at the end.
func (p *parser) peek() byte {
	if p.i < len(p.s) {
		return p.s[p.i]
	}
	return 0
}

// value reads a value that should be a number: it returns the number and
// whether it is finite. NaN, Infinity and -Infinity (bare, as some JSON
// writers print them), the strings "NaN", "NA", "Inf", "-Inf", "Infinity"
// and "-Infinity", null, and numbers beyond the float64 range are
// non-finite. Anything else that is not a number is an error.
func (p *parser) number(field string) (float64, bool, error) {
	switch c := p.peek(); {
	case c == '-' && (p.word("-Infinity") || p.word("-inf")):
		return math.Inf(-1), false, nil
	case c == '-' || (c >= '0' && c <= '9'):
		return p.numeral(field)
	case p.word("NaN") || p.word("nan"):
		return math.NaN(), false, nil
	case p.word("Infinity") || p.word("+Infinity") || p.word("inf") || p.word("+inf"):
		return math.Inf(1), false, nil
	case p.word("null"):
		return math.NaN(), false, nil
	case c == '"':
		s, err := p.str()
		if err != nil {
			return 0, false, err
		}
		switch string(s) {
		case "NaN", "NA", "nan":
			return math.NaN(), false, nil
		case "Inf", "Infinity", "inf", "+Inf", "+Infinity":
			return math.Inf(1), false, nil
		case "-Inf", "-Infinity", "-inf":
			return math.Inf(-1), false, nil
		}
		return 0, false, p.fail(fmt.Sprintf("%s: expected a number, found the string %q", field, s))
	}
	return 0, false, p.fail(fmt.Sprintf("%s: expected a number", field))
}

// numeral reads a JSON number.
func (p *parser) numeral(field string) (float64, bool, error) {
	start := p.i
	p.eat('-')
	digits := func() int {
		k := 0
		for p.i < len(p.s) && p.s[p.i] >= '0' && p.s[p.i] <= '9' {
			p.i++
			k++
		}
		return k
	}
	if p.peek() == '0' {
		p.i++
	} else if digits() == 0 {
		return 0, false, p.fail(field + ": malformed number")
	}
	if p.eat('.') && digits() == 0 {
		return 0, false, p.fail(field + ": malformed number")
	}
	if c := p.peek(); c == 'e' || c == 'E' {
		p.i++
		if c := p.peek(); c == '+' || c == '-' {
			p.i++
		}
		if digits() == 0 {
			return 0, false, p.fail(field + ": malformed number")
		}
	}
	v, err := strconv.ParseFloat(string(p.s[start:p.i]), 64)
	if err != nil && !math.IsInf(v, 0) {
		return 0, false, p.fail(field + ": malformed number")
	}
	return v, !math.IsInf(v, 0), nil
}

// coefficients reads the "coefficients" array (or null, taken as absent).
func (p *parser) coefficients() error {
	w := p.w
	w.coefs = w.coefs[:0]
	w.hasCoefs, w.badCoef = false, -1
	if p.word("null") {
		return nil
	}
	if !p.eat('[') {
		return p.fail("coefficients: expected an array of numbers")
	}
	w.hasCoefs = true
	p.space()
	if p.eat(']') {
		return nil
	}
	for {
		p.space()
		v, finite, err := p.number("coefficients")
		if err != nil {
			return err
		}
		if !finite && w.badCoef < 0 {
			w.badCoef = len(w.coefs)
		}
		w.coefs = append(w.coefs, v)
		p.space()
		if p.eat(']') {
			return nil
		}
		if !p.eat(',') {
			return p.fail("coefficients: expected ',' or ']'")
		}
	}
}

// scaleField reads "scale": a number, or null for none.
func (p *parser) scaleField() error {
	w := p.w
	if p.word("null") {
		w.hasScale, w.badScale = false, false
		return nil
	}
	v, finite, err := p.number("scale")
	if err != nil {
		return err
	}
	if finite && v < 0 {
		return p.fail(fmt.Sprintf("scale: %v is negative", v))
	}
	w.scale, w.hasScale, w.badScale = v, true, !finite
	return nil
}

// iterationsField reads "iterations": a whole number ≥ 0, or null.
func (p *parser) iterationsField() error {
	if p.word("null") {
		p.w.iterations = 0
		return nil
	}
	v, finite, err := p.number("iterations")
	if err != nil {
		return err
	}
	if !finite || v < 0 || v != math.Trunc(v) || v > math.MaxInt32 {
		return p.fail("iterations: expected a whole number ≥ 0")
	}
	p.w.iterations = int(v)
	return nil
}

// convergedField reads "converged": true, false, or null (true).
func (p *parser) convergedField() error {
	switch {
	case p.word("true"), p.word("null"):
		p.w.converged = true
	case p.word("false"):
		p.w.converged = false
	default:
		return p.fail("converged: expected true or false")
	}
	return nil
}

// statusField reads "status": a string, or null for none.
func (p *parser) statusField() (bool, error) {
	if p.word("null") {
		return false, nil
	}
	if p.peek() != '"' {
		return false, p.fail("status: expected a string")
	}
	s, err := p.str()
	if err != nil {
		return false, err
	}
	if string(s) != p.w.status {
		p.w.status = string(s)
	}
	return true, nil
}

// errorField reads "error": a message string, or null for none. Any other
// value still marks the fit as failed; its JSON text is the message.
func (p *parser) errorField() error {
	w := p.w
	switch c := p.peek(); {
	case p.word("null"):
		w.hasErr = false
	case c == '"':
		s, err := p.str()
		if err != nil {
			return err
		}
		w.errMsg, w.hasErr = string(s), true
	default:
		start := p.i
		if err := p.skip(0); err != nil {
			return err
		}
		w.errMsg, w.hasErr = string(p.s[start:p.i]), true
	}
	return nil
}

// skip reads and discards any value, at nesting depth depth.
func (p *parser) skip(depth int) error {
	if depth > maxDepth {
		return p.fail(fmt.Sprintf("values nested deeper than %d", maxDepth))
	}
	switch c := p.peek(); c {
	case '"':
		_, err := p.str()
		return err
	case '{', '[':
		closing := byte('}')
		if c == '[' {
			closing = ']'
		}
		p.i++
		p.space()
		if p.eat(closing) {
			return nil
		}
		for {
			p.space()
			if c == '{' {
				if _, err := p.str(); err != nil {
					return err
				}
				p.space()
				if !p.eat(':') {
					return p.fail("expected ':' after a field name")
				}
				p.space()
			}
			if err := p.skip(depth + 1); err != nil {
				return err
			}
			p.space()
			if p.eat(closing) {
				return nil
			}
			if !p.eat(',') {
				return p.fail(fmt.Sprintf("expected ',' or '%c'", closing))
			}
		}
	}
	if p.word("true") || p.word("false") {
		return nil
	}
	_, _, err := p.number("value")
	return err
}

// str reads a JSON string and returns its contents, unescaped. The slice
// is valid until the next call.
func (p *parser) str() ([]byte, error) {
	if !p.eat('"') {
		return nil, p.fail("expected a string")
	}
	start := p.i
	for p.i < len(p.s) {
		c := p.s[p.i]
		switch {
		case c == '"':
			p.i++
			return p.s[start : p.i-1], nil
		case c == '\\':
			return p.escaped(start)
		case c < 0x20:
			return nil, p.fail("control character in a string")
		}
		p.i++
	}
	return nil, p.fail("unterminated string")
}

// escaped finishes a string that started at start and holds escapes,
// unescaping it into the wire's scratch buffer.
func (p *parser) escaped(start int) ([]byte, error) {
	b := append(p.w.scratch[:0], p.s[start:p.i]...)
	defer func() { p.w.scratch = b[:0] }()
	for p.i < len(p.s) {
		c := p.s[p.i]
		switch {
		case c == '"':
			p.i++
			return b, nil
		case c < 0x20:
			return nil, p.fail("control character in a string")
		case c != '\\':
			b = append(b, c)
			p.i++
			continue
		}
		p.i++
		if p.i >= len(p.s) {
			break
		}
		e := p.s[p.i]
		p.i++
		switch e {
		case '"', '\\', '/':
			b = append(b, e)
		case 'b':
			b = append(b, '\b')
		case 'f':
			b = append(b, '\f')
		case 'n':
			b = append(b, '\n')
		case 'r':
			b = append(b, '\r')
		case 't':
			b = append(b, '\t')
		case 'u':
			r, ok := p.hex4()
			if !ok {
				return nil, p.fail("malformed \\u escape")
			}
			if utf16.IsSurrogate(r) {
				r2 := utf8.RuneError
				if len(p.s)-p.i >= 2 && p.s[p.i] == '\\' && p.s[p.i+1] == 'u' {
					save := p.i
					p.i += 2
					if lo, ok := p.hex4(); ok {
						r2 = utf16.DecodeRune(r, lo)
					}
					if r2 == utf8.RuneError {
						p.i = save
					}
				}
				r = r2
			}
			b = utf8.AppendRune(b, r)
		default:
			return nil, p.fail("unknown escape in a string")
		}
	}
	return nil, p.fail("unterminated string")
}

// hex4 reads four hexadecimal digits.
func (p *parser) hex4() (rune, bool) {
	if len(p.s)-p.i < 4 {
		return 0, false
	}
	var r rune
	for _, c := range p.s[p.i : p.i+4] {
		switch {
		case c >= '0' && c <= '9':
			c -= '0'
		case c >= 'a' && c <= 'f':
			c -= 'a' - 10
		case c >= 'A' && c <= 'F':
			c -= 'A' - 10
		default:
			return 0, false
		}
		r = r<<4 | rune(c)
	}
	p.i += 4
	return r, true
}
