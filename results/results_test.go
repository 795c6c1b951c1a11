package results

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestFormatMeasure(t *testing.T) {
	cases := []struct {
		v, e   float64
		signed bool
		wantV  string
		wantE  string
	}{
		{0.142022, 0.002966, true, "+0.142", "0.003"},
		{0.142022, 0.0012, false, "0.1420", "0.0012"},
		{17.198146, 0.0205, true, "+17.20", "0.02"},
		{17.198146, 0.0156, true, "+17.198", "0.016"},
		{-0.5636290, 0.000572, true, "-0.5636", "0.0006"},
		{47.916, 4.09, false, "48", "4"},
		{1234.5, 160, false, "1230", "160"},
		{0.00001, 0.0018, true, "0.0000", "0.0018"},
		{-0.00001, 0.0018, true, "0.0000", "0.0018"},
		{1, 0, false, "1", "0"},
		{math.NaN(), 1, false, "—", ""},
	}
	for _, c := range cases {
		v, e := FormatMeasure(Measure{Value: Num(c.v), MCSE: Num(c.e)}, c.signed)
		if v != c.wantV || e != c.wantE {
			t.Errorf("FormatMeasure(%v ± %v) = %q ± %q, want %q ± %q", c.v, c.e, v, e, c.wantV, c.wantE)
		}
	}
}

func TestWilson(t *testing.T) {
	// Newcombe (1998), "Two-sided confidence intervals for the single
	// proportion: comparison of seven methods", Statistics in Medicine
	// 17:857-872, Table II, Wilson score method (values from memory):
	// 81/263 → 0.2553–0.3662, 15/148 → 0.0624–0.1605, 0/20 → 0–0.1611.
	cases := []struct {
		k, n      int64
		low, high float64
	}{
		{81, 263, 0.2553, 0.3662},
		{15, 148, 0.0624, 0.1605},
		{0, 20, 0, 0.1611},
	}
	for _, c := range cases {
		r := Wilson(c.k, c.n)
		if math.Abs(float64(r.Low)-c.low) > 5e-5 || math.Abs(float64(r.High)-c.high) > 5e-5 {
			t.Errorf("Wilson(%d/%d) = [%.4f, %.4f], published [%.4f, %.4f]", c.k, c.n, float64(r.Low), float64(r.High), c.low, c.high)
		}
	}
	if r := Wilson(0, 0); !math.IsNaN(float64(r.Value)) {
		t.Error("Wilson(0/0) should be undefined")
	}
}

func TestProportion(t *testing.T) {
	// Inside (0, 1): the binomial MCSE √(p(1−p)/n) (Morris, White &
	// Crowther (2019), Stat. Med. 38:2074-2102, Table 6).
	if m := Proportion(30, 200); math.Abs(float64(m.MCSE)-math.Sqrt(0.15*0.85/200)) > 1e-15 || m.Value != 0.15 {
		t.Errorf("30/200: %+v", m)
	}
	// At the edges: half the Wilson interval over 1.96, never 0. From
	// Newcombe (1998) above, 0/20 → [0, 0.1611], so MCSE ≈ 0.1611/3.92.
	for _, k := range []int64{0, 20} {
		m := Proportion(k, 20)
		if math.Abs(float64(m.MCSE)-0.1611/3.92) > 5e-5 {
			t.Errorf("%d/20: MCSE %v, want %.5f", k, m.MCSE, 0.1611/3.92)
		}
	}
	if m := Proportion(0, 0); !math.IsNaN(float64(m.Value)) || !math.IsNaN(float64(m.MCSE)) {
		t.Errorf("0/0: %+v", m)
	}
}

// TestMomentsFormulas checks the MCSE formulas against their definitions
// computed directly from a sample (Morris, White & Crowther (2019), Stat.
// Med. 38:2074-2102, Table 6).
func TestMomentsFormulas(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	n := 500
	e := make([]float64, n)
	ref := make([]float64, n)
	var sum, sumSq float64
	for i := range e {
		z := rng.NormFloat64()
		ref[i] = z
		e[i] = 0.3 + 0.9*z + 0.2*rng.NormFloat64()
		sum += e[i]
		sumSq += e[i] * e[i]
	}
	mean := sum / float64(n)
	var ss, ssmse float64
	mse := sumSq / float64(n)
	for _, v := range e {
		ss += (v - mean) * (v - mean)
		ssmse += (v*v - mse) * (v*v - mse)
	}
	var ss4 float64
	for _, v := range e {
		ss4 += math.Pow(v-mean, 4)
	}
	m := Moments{N: int64(n), Mean: mean, SS: ss, SS4: ss4, MSE: mse, SSMSE: ssmse}
	nf := float64(n)
	if got, want := float64(m.Bias().MCSE), math.Sqrt(ss/(nf-1))/math.Sqrt(nf); math.Abs(got-want) > 1e-12 {
		t.Errorf("bias MCSE %v, want EmpSE/√N = %v", got, want)
	}
	emp := math.Sqrt(ss / (nf - 1))
	if got := float64(m.EmpSE().Value); math.Abs(got-emp) > 1e-12 {
		t.Errorf("EmpSE %v, want %v", got, emp)
	}
	// The delta-method MCSE of the SE, √Var(s²)/(2s) with Var(s²) =
	// (m₄ − (N−3)/(N−1) s⁴)/N, computed here from the sample directly.
	s2 := ss / (nf - 1)
	if got, want := float64(m.EmpSE().MCSE), math.Sqrt((ss4/nf-(nf-3)/(nf-1)*s2*s2)/nf)/(2*emp); math.Abs(got-want) > 1e-12*want {
		t.Errorf("EmpSE MCSE %v, want %v", got, want)
	}
	// With the normal's fourth moment m₄ = 3s⁴ it is the normal-theory
	// s/√(2(N−1)) of Morris, White & Crowther (2019), Table 6.
	normal := m
	normal.SS4 = 3 * s2 * s2 * nf
	if got, want := float64(normal.EmpSE().MCSE), emp/math.Sqrt(2*(nf-1)); math.Abs(got-want) > 1e-12*want {
		t.Errorf("EmpSE MCSE at m₄ = 3s⁴: %v, want %v", got, want)
	}
	// Relative efficiency of e against ref.
	var refMean float64
	for _, v := range ref {
		refMean += v
	}
	refMean /= nf
	var ssb, sab, ssb4, sab22 float64
	for i := range e {
		da, db := e[i]-mean, ref[i]-refMean
		ssb += db * db
		sab += da * db
		ssb4 += db * db * db * db
		sab22 += da * da * db * db
	}
	pr := Paired{N: int64(n), SSA: ss, SSB: ssb, SAB: sab, SSA4: ss4, SSB4: ssb4, SAB22: sab22}
	re := pr.RelativeEfficiency()
	if got, want := float64(re.Value), ssb/ss; math.Abs(got-want) > 1e-12 {
		t.Errorf("relative efficiency %v, want %v", got, want)
	}
	// The paired delta method on log RE, computed here term by term.
	sa2, sb2, sab1 := s2, ssb/(nf-1), sab/(nf-1)
	va := (ss4/nf - (nf-3)/(nf-1)*sa2*sa2) / nf
	vb := (ssb4/nf - (nf-3)/(nf-1)*sb2*sb2) / nf
	cv := (sab22/nf-sa2*sb2)/nf + 2*sab1*sab1/(nf*(nf-1))
	want := (ssb / ss) * math.Sqrt(va/(sa2*sa2)+vb/(sb2*sb2)-2*cv/(sa2*sb2))
	if got := float64(re.MCSE); math.Abs(got-want) > 1e-12*want {
		t.Errorf("relative efficiency MCSE %v, want %v", got, want)
	}
	// With bivariate-normal fourth moments (m₄ = 3s⁴, m₂₂ = s_A²s_B² +
	// 2s_AB²) it is 2·RE·√((1−ρ²)/(N−1)), Morris, White & Crowther
	// (2019), Table 6.
	pn := pr
	pn.SSA4, pn.SSB4, pn.SAB22 = 3*sa2*sa2*nf, 3*sb2*sb2*nf, (sa2*sb2+2*sab1*sab1)*nf
	rho := sab / math.Sqrt(ss*ssb)
	if got, want := float64(pn.RelativeEfficiency().MCSE), 2*(ssb/ss)*math.Sqrt((1-rho*rho)/(nf-1)); math.Abs(got-want) > 1e-9*want {
		t.Errorf("relative efficiency MCSE at normal moments %v, want %v", got, want)
	}
}

// TestHeavyTails: the tail ratio flags iid Cauchy samples (no variance)
// and not normal or t5 samples (finite variance), with fixed seeds, at the
// sample sizes of typical runs. Its rates are stated on tailThreshold.
func TestHeavyTails(t *testing.T) {
	for _, tc := range []struct {
		name  string
		draw  func(*rand.Rand) float64
		heavy bool
	}{
		{"normal", func(r *rand.Rand) float64 { return r.NormFloat64() }, false},
		{"t5", func(r *rand.Rand) float64 {
			return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: 5, Src: r}.Rand()
		}, false},
		{"cauchy", func(r *rand.Rand) float64 {
			return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: 1, Src: r}.Rand()
		}, true},
	} {
		for _, n := range []int{500, 1000, 5000} {
			rng := rand.New(rand.NewPCG(uint64(n), 17))
			x := make([]float64, n)
			var mean float64
			for i := range x {
				x[i] = tc.draw(rng)
				mean += x[i]
			}
			mean /= float64(n)
			var ss, ss4 float64
			for _, v := range x {
				d := (v - mean) * (v - mean)
				ss += d
				ss4 += d * d
			}
			m := Moments{N: int64(n), SS: ss, SS4: ss4}
			if got := m.HeavyTailed(); got != tc.heavy {
				t.Errorf("%s, n = %d: heavy %v (tail ratio %.4g, threshold %.4g), want %v", tc.name, n, got, TailRatio(ss, ss4), 2/math.Sqrt(float64(n)), tc.heavy)
			}
		}
	}
}

func TestNumJSON(t *testing.T) {
	r := &Results{Schema: SchemaVersion, Cells: []Cell{{Estimators: []Estimator{{Coefficients: []Coefficient{{
		Bias: Measure{Value: Num(math.NaN()), MCSE: Num(math.Inf(1))},
	}}}}}}}
	var b bytes.Buffer
	if err := WriteJSON(&b, r); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), `"value": null`) {
		t.Errorf("NaN not written as null")
	}
	back, err := ReadJSON(&b)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(float64(back.Cells[0].Estimators[0].Coefficients[0].Bias.Value)) {
		t.Error("null not read back as NaN")
	}
	if _, err := ReadJSON(strings.NewReader(`{"schema": 99}`)); err == nil {
		t.Error("other schema version accepted")
	}
}

func TestSafeName(t *testing.T) {
	for _, bad := range []string{"", "../x", "a/b", `a\b`, ".hidden", "..", "c:x"} {
		if _, err := SafeName(bad); err == nil {
			t.Errorf("SafeName(%q) accepted", bad)
		}
	}
	if _, err := SafeName("flow-meter.v2"); err != nil {
		t.Error(err)
	}
}
