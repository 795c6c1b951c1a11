package estimators

import (
	"math"
	"runtime"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"github.com/rhomark/rhomark/psi"
)

// iterate runs IRLS or Newton from the coefficients in res.Coefficients,
// whose residuals are in ws.r, and fills res.
func (ws *Workspace) iterate(e Estimator, x blas64.General, y []float64, res *Result) {
	s := e.Settings.withDefaults()
	beta := res.Coefficients
	ws.columnRMS(x)
	startNorm := norm2(beta)
	change := math.Inf(1) // relative change of the last step; none yet
	newton := e.Method == MethodNewton
	// Newton hands over to IRLS for the rest of the fit when it stops
	// making progress: newtonPatience iterations in a row without a new
	// smallest equation norm, or needing the IRLS fallback.
	handedOver := false
	bestEq, stalls, fallbacks := math.Inf(1), 0, 0
	// The MAD of the last iterate, near which the next one lies: the
	// median of |r| is looked for within a relative distance madDelta of
	// it (madBracket, then madBetweenStats; madFirst at the first
	// iterate). After a step, residualsBracket does madBetweenStats's pass
	// with the residuals (sorted set), leaving the counts madFinishStats
	// takes.
	// The bracket is narrowed with the middle order statistics of |r| at
	// the last iterate (midLo, midHi) and how far a step of move can shift
	// a residual (madTighten).
	madGuess, madDelta := 0.0, 0.0
	sorted, below, mid := false, 0, 0
	midLo, midHi, move := math.NaN(), math.NaN(), math.Inf(1)

	for {
		if newton && (stalls >= newtonPatience || fallbacks >= newtonPatience) {
			newton, handedOver = false, true
		}
		// The scale, psi values, objective and equation norm at β.
		sigma := e.Scale.Value
		if e.Scale.Rule == ScaleMAD {
			switch {
			case sorted:
				sigma, midLo, midHi = madFinishStats(ws.r, ws.buf, below, mid)
			case madGuess == 0 && madDelta == 0:
				sigma, midLo, midHi = madFirst(ws.r, ws.buf)
			default:
				lo, hi, ok := madBracket(ws.n, madGuess, madDelta)
				if ok {
					lo, hi = madTighten(lo, hi, midLo, midHi, move)
					sigma, midLo, midHi = madBetweenStats(ws.r, ws.buf, lo, hi)
				} else {
					sigma, midLo, midHi = madFirst(ws.r, ws.buf)
				}
			}
			sorted = false
			// About ten values of |r| fall within 10/n of the median, plus
			// twice the last change of the MAD for its drift.
			madDelta = math.Min(10/float64(ws.n)+2*math.Abs(sigma-res.Scale)/sigma, 0.5)
			madGuess = sigma * MADConsistency
		}
		res.Scale = sigma
		if sigma == 0 {
			res.Status = ZeroScale
			if allZero(ws.r) {
				res.Status = ExactFit
			}
			return
		}
		if math.IsNaN(sigma) || math.IsInf(sigma, 0) {
			res.Status = NonFinite
			return
		}
		wsum := ws.evaluateSums(e.Psi, sigma, newton, x)
		res.EquationNorm = ws.equationFromH()
		if math.IsNaN(res.EquationNorm) || math.IsNaN(wsum) {
			res.Status = NonFinite
			return
		}
		if res.EquationNorm < bestEq {
			bestEq, stalls = res.EquationNorm, 0
		} else {
			stalls++
		}
		if st, done := stopped(s, change, res.EquationNorm); done {
			res.Status = st
			res.Objective = ws.objectiveAt(e.Psi, sigma)
			return
		}
		if res.Iterations >= s.MaxIterations {
			res.Status = IterationLimit
			res.Objective = ws.objectiveAt(e.Psi, sigma)
			return
		}
		// The objective is needed for Newton's line search and for tracing.
		obj := math.NaN()
		if newton || e.Trace != nil {
			obj = ws.objectiveAt(e.Psi, sigma)
			res.Objective = obj
		}
		if !newton && wsum == 0 {
			res.Status = ZeroWeights
			return
		}

		// The step.
		var it Iteration
		status, ok := ws.step(e.Psi, x, sigma, newton, wsum, &it)
		if e.Trace != nil {
			it.MinWeight, it.MaxWeight = extremes(ws.c)
		}
		if !ok {
			res.Status = status
			return
		}
		if newton && it.Fallback {
			fallbacks++
		} else {
			fallbacks = 0
		}
		if handedOver {
			it.Fallback = true
		}
		if it.Fallback {
			res.Fallbacks++
		}
		if it.QR {
			res.QRSolves++
		}
		t := 1.0
		if newton {
			var descent bool
			t, descent = ws.lineSearch(e.Psi, x, sigma, obj, &it)
			if !descent && !it.Fallback {
				// The Newton direction failed: take an IRLS step instead.
				it.Fallback = true
				res.Fallbacks++
				wsum = ws.weights(e.Psi, sigma)
				if wsum == 0 {
					res.Status = ZeroWeights
					return
				}
				ws.normalMatrix(x)
				if st, ok := ws.weightedStep(x, sigma, &it); !ok {
					res.Status = st
					return
				}
				if it.QR {
					res.QRSolves++
				}
				t, descent = ws.lineSearch(e.Psi, x, sigma, obj, &it)
			}
			res.Halvings += it.Halvings
			if !descent {
				res.Status = NoDescent
				return
			}
		}
		for j := range beta {
			beta[j] += t * ws.delta[j]
		}
		res.Iterations++
		bn, dnorm := norm2Pair(beta, ws.delta)
		change = t * dnorm / math.Max(bn, math.SmallestNonzeroFloat64)
		if math.IsNaN(bn) || math.IsInf(bn, 0) {
			res.Status = NonFinite
			return
		}
		if startNorm > 0 && bn > divergeFactor*startNorm {
			res.Status = Diverged
			return
		}
		// No residual moves by more than its row's norm times the step.
		move = ws.rowMax * t * dnorm
		if lo, hi, ok := madBracket(ws.n, madGuess, madDelta); ok && fuseGemv(ws.p) {
			lo, hi = madTighten(lo, hi, midLo, midHi, move)
			below, mid = ws.residualsBracket(x, y, beta, lo, hi)
			sorted = true
		} else {
			ws.residuals(x, y, beta)
		}
		if e.Trace != nil {
			it.Index = res.Iterations
			it.Coefficients = beta
			it.Scale = sigma
			it.Objective = obj
			it.EquationNorm = res.EquationNorm
			it.StepLength = t
			it.Change = change
			e.Trace(it)
		}
	}
}

// stopped applies the stopping rules to the last relative change and the
// current equation norm.
func stopped(s Settings, change, eqNorm float64) (Status, bool) {
	useChange := s.Rules&RuleChange != 0
	useEq := s.Rules&RuleEquations != 0
	okChange := useChange && change <= s.ChangeTol
	okEq := useEq && eqNorm <= s.EquationTol
	if s.RequireAll {
		if (okChange || !useChange) && (okEq || !useEq) {
			if useChange && useEq {
				return ConvergedAll, true
			}
			if useEq {
				return ConvergedEquations, true
			}
			return ConvergedChange, true
		}
		return NotRun, false
	}
	switch {
	case okChange:
		return ConvergedChange, true
	case okEq:
		return ConvergedEquations, true
	}
	return NotRun, false
}

// norm2Pair returns norm2(a), norm2(b): the two sums of squares run side
// by side, and only a sum outside norm2's safe range takes norm2 itself.
func norm2Pair(a, b []float64) (float64, float64) {
	if len(a) != len(b) {
		return norm2(a), norm2(b)
	}
	b = b[:len(a)]
	var sa, sb float64
	for i, v := range a {
		sa += v * v
		sb += b[i] * b[i]
	}
	if sa > 0x1p-900 && sa < 0x1p900 && sb > 0x1p-900 && sb < 0x1p900 {
		return math.Sqrt(sa), math.Sqrt(sb)
	}
	return norm2(a), norm2(b)
}

// allZero reports whether every value of r is zero.
func allZero(r []float64) bool {
	for _, v := range r {
		if v != 0 {
			return false
		}
	}
	return true
}

// evaluate computes, at the residuals ws.r and scale sigma, ws.psi =
// psi(u) and ws.c = the IRLS weights (psi'(u) when newton), counts in
// ws.nOff the rows where ws.c differs from 1, and returns the sum of |ws.c|.
// Huber and bisquare have loops written for their concrete types (see
// fastpath.go), which save two interface calls per residual; any other Psi
// takes the general loop.
func (ws *Workspace) evaluate(fn psi.Psi, sigma float64, newton bool) float64 {
	if !newton {
		switch p := fn.(type) {
		case psi.Huber:
			return ws.evaluateHuber(p, sigma)
		case psi.Bisquare:
			return ws.evaluateBisquare(p, sigma)
		case *psi.Custom:
			return ws.evaluateCustom(p, sigma)
		}
	}
	return ws.evaluateAny(fn, sigma, newton)
}

// gemvOrder says that the fused loops (residualsBracket,
// evaluateHuberSums) sum in the order of gonum's matrix-vector kernels
// here: they follow its amd64 assembly; elsewhere the separate passes run.
const gemvOrder = runtime.GOARCH == "amd64"

// fuseGemv reports whether the fused loops serve p columns: on amd64 and
// for narrow designs, where a call of gonum's kernel costs more than its
// vector instructions save. The scalar fused loops were timed only at
// p = 5; p = 6 takes them too without having been timed, and wider
// designs keep the kernels.
func fuseGemv(p int) bool { return gemvOrder && p <= 6 }

// evaluateSums is evaluate followed by psiSums, in one pass for Huber's
// IRLS weights.
func (ws *Workspace) evaluateSums(fn psi.Psi, sigma float64, newton bool, x blas64.General) float64 {
	if h, ok := fn.(psi.Huber); ok && !newton && fuseGemv(ws.p) {
		return ws.evaluateHuberSums(h, sigma, x)
	}
	wsum := ws.evaluate(fn, sigma, newton)
	ws.psiSums(x)
	return wsum
}

// evaluateAny is evaluate for any Psi.
func (ws *Workspace) evaluateAny(psi psi.Psi, sigma float64, newton bool) (csum float64) {
	r := ws.r
	c, ps := ws.c[:len(r)], ws.psi[:len(r)]
	off := 0
	for i, ri := range r {
		u := ri / sigma
		ps[i] = psi.Psi(u)
		var ci float64
		if newton {
			ci = psi.Deriv(u)
		} else {
			ci = psi.Weight(u)
		}
		c[i] = ci
		if ci != 1 {
			ws.off[off] = i
			off++
		}
		csum += math.Abs(ci)
	}
	ws.nOff = off
	return csum
}

// objective returns Σ rho(r_i/sigma) at the residuals ws.r.
func (ws *Workspace) objective(psi psi.Psi, sigma float64) float64 {
	var f float64
	for _, r := range ws.r {
		f += psi.Rho(r / sigma)
	}
	return f
}

// weights sets ws.c to the IRLS weights at ws.r and sigma and returns their
// sum.
func (ws *Workspace) weights(psi psi.Psi, sigma float64) float64 {
	var sum float64
	off := 0
	for i, r := range ws.r {
		ci := psi.Weight(r / sigma)
		ws.c[i] = ci
		if ci != 1 {
			ws.off[off] = i
			off++
		}
		sum += ci
	}
	ws.nOff = off
	return sum
}

// equationFromH returns the equation norm max_j |Σ_i psi_i x_ij| / (n rms_j).
// It must follow psiSums, which leaves Σ_i psi_i x_ij in ws.h.
func (ws *Workspace) equationFromH() float64 {
	var worst float64
	for j, hj := range ws.h {
		if ws.rms[j] > 0 {
			if v := math.Abs(hj) / (float64(ws.n) * ws.rms[j]); v > worst || v != v {
				worst = v
			}
		}
	}
	return worst
}

// psiSums sets ws.h to Σ psi_i x_i = Xᵀψ.
func (ws *Workspace) psiSums(x blas64.General) {
	blas64.Gemv(blas.Trans, 1, x, blas64.Vector{N: ws.n, Data: ws.psi, Inc: 1}, 0, blas64.Vector{N: ws.p, Data: ws.h, Inc: 1})
}

// gram makes ws.base hold XᵀX (upper triangle), computed once per fit.
// Every user of ws.base goes through it, so XᵀX is the same bits whichever
// computation asked for it first.
func (ws *Workspace) gram(x blas64.General) {
	if ws.baseOK {
		return
	}
	p, n := ws.p, ws.n
	clear(ws.base)
	for i := 0; i+1 < n; i += 2 {
		rankTwo(ws.base, x, i, i+1, p, 1, 1)
	}
	if n%2 == 1 {
		rankTwo(ws.base, x, n-1, n-1, p, 1, 0)
	}
	ws.baseOK = true
}

// normalMatrix sets ws.m (upper triangle) to Σ c_i x_i x_iᵀ. When fewer
// than half the rows have c_i ≠ 1 (Huber's psi leaves most weights at
// exactly 1), it starts from XᵀX, computed once per fit, and adds
// (c_i − 1) x_i x_iᵀ for the rows listed in ws.off only.
func (ws *Workspace) normalMatrix(x blas64.General) {
	p, n := ws.p, ws.n
	if 2*ws.nOff < n {
		ws.gram(x)
		copy(ws.m, ws.base)
		off := ws.off[:ws.nOff]
		for t := 0; t+1 < len(off); t += 2 {
			i, j := off[t], off[t+1]
			rankTwo(ws.m, x, i, j, p, ws.c[i]-1, ws.c[j]-1)
		}
		if len(off)%2 == 1 {
			i := off[len(off)-1]
			rankTwo(ws.m, x, i, i, p, ws.c[i]-1, 0)
		}
		return
	}
	clear(ws.m)
	for i := 0; i+1 < n; i += 2 {
		rankTwo(ws.m, x, i, i+1, p, ws.c[i], ws.c[i+1])
	}
	if n%2 == 1 {
		rankTwo(ws.m, x, n-1, n-1, p, ws.c[n-1], 0)
	}
}

// rankTwo adds a x_i x_iᵀ + b x_j x_jᵀ to the upper triangle of the p×p
// matrix m. Two rows per pass halve the loads and stores of m, and plain
// index arithmetic avoids building a subslice per row of m, which at small p
// costs more than the multiply-adds. The sum a·x_ik·x_il + b·x_jk·x_jl is
// formed in one fixed order, so results do not depend on how rows pair up
// except through that order.
func rankTwo(m []float64, x blas64.General, i, j, p int, a, b float64) {
	oi, oj := i*x.Stride, j*x.Stride
	switch p {
	case 3:
		rankTwo3(m, x.Data[oi:], x.Data[oj:], a, b)
		return
	case 4:
		rankTwo4(m, x.Data[oi:], x.Data[oj:], a, b)
		return
	case 5:
		rankTwo5(m, x.Data[oi:], x.Data[oj:], a, b)
		return
	case 6:
		rankTwo6(m, x.Data[oi:], x.Data[oj:], a, b)
		return
	}
	xi := x.Data[oi : oi+p : oi+p]
	xj := x.Data[oj : oj+p : oj+p]
	m = m[:p*p]
	for k := 0; k < p; k++ {
		ak, bk := a*xi[k], b*xj[k]
		for l, kl := k, k*p+k; l < p; l, kl = l+1, kl+1 {
			m[kl] += ak*xi[l] + bk*xj[l]
		}
	}
}

// step computes the full step ws.delta: a Newton step σ (Σψ'xxᵀ)⁻¹ Σψx when
// newton and the Jacobian is positive definite, otherwise an IRLS step
// (XᵀWX)⁻¹ XᵀW r. It reports a failure status when no step exists.
func (ws *Workspace) step(psi psi.Psi, x blas64.General, sigma float64, newton bool, wsum float64, it *Iteration) (Status, bool) {
	ws.normalMatrix(x)
	if newton {
		for j, hj := range ws.h {
			ws.delta[j] = sigma * hj
		}
		if wsum > 0 && choleskySolve(ws.m, ws.p, ws.delta, ws.pscale) {
			return NotRun, true
		}
		// psi' gives no positive definite Jacobian: an IRLS step instead.
		it.Fallback = true
		if ws.weights(psi, sigma) == 0 {
			return ZeroWeights, false
		}
		ws.normalMatrix(x)
	}
	return ws.weightedStep(x, sigma, it)
}

// weightedStep solves (XᵀWX) Δ = XᵀW r = σ Σ psi_i x_i for the weights in
// ws.c, with ws.m and ws.h already accumulated for those weights. It uses the
// Cholesky factor of the normal equations and falls back to QR of W^½X when
// they are ill-conditioned.
func (ws *Workspace) weightedStep(x blas64.General, sigma float64, it *Iteration) (Status, bool) {
	for j, hj := range ws.h {
		ws.delta[j] = sigma * hj
	}
	if choleskySolve(ws.m, ws.p, ws.delta, ws.pscale) {
		return NotRun, true
	}
	it.QR = true
	n, p := ws.n, ws.p
	for i := 0; i < n; i++ {
		sw := math.Sqrt(ws.c[i])
		for j, v := range row(x, i) {
			ws.qa[j*n+i] = sw * v
		}
		ws.qy[i] = sw * ws.r[i]
	}
	if !householderSolve(ws.qa, n, p, ws.qy, ws.delta, ws.rdiag, ws.pscale) {
		return SingularDesign, false
	}
	return NotRun, true
}

// extremes returns the smallest and largest values of c.
func extremes(c []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range c {
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	return lo, hi
}

// lineSearch halves the step ws.delta until the objective at the fixed scale
// sigma is no larger than obj0 (up to rounding). It returns the accepted
// step length and whether one was found.
func (ws *Workspace) lineSearch(psi psi.Psi, x blas64.General, sigma, obj0 float64, it *Iteration) (float64, bool) {
	// q = XΔ, so the trial residuals are r − tq.
	for i := range ws.q {
		var s float64
		for j, v := range row(x, i) {
			s += v * ws.delta[j]
		}
		ws.q[i] = s
	}
	slack := 8 * epsilon * math.Abs(obj0)
	t := 1.0
	for h := 0; h <= maxHalvings; h++ {
		var f float64
		for i, r := range ws.r {
			f += psi.Rho((r - t*ws.q[i]) / sigma)
		}
		if f <= obj0+slack {
			return t, true
		}
		t /= 2
		it.Halvings++
	}
	return 0, false
}
