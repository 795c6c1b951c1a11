package report

import (
	"math"
	"testing"
)

// Colour-vision-deficiency simulation matrices of Machado, Oliveira &
// Fernandes (2009), "A physiologically-based model for simulation of color
// vision deficiency", IEEE TVCG 15:1291-1298, Table 1, severity 1.0, applied
// to linear RGB. Values from memory.
var cvdMatrices = []struct {
	name string
	m    [3][3]float64
}{
	{"protanopia", [3][3]float64{{0.152286, 1.052583, -0.204868}, {0.114503, 0.786281, 0.099216}, {-0.003882, -0.048116, 1.051998}}},
	{"deuteranopia", [3][3]float64{{0.367322, 0.860646, -0.227968}, {0.280085, 0.672501, 0.047413}, {-0.011820, 0.042940, 0.968881}}},
	{"tritanopia", [3][3]float64{{1.255528, -0.076749, -0.178779}, {-0.078411, 0.930809, 0.147602}, {0.004733, 0.691367, 0.303900}}},
}

var identity = [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}

// srgbToLinear is the sRGB transfer function inverted (IEC 61966-2-1;
// constants from memory).
func srgbToLinear(v uint8) float64 {
	c := float64(v) / 255
	if c <= 0.04045 {
		return c / 12.92
	}
	return math.Pow((c+0.055)/1.055, 2.4)
}

// toLab converts an sRGB colour, after the matrix m acts on its linear RGB
// (clipped to [0, 1]), to CIELAB under D65. The sRGB-to-XYZ matrix and the
// D65 white are those of IEC 61966-2-1, and the Lab formulas CIE 15
// (both from memory).
func toLab(r, g, b uint8, m [3][3]float64) [3]float64 {
	lin := [3]float64{srgbToLinear(r), srgbToLinear(g), srgbToLinear(b)}
	var s [3]float64
	for i := range 3 {
		s[i] = math.Min(1, math.Max(0, m[i][0]*lin[0]+m[i][1]*lin[1]+m[i][2]*lin[2]))
	}
	x := 0.4124*s[0] + 0.3576*s[1] + 0.1805*s[2]
	y := 0.2126*s[0] + 0.7152*s[1] + 0.0722*s[2]
	z := 0.0193*s[0] + 0.1192*s[1] + 0.9505*s[2]
	f := func(t float64) float64 {
		if t > 216.0/24389 {
			return math.Cbrt(t)
		}
		return (24389.0/27*t + 16) / 116
	}
	fx, fy, fz := f(x/0.95047), f(y), f(z/1.08883)
	return [3]float64{116*fy - 16, 500 * (fx - fy), 200 * (fy - fz)}
}

func deltaE76(a, b [3]float64) float64 {
	return math.Sqrt((a[0]-b[0])*(a[0]-b[0]) + (a[1]-b[1])*(a[1]-b[1]) + (a[2]-b[2])*(a[2]-b[2]))
}

// TestColourScience checks the conversions the palette tests rely on.
func TestColourScience(t *testing.T) {
	// sRGB red is L* 53.24, a* 80.09, b* 67.20 (common practice: the
	// widely tabulated value; from memory).
	red := toLab(255, 0, 0, identity)
	for i, want := range []float64{53.24, 80.09, 67.20} {
		if math.Abs(red[i]-want) > 0.05 {
			t.Errorf("sRGB red in CIELAB %v, want L*a*b* 53.24, 80.09, 67.20", red)
			break
		}
	}
	if w := toLab(255, 255, 255, identity); math.Abs(w[0]-100) > 0.01 || math.Abs(w[1]) > 0.05 || math.Abs(w[2]) > 0.05 {
		t.Errorf("white in CIELAB %v, want 100, 0, 0", w)
	}
	for _, cvd := range cvdMatrices {
		// Each row of the published matrices sums to 1 (white stays white).
		for i, row := range cvd.m {
			if s := row[0] + row[1] + row[2]; math.Abs(s-1) > 2e-6 {
				t.Errorf("%s row %d sums to %v, not 1: transcription error?", cvd.name, i, s)
			}
		}
	}
	// The simulations must really confuse the classic pairs: pure red
	// against pure green under protanopia and deuteranopia, blue against
	// green... the tritan confusion line runs through blue and green.
	pairs := []struct {
		cvd  int
		a, b [3]uint8
	}{
		{0, [3]uint8{255, 0, 0}, [3]uint8{0, 255, 0}},
		{1, [3]uint8{255, 0, 0}, [3]uint8{0, 255, 0}},
		{2, [3]uint8{0, 0, 255}, [3]uint8{0, 255, 0}},
	}
	for _, p := range pairs {
		m := cvdMatrices[p.cvd]
		normal := deltaE76(toLab(p.a[0], p.a[1], p.a[2], identity), toLab(p.b[0], p.b[1], p.b[2], identity))
		sim := deltaE76(toLab(p.a[0], p.a[1], p.a[2], m.m), toLab(p.b[0], p.b[1], p.b[2], m.m))
		if sim > normal/2 {
			t.Errorf("%s: %v vs %v ΔE %.1f simulated, %.1f normal: the simulation hardly confuses them", m.name, p.a, p.b, sim, normal)
		}
	}
}

// minSeriesDeltaE is the smallest CIELAB ΔE76 allowed between any two of
// the first six series colours, under normal vision and each simulated
// dichromacy. About 2.3 is a just-noticeable difference; 10 keeps colours
// apart as categories on thin lines and small markers (common practice; the
// threshold is our choice).
const minSeriesDeltaE = 10

func TestPaletteUnderColourVisionDeficiency(t *testing.T) {
	sims := append([]struct {
		name string
		m    [3][3]float64
	}{{"normal vision", identity}}, cvdMatrices...)
	for _, sim := range sims {
		for i := range 6 {
			for j := i + 1; j < 6; j++ {
				a, b := styleOf(i).colour, styleOf(j).colour
				d := deltaE76(toLab(a.R, a.G, a.B, sim.m), toLab(b.R, b.G, b.B, sim.m))
				if d < minSeriesDeltaE {
					t.Errorf("%s: series %d (%s) and %d (%s) are ΔE76 %.1f apart, want ≥ %d",
						sim.name, i, styleOf(i).colourName, j, styleOf(j).colourName, d, minSeriesDeltaE)
				}
			}
		}
	}
}

// similarGrey is the CIELAB L* difference below which two series cannot be
// told apart by grey level alone in a greyscale print (our choice: a fifth
// of the L* range).
const similarGrey = 20

func TestPaletteInGreyscale(t *testing.T) {
	const n = 8
	similar := 0
	for i := range n {
		for j := i + 1; j < n; j++ {
			a, b := styleOf(i), styleOf(j)
			la := toLab(a.colour.R, a.colour.G, a.colour.B, identity)[0]
			lb := toLab(b.colour.R, b.colour.G, b.colour.B, identity)[0]
			if math.Abs(la-lb) >= similarGrey {
				continue
			}
			similar++
			if a.markerName == b.markerName && a.dashName == b.dashName {
				t.Errorf("series %d and %d have grey levels L* %.0f and %.0f yet share marker %s and dash %s", i, j, la, lb, a.markerName, a.dashName)
			}
		}
	}
	// The Okabe & Ito mid tones (L* 46–71) are alike in grey, so the check
	// above must have had pairs to look at.
	if similar == 0 {
		t.Error("no series pair has a similar grey level; the greyscale check did nothing")
	}
	// Stronger: the first eight series each have their own marker and dash.
	markers, dashes := map[string]bool{}, map[string]bool{}
	for i := range n {
		s := styleOf(i)
		markers[s.markerName] = true
		dashes[s.dashName] = true
	}
	if len(markers) != n || len(dashes) != n {
		t.Errorf("first %d series use %d markers and %d dashes; want all distinct", n, len(markers), len(dashes))
	}
	// Beyond eight, combinations still differ.
	seen := map[[3]string]int{}
	for i := range 64 {
		s := styleOf(i)
		key := [3]string{s.colourName, s.markerName, s.dashName}
		if j, ok := seen[key]; ok {
			t.Fatalf("series %d and %d look the same: %v", j, i, key)
		}
		seen[key] = i
	}
}
