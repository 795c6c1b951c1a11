package psi

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/rhomark/rhomark/internal/root"
)

// MADConsistency is Φ⁻¹(3/4), the median of |Z| for a standard normal Z.
// Dividing the median absolute residual by it gives a scale estimate that is
// consistent for sigma at the normal model. The digits are those of the
// exact value (a test checks the constant against the normal quantile
// function); it is not the rounded 0.6745 or 1/1.4826.
const MADConsistency = 0.67448975019608174320

// ErrorModel is a symmetric error distribution under which asymptotic
// properties of a psi are computed. The zero value is the standard normal.
type ErrorModel struct {
	// Kind is "normal", "student-t", "laplace" or "contaminated-normal";
	// "" means normal.
	Kind string
	// DF is the degrees of freedom of student-t.
	DF float64
	// Eps and Tau describe the contaminated normal
	// (1−Eps) N(0, 1) + Eps N(0, Tau²).
	Eps, Tau float64
}

// Normal, StudentT, Laplace and ContaminatedNormal build error models.
func Normal() ErrorModel { return ErrorModel{Kind: "normal"} }

// StudentT is Student's t with df degrees of freedom and scale 1.
func StudentT(df float64) ErrorModel { return ErrorModel{Kind: "student-t", DF: df} }

// Laplace is the Laplace (double exponential) distribution with scale 1.
func Laplace() ErrorModel { return ErrorModel{Kind: "laplace"} }

// ContaminatedNormal is (1−eps) N(0, 1) + eps N(0, tau²).
func ContaminatedNormal(eps, tau float64) ErrorModel {
	return ErrorModel{Kind: "contaminated-normal", Eps: eps, Tau: tau}
}

// String names the model, for example "student-t(3)".
func (m ErrorModel) String() string {
	switch m.kind() {
	case "student-t":
		return fmt.Sprintf("student-t(%g)", m.DF)
	case "contaminated-normal":
		return fmt.Sprintf("contaminated-normal(%g, %g)", m.Eps, m.Tau)
	}
	return m.kind()
}

func (m ErrorModel) kind() string {
	if m.Kind == "" {
		return "normal"
	}
	return m.Kind
}

// Validate reports an error for an unknown kind or bad parameters.
func (m ErrorModel) Validate() error {
	switch m.kind() {
	case "normal", "laplace":
		return nil
	case "student-t":
		if !(m.DF > 0) || math.IsInf(m.DF, 0) {
			return fmt.Errorf("student-t needs degrees of freedom > 0, got %v", m.DF)
		}
		return nil
	case "contaminated-normal":
		if !(m.Eps > 0 && m.Eps < 1) || !(m.Tau > 0) || math.IsInf(m.Tau, 0) {
			return fmt.Errorf("contaminated-normal needs 0 < eps < 1 and tau > 0, got eps %v, tau %v", m.Eps, m.Tau)
		}
		return nil
	}
	return fmt.Errorf("unknown error model %q; want normal, student-t, laplace or contaminated-normal", m.Kind)
}

// density returns f(x).
func (m ErrorModel) density(x float64) float64 {
	switch m.kind() {
	case "student-t":
		return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: m.DF}.Prob(x)
	case "laplace":
		return 0.5 * math.Exp(-math.Abs(x))
	case "contaminated-normal":
		return (1-m.Eps)*distuv.UnitNormal.Prob(x) + m.Eps*distuv.Normal{Mu: 0, Sigma: m.Tau}.Prob(x)
	}
	return distuv.UnitNormal.Prob(x)
}

// score returns −f'(x)/f(x), the location score whose variance is the
// Fisher information.
func (m ErrorModel) score(x float64) float64 {
	switch m.kind() {
	case "student-t":
		return (m.DF + 1) * x / (m.DF + x*x)
	case "laplace":
		if x > 0 {
			return 1
		} else if x < 0 {
			return -1
		}
		return 0
	case "contaminated-normal":
		a := (1 - m.Eps) * distuv.UnitNormal.Prob(x)
		b := m.Eps * distuv.Normal{Mu: 0, Sigma: m.Tau}.Prob(x)
		if a+b == 0 {
			return x / (m.Tau * m.Tau) // the wide component dominates far out
		}
		return (a*x + b*x/(m.Tau*m.Tau)) / (a + b)
	}
	return x
}

// variance returns Var(X), +Inf where it does not exist.
func (m ErrorModel) variance() float64 {
	switch m.kind() {
	case "student-t":
		if m.DF <= 2 {
			return math.Inf(1)
		}
		return m.DF / (m.DF - 2)
	case "laplace":
		return 2
	case "contaminated-normal":
		return 1 - m.Eps + m.Eps*m.Tau*m.Tau
	}
	return 1
}

// fisher returns the Fisher information for location, and whether it has a
// closed form (otherwise it is computed by quadrature).
func (m ErrorModel) fisher() (float64, bool) {
	switch m.kind() {
	case "student-t":
		// Common practice: I = (ν+1)/(ν+3) for Student's t with scale 1.
		return (m.DF + 1) / (m.DF + 3), true
	case "laplace":
		return 1, true
	case "contaminated-normal":
		return 2 * integrateHalfLine(func(x float64) float64 {
			s := m.score(x)
			return s * s * m.density(x)
		}, nil), false
	}
	return 1, true
}

// madLimit returns the limit of the normalised MAD of a sample from the
// model: median|X| / Φ⁻¹(3/4). An M-estimator with MAD scale standardises
// residuals by it.
func (m ErrorModel) madLimit() float64 {
	var med float64
	switch m.kind() {
	case "student-t":
		med = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: m.DF}.Quantile(0.75)
	case "laplace":
		med = math.Ln2
	case "contaminated-normal":
		// Solve P(|X| ≤ t) = 1/2; the CDF is monotone, from 0 at t = 0.
		g := func(t float64) float64 {
			return (1-m.Eps)*(2*distuv.UnitNormal.CDF(t)-1) + m.Eps*(2*distuv.UnitNormal.CDF(t/m.Tau)-1) - 0.5
		}
		hi := 1.0
		for g(hi) < 0 {
			hi *= 2
		}
		var err error
		if med, err = root.Find(g, 0, hi, root.Tolerance{Rel: 1e-15}); err != nil {
			// Only a model with invalid parameters gets here; NaN makes
			// the theory under it refuse rather than report a number.
			med = math.NaN()
		}
	default:
		med = MADConsistency
	}
	return med / MADConsistency
}
