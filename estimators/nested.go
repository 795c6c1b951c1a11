package estimators

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas/blas64"
)

// Nested subsampling for large n. Every elemental start of fast-S and
// FAST-LTS costs work in proportion to n, so at n = 20,000 the starts alone
// take about a second. Above NestedMinRows rows the starts are made inside
// a random subset of the data instead, after the nested scheme of FAST-LTS
// (Rousseeuw & Van Driessen (2006), "Computing LTS regression for large data
// sets", Data Mining and Knowledge Discovery 12:29-45, from memory), which
// serves fast-S here in the same way, I-steps taking the place of C-steps
// (our adaptation):
//
//  1. nestedRows rows are drawn without replacement and split into
//     nestedBlocks disjoint blocks of nestedBlockRows rows;
//  2. in each block, a share of the elemental starts is drawn from the
//     block's rows and refined there (I-steps for S, C-steps for LTS), and
//     the best candidates of each block are kept;
//  3. all the blocks' candidates are refined in the same way on the merged
//     set of nestedRows rows, and the best are kept;
//  4. those are refined on all n rows: S refines them to convergence as
//     without nesting; LTS gives each its C-steps there and concentrates the
//     best nestedFullKeep to convergence.
//
// The scheme keeps the breakdown point: a block holds the data's fraction of
// outliers up to sampling error, so clean starts are as likely as in the
// whole data, and the final refinement on all rows chooses by the criterion
// of the whole data.

// NestedMinRows is the largest number of rows fitted without nested
// subsampling: S, MM and LTS fits of more rows (and at most
// nestedMaxCols columns) draw their elemental starts in nested blocks of
// the data (see nested.go). Below it every start uses all rows, so results
// at these sizes do not depend on the nested scheme.
const NestedMinRows = 1500

const (
	// nestedBlocks is the number of disjoint blocks of the merged set.
	nestedBlocks = 5
	// nestedBlockRows is the number of rows of a block.
	nestedBlockRows = 300
	// nestedRows is the number of rows of the merged set.
	nestedRows = nestedBlocks * nestedBlockRows
	// nestedMaxCols is the largest p for which blocks are used: a block
	// should hold several times p rows for its fits to mean anything.
	nestedMaxCols = nestedBlockRows / 5
	// nestedFullKeep is the number of LTS candidates concentrated to
	// convergence on all rows (ours: the merged set's best all end within
	// a few parts in 10⁶ of one objective at n = 20,000, each after some
	// 40 C-steps).
	nestedFullKeep = 2
)

// useNested reports whether a fit of n rows and p columns uses nested
// subsampling.
func useNested(n, p int) bool {
	return n > NestedMinRows && p <= nestedMaxCols
}

// nestedWork holds the merged set and the work space of its fits. It is
// held by ltsWork (allocated on first use, so that fits of small n carry
// none of it) and serves both LTS and S.
type nestedWork struct {
	idx []int     // n, row indices permuted by the partial Fisher–Yates draw
	xm  []float64 // nestedRows×p, the merged set's rows, block after block
	ym  []float64 // nestedRows, their responses

	sub Workspace // S fits on a block or the merged set
	lts ltsWork   // LTS fits on a block or the merged set

	cand  []float64 // gathered candidates of the blocks, row after row
	score []float64 // their objectives (LTS) or scales (S)
	count int       // candidates gathered
}

// nested returns lw's nestedWork, allocating it on first use.
func (lw *ltsWork) nested() *nestedWork {
	if lw.nest == nil {
		lw.nest = new(nestedWork)
	}
	return lw.nest
}

// draw fills the merged set with nestedRows rows of x and y drawn without
// replacement from rng (a partial Fisher–Yates shuffle of an index buffer
// reset to the identity, so that the draw depends only on rng), and sizes
// the gathering buffers for per candidates of p coefficients a block.
func (nw *nestedWork) draw(x blas64.General, y []float64, rng *rand.Rand, per int) {
	n, p := x.Rows, x.Cols
	if cap(nw.idx) < n {
		nw.idx = make([]int, n)
	}
	idx := nw.idx[:n]
	for i := range idx {
		idx[i] = i
	}
	grow(&nw.xm, nestedRows*p)
	grow(&nw.ym, nestedRows)
	grow(&nw.cand, nestedBlocks*per*p)
	grow(&nw.score, nestedBlocks*per)
	nw.count = 0
	for m := 0; m < nestedRows; m++ {
		j := m + rng.IntN(n-m)
		idx[m], idx[j] = idx[j], idx[m]
		copy(nw.xm[m*p:(m+1)*p], row(x, idx[m]))
		nw.ym[m] = y[idx[m]]
	}
}

// block returns the rows of block k of the merged set, or the whole merged
// set for k = nestedBlocks.
func (nw *nestedWork) block(k, p int) (blas64.General, []float64) {
	lo, hi := k*nestedBlockRows, (k+1)*nestedBlockRows
	if k == nestedBlocks {
		lo, hi = 0, nestedRows
	}
	return blas64.General{Rows: hi - lo, Cols: p, Stride: p, Data: nw.xm[lo*p : hi*p]}, nw.ym[lo:hi]
}

// gather appends a candidate and its score.
func (nw *nestedWork) gather(b []float64, score float64) {
	p := len(b)
	copy(nw.cand[nw.count*p:(nw.count+1)*p], b)
	nw.score[nw.count] = score
	nw.count++
}

// nestedShare returns the starts of one block: subsets shared among the
// blocks, rounded up.
func nestedShare(subsets int) int {
	return (subsets + nestedBlocks - 1) / nestedBlocks
}

// nestedH returns the h of a fit on m of the n rows: the same fraction of
// them, ⌈m·h/n⌉, but at least p and at most m.
func nestedH(m, n, h, p int) int {
	hm := (m*h + n - 1) / n
	return min(max(hm, p), m)
}

// nestedStarts makes the starts of FAST-LTS in nested blocks (see the top
// of this file) and leaves in lw's kept list (already reserved for the n
// rows) the best nestedFullKeep candidates, ranked on all rows. It returns
// the number of starts drawn, the C-steps every kept candidate took before
// concentration (s.CSteps each in its block, in the merged set and on all
// rows) and whether some start met a singular h-subset. When nothing is
// kept the caller falls back to starts on all rows.
func (lw *ltsWork) nestedStarts(x blas64.General, y []float64, rng *rand.Rand, s ltsSettings) (starts, firstSteps int, singular bool) {
	n, p := lw.n, lw.p
	nw := lw.nested()
	nw.draw(x, y, rng, s.Keep)
	sub := &nw.lts
	share := nestedShare(s.Subsets)
	for k := 0; k < nestedBlocks; k++ {
		xb, yb := nw.block(k, p)
		sub.reserve(xb.Rows, p, nestedH(xb.Rows, n, lw.h, p), s.Keep)
		got, sing := sub.starts(xb, yb, rng, share, s.CSteps, s.Keep)
		starts += got
		singular = singular || sing
		for c := 0; c < sub.nKept; c++ {
			nw.gather(sub.candBeta[c*p:(c+1)*p], sub.candObj[c])
		}
	}
	xm, ym := nw.block(nestedBlocks, p)
	sub.reserve(xm.Rows, p, nestedH(xm.Rows, n, lw.h, p), s.Keep)
	for c := 0; c < nw.count; c++ {
		copy(sub.trial, nw.cand[c*p:(c+1)*p])
		if sub.offerSteps(xm, ym, sub.trial, s.CSteps, s.Keep) {
			singular = true
		}
	}
	// The merged set's best take s.CSteps C-steps on all rows, and the
	// best nestedFullKeep of them go to the kept list, to be concentrated
	// there. On all rows a C-step costs as much as the whole search of a
	// block, and concentration takes tens of them, so only these few are
	// carried to convergence.
	for c := 0; c < sub.nKept; c++ {
		copy(lw.trial, sub.candBeta[c*p:(c+1)*p])
		if lw.offerSteps(x, y, lw.trial, s.CSteps, min(s.Keep, nestedFullKeep)) {
			singular = true
		}
	}
	return starts, 3 * s.CSteps, singular
}

// sFitNested is sFitCapped for large n (useNested): the S candidates are
// drawn and refined in nested blocks (see the top of this file), the best
// keep of the merged set get their M-scales on all rows, and sRefine
// refines them there. It falls back to the plain search on all rows when a
// block fits more than half its rows exactly, or when nothing survives or
// every refinement meets a singular design.
func (ws *Workspace) sFitNested(x blas64.General, y, beta []float64, rs Resampling, maxRefine int) sOutcome {
	p, n := ws.p, ws.n
	psi := rs.SScale()
	b := ws.sConsistency(psi.C)
	subsets, keep := rs.sCounts(p)
	nw := ws.lts.nested()
	nw.draw(x, y, ws.rng, keep)
	sub := &nw.sub
	sub.pcg, sub.rng = ws.pcg, ws.rng // draw from the fit's stream
	share := nestedShare(subsets)
	for k := 0; k < nestedBlocks; k++ {
		xb, yb := nw.block(k, p)
		sub.reserve(xb.Rows, p)
		sub.reserveCandidates(keep, p)
		db := rs.SDivisor.divisor(xb.Rows, p)
		if _, exact := sub.sCandidates(xb, yb, beta, psi, b, db, share, keep, 0); exact {
			return ws.sFitPlain(x, y, beta, rs, maxRefine)
		}
		for c, sc := range sub.candScale {
			if !math.IsInf(sc, 1) {
				nw.gather(sub.cand[c*p:(c+1)*p], sc)
			}
		}
	}
	// The merged set: each block candidate starts from its block scale.
	xm, ym := nw.block(nestedBlocks, p)
	sub.reserve(xm.Rows, p)
	sub.reserveCandidates(keep, p)
	for k := range sub.candScale {
		sub.candScale[k] = math.Inf(1)
	}
	dm := rs.SDivisor.divisor(xm.Rows, p)
	cw := sub.lts.columns(xm)
	for c := 0; c < nw.count; c++ {
		cur := sub.trial
		copy(cur, nw.cand[c*p:(c+1)*p])
		sub.residuals(xm, ym, cur)
		sub.sOffer(cw, xm, ym, cur, nw.score[c], psi, b, dm, keep, 0)
	}
	// All rows: the merged set's best with their M-scales on all rows.
	ws.reserveCandidates(keep, p)
	d := rs.SDivisor.divisor(n, p)
	for k, sc := range sub.candScale {
		ws.candScale[k] = math.Inf(1)
		if math.IsInf(sc, 1) {
			continue
		}
		c := ws.cand[k*p : (k+1)*p]
		copy(c, sub.cand[k*p:(k+1)*p])
		ws.residuals(x, y, c)
		if s := mScale(psi, ws.r, b, d, sc); s > 0 && !math.IsInf(s, 0) {
			ws.candScale[k] = s
		}
	}
	out, _ := ws.sRefine(x, y, beta, psi, b, d, keep, maxRefine)
	if out.status == SingularDesign {
		return ws.sFitPlain(x, y, beta, rs, maxRefine)
	}
	return out
}
