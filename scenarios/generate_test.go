package scenarios

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// drawMany draws reps datasets of a one-cell scenario and returns them.
func drawMany(t testing.TB, src string, reps int) (*Generator, []*mat.Dense, [][]float64) {
	t.Helper()
	st, err := Parse("gen.yaml", []byte(src), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	g, err := NewGenerator(st.Cells[0].Scenario)
	if err != nil {
		t.Fatal(err)
	}
	n, p := g.Dims()
	sc := g.NewScratch()
	pcg := rand.NewPCG(1, 2)
	var xs []*mat.Dense
	var ys [][]float64
	for r := 0; r < reps; r++ {
		x := mat.NewDense(n, p, nil)
		y := make([]float64, n)
		g.Draw(pcg, x, y, sc)
		xs = append(xs, x)
		ys = append(ys, y)
	}
	return g, xs, ys
}

// within checks that a sample mean is within 4 standard errors of want.
func within(t *testing.T, what string, sample []float64, want, sd float64) {
	t.Helper()
	mean := stat.Mean(sample, nil)
	se := sd / math.Sqrt(float64(len(sample)))
	if math.Abs(mean-want) > 4*se {
		t.Errorf("%s: mean %.5g, want %.5g ± 4×%.3g", what, mean, want, se)
	}
}

func TestColumnDistributions(t *testing.T) {
	src := `
model:
  n: 200
  intercept: none
  columns:
    - {name: a, dist: normal, mean: 3, sd: 2}
    - {name: b, dist: uniform, min: -1, max: 5}
    - {name: c, dist: exponential, rate: 0.5}
    - {name: d, dist: laplace, mean: 1, scale: 2}
    - {name: e, dist: levels, levels: [5, 10, 20]}
    - {name: f, dist: grid, min: 0, max: 1}
noise: {dist: normal}
estimators: [{method: ls}]
`
	_, xs, _ := drawMany(t, src, 50)
	cols := make([][]float64, 6)
	for _, x := range xs {
		for j := 0; j < 6; j++ {
			cols[j] = append(cols[j], mat.Col(nil, j, x)...)
		}
	}
	// Moments of the distributions (textbook formulas, common practice).
	within(t, "normal(3,2)", cols[0], 3, 2)
	within(t, "uniform(-1,5)", cols[1], 2, 6/math.Sqrt(12))
	within(t, "exponential(0.5)", cols[2], 2, 2)
	within(t, "laplace(1,2)", cols[3], 1, 2*math.Sqrt2)
	x := xs[0]
	if x.At(0, 4) != 5 || x.At(1, 4) != 10 || x.At(2, 4) != 20 || x.At(3, 4) != 5 {
		t.Errorf("levels column: %v", mat.Col(nil, 4, x)[:4])
	}
	if x.At(0, 5) != 0 || x.At(199, 5) != 1 {
		t.Errorf("grid column ends: %v, %v", x.At(0, 5), x.At(199, 5))
	}
}

func TestNoiseModels(t *testing.T) {
	// Moments (common practice): normal E[e⁴] = 3σ⁴; Laplace with scale b
	// has σ² = 2b², E[e⁴] = 24b⁴; Student t with ν > 4 and scale s has
	// σ² = s²ν/(ν−2), E[e⁴] = 3s⁴ν²/((ν−2)(ν−4)); the mixture (1−ε)N(0,1) +
	// εN(0,k²) has σ² = 1−ε+εk², E[e⁴] = 3(1−ε+εk⁴).
	cases := []struct {
		noise  string
		sd     float64 // true standard deviation of the noise
		fourth float64 // true E[e^4], for the standard error of the variance
	}{
		{"{dist: normal, scale: 2}", 2, 3 * 16},
		{"{dist: laplace, scale: 1}", math.Sqrt2, 24},
		{"{dist: student-t, df: 6, scale: 1}", math.Sqrt(1.5), 3 * 36 / (4 * 2)},
		{"{dist: normal-mixture, scale: 1, mix-fraction: 0.1, mix-factor: 3}", math.Sqrt(0.9 + 0.1*9), 3 * (0.9 + 0.1*81)},
		{"{dist: skewed, scale: 1.5, shape: 4}", 1.5, 0}, // checked below
	}
	for _, c := range cases {
		src := "model: {n: 500, intercept: 0, columns: [{name: x, slope: 0}]}\nnoise: " + c.noise + "\nestimators: [{method: ls}]\n"
		_, _, ys := drawMany(t, src, 40)
		var e []float64
		for _, y := range ys {
			e = append(e, y...)
		}
		within(t, c.noise+" mean", e, 0, c.sd)
		if c.fourth > 0 {
			sq := make([]float64, len(e))
			for i, v := range e {
				sq[i] = v * v
			}
			// Var(e²) = E[e⁴] − σ⁴.
			within(t, c.noise+" variance", sq, c.sd*c.sd, math.Sqrt(c.fourth-math.Pow(c.sd, 4)))
		} else {
			// The SE of a sample SD is σ√((κ−1)/(4n)) for kurtosis κ (delta
			// method, common practice); a gamma of shape 4 has κ = 3 + 6/4 =
			// 4.5, so with n = 20000 the SE is 1.5·√(3.5/80000) ≈ 0.0099 and
			// the tolerance is 4 SE ≈ 0.040.
			n := float64(len(e))
			tol := 4 * c.sd * math.Sqrt((4.5-1)/(4*n))
			if sd := stat.StdDev(e, nil); math.Abs(sd-c.sd) > tol {
				t.Errorf("%s: sd %v, want %v ± %.3f (4 SE)", c.noise, sd, c.sd, tol)
			}
			// Gamma(4) has skewness 2/√4 = 1 (common practice). The SE of
			// the sample skewness g = m3/m2^(3/2) is the delta-method one,
			// √(mean(IF²)/n) with the influence function
			// IF(x) = [(x−μ)³ − μ3 − 3μ2(x−μ)]/μ2^(3/2) − (3/2)μ3[(x−μ)² − μ2]/μ2^(5/2),
			// moments estimated from the draws (about 0.03 here).
			if sk, se := skewWithSE(e); math.Abs(sk-1) > 4*se {
				t.Errorf("%s: skewness %v, want 1 ± %.3f (4 SE)", c.noise, sk, 4*se)
			}
		}
	}
}

func TestCorrelatedColumns(t *testing.T) {
	src := `
model:
  n: 400
  intercept: 0
  correlation: 0.6
  columns:
    - {name: a, dist: normal}
    - {name: b, dist: normal, mean: 5, sd: 3}
noise: {dist: normal}
estimators: [{method: ls}]
`
	_, xs, _ := drawMany(t, src, 25)
	var a, b []float64
	for _, x := range xs {
		a = append(a, mat.Col(nil, 1, x)...)
		b = append(b, mat.Col(nil, 2, x)...)
	}
	r := stat.Correlation(a, b, nil)
	// SE of a sample correlation ≈ (1 − ρ²)/√N for normal data (common
	// practice).
	se := (1 - 0.36) / math.Sqrt(float64(len(a)))
	if math.Abs(r-0.6) > 4*se {
		t.Errorf("correlation %v, want 0.6 ± %v", r, 4*se)
	}
	within(t, "b mean", b, 5, 3)
}

func TestContaminationRows(t *testing.T) {
	src := `
model: {n: 50, intercept: 1, columns: [{name: x, slope: 2, dist: uniform}]}
noise: {dist: normal, scale: 0.01}
contamination:
  - {label: up, kind: vertical, fraction: 0.1, shift: 100}
  - {label: far, kind: bad-leverage, fraction: 0.06, at: 1000, response: -500}
  - {label: good, kind: good-leverage, fraction: 0.04, at: 300}
estimators: [{method: ls}]
`
	g, xs, ys := drawMany(t, src, 20)
	if g.Contaminated() != 5+3+2 {
		t.Fatalf("%d contaminated rows, want 10", g.Contaminated())
	}
	for r, x := range xs {
		var up, far, good int
		for i, y := range ys[r] {
			xi := x.At(i, 1)
			switch {
			case xi == 1000 && y == -500:
				far++
			case xi == 300 && math.Abs(y-(1+2*300)) < 0.1:
				good++
			case math.Abs(y-(1+2*xi)-100) < 0.1:
				up++
			}
		}
		if up != 5 || far != 3 || good != 2 {
			t.Fatalf("replicate %d: %d vertical, %d bad, %d good; want 5, 3, 2", r, up, far, good)
		}
	}
}

func TestDrawDeterministicAndAllocationFree(t *testing.T) {
	st, err := LoadLibrary("flow-meter")
	if err != nil {
		t.Fatal(err)
	}
	g, err := NewGenerator(st.Cells[3].Scenario)
	if err != nil {
		t.Fatal(err)
	}
	n, p := g.Dims()
	sc := g.NewScratch()
	x1, x2 := mat.NewDense(n, p, nil), mat.NewDense(n, p, nil)
	y1, y2 := make([]float64, n), make([]float64, n)
	pcg := rand.NewPCG(7, 8)
	g.Draw(pcg, x1, y1, sc)
	g.Draw(pcg, x2, y2, sc) // a different dataset in between
	pcg.Seed(7, 8)
	g.Draw(pcg, x2, y2, sc)
	if !mat.Equal(x1, x2) {
		t.Fatal("same seed gave a different design")
	}
	for i := range y1 {
		if y1[i] != y2[i] {
			t.Fatal("same seed gave a different response")
		}
	}
	allocs := testing.AllocsPerRun(100, func() { g.Draw(pcg, x1, y1, sc) })
	if allocs != 0 {
		t.Errorf("Draw allocates %v times per dataset", allocs)
	}
}

// skewWithSE returns the sample skewness m3/m2^(3/2) of x and its
// delta-method standard error (see TestNoiseModels).
func skewWithSE(x []float64) (g, se float64) {
	n := float64(len(x))
	mu := stat.Mean(x, nil)
	var m2, m3 float64
	for _, v := range x {
		d := v - mu
		m2 += d * d
		m3 += d * d * d
	}
	m2, m3 = m2/n, m3/n
	g = m3 / math.Pow(m2, 1.5)
	var sumIF2 float64
	for _, v := range x {
		d := v - mu
		f := (d*d*d-m3-3*m2*d)/math.Pow(m2, 1.5) - 1.5*m3*(d*d-m2)/math.Pow(m2, 2.5)
		sumIF2 += f * f
	}
	return g, math.Sqrt(sumIF2/n) / math.Sqrt(n)
}

// TestDrawNormalMatchesGeneral: the path for independent normal columns
// and normal noise (drawNormal) must give bit for bit the datasets of the
// general path, which draws each value through its column or noise model.
func TestDrawNormalMatchesGeneral(t *testing.T) {
	for _, tc := range []struct{ name, src string }{
		{"intercept", `
seed: 1
model:
  n: 37
  intercept: 2
  columns:
    - {name: x1, slope: 1}
    - {name: x2, slope: -0.5, dist: normal, mean: 3, sd: 0.25}
noise: {dist: normal, scale: 1.5}
contamination:
  - {kind: vertical, fraction: 0.1, shift: 10}
estimators: [{label: ls, method: ls}]
`},
		{"no-intercept", `
seed: 1
model:
  n: 20
  intercept: none
  columns:
    - {name: x1, slope: 1, dist: normal, mean: -1, sd: 2}
noise: {dist: normal}
estimators: [{label: ls, method: ls}]
`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			st, err := Parse("gen.yaml", []byte(tc.src), Limits{})
			if err != nil {
				t.Fatal(err)
			}
			fast, err := NewGenerator(st.Cells[0].Scenario)
			if err != nil {
				t.Fatal(err)
			}
			if fast.normal == nil {
				t.Fatal("the scenario does not take the normal path")
			}
			general := *fast
			general.normal = nil
			n, p := fast.Dims()
			x1, x2 := mat.NewDense(n, p, nil), mat.NewDense(n, p, nil)
			y1, y2 := make([]float64, n), make([]float64, n)
			s1, s2 := fast.NewScratch(), general.NewScratch()
			pcg1, pcg2 := rand.NewPCG(0, 0), rand.NewPCG(0, 0)
			for r := uint64(0); r < 200; r++ {
				pcg1.Seed(r, 3)
				pcg2.Seed(r, 3)
				fast.Draw(pcg1, x1, y1, s1)
				general.Draw(pcg2, x2, y2, s2)
				for i, v := range x1.RawMatrix().Data {
					if math.Float64bits(v) != math.Float64bits(x2.RawMatrix().Data[i]) {
						t.Fatalf("dataset %d: design value %d is %v, general path %v", r, i, v, x2.RawMatrix().Data[i])
					}
				}
				for i, v := range y1 {
					if math.Float64bits(v) != math.Float64bits(y2[i]) {
						t.Fatalf("dataset %d: response %d is %v, general path %v", r, i, v, y2[i])
					}
				}
				if pcg1.Uint64() != pcg2.Uint64() {
					t.Fatalf("dataset %d: the paths drew different numbers of values", r)
				}
			}
		})
	}
}
