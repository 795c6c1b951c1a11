package results

import (
	"math"
	"strconv"
)

// FormatMeasure renders a value and its MCSE with as many digits as the
// MCSE justifies: the MCSE to one significant digit (two when that digit is
// 1) and the value to the same decimal place. A zero MCSE (an exact value)
// shows the value to four significant digits. signed adds a + to positive
// values.
func FormatMeasure(m Measure, signed bool) (value, mcse string) {
	v, e := float64(m.Value), float64(m.MCSE)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "—", ""
	}
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return formatSig(v, 4, signed), ""
	}
	if e == 0 {
		return formatSig(v, 4, signed), "0"
	}
	// Decimal position of the MCSE's leading digit.
	lead := int(math.Floor(math.Log10(e)))
	digits := 1
	if e/math.Pow(10, float64(lead)) < 2 {
		digits = 2
	}
	place := lead - digits + 1 // 10^place is the last shown digit
	return formatAt(v, place, signed), formatAt(e, place, false)
}

// formatAt rounds v to a multiple of 10^place and formats it in fixed
// notation (scientific when it would be very long).
func formatAt(v float64, place int, signed bool) string {
	var s string
	switch {
	case place >= 0 && math.Abs(v) < 1e15:
		r := math.Round(v/math.Pow(10, float64(place))) * math.Pow(10, float64(place))
		s = strconv.FormatFloat(r, 'f', 0, 64)
	case place < 0 && place >= -12 && math.Abs(v) < 1e9:
		s = strconv.FormatFloat(v, 'f', -place, 64)
	default:
		// Fall back to enough significant digits.
		sig := 1
		if v != 0 {
			sig = max(1, int(math.Floor(math.Log10(math.Abs(v))))-place+1)
		}
		s = strconv.FormatFloat(v, 'g', min(sig, 15), 64)
	}
	if len(s) > 1 && s[0] == '-' && allZeroDigits(s[1:]) {
		s = s[1:] // no "-0.000"
	}
	if signed && v > 0 && s[0] != '-' && !allZeroDigits(s) {
		s = "+" + s
	}
	return s
}

// allZeroDigits reports whether a formatted number is zero.
func allZeroDigits(s string) bool {
	for _, r := range s {
		if r != '0' && r != '.' {
			return false
		}
	}
	return true
}

// formatSig formats v to sig significant digits.
func formatSig(v float64, sig int, signed bool) string {
	s := strconv.FormatFloat(v, 'g', sig, 64)
	if signed && v > 0 {
		s = "+" + s
	}
	return s
}
