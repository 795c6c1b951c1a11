package estimators

// dot4Go is dot4 in Go: each of the four sums is kept in four lanes, row i
// added to lane i mod 4 in row order, the last len(w) mod 4 rows to lane
// 0, and the lanes are added as (l0 + l1) + (l2 + l3), the order of the
// AVX kernel, so that both give the same value bit for bit.
func dot4Go(w, c0, c1, c2, c3 []float64, out *[4]float64) {
	n := len(w)
	c0, c1, c2, c3 = c0[:n], c1[:n], c2[:n], c3[:n]
	var a, b, c, d [4]float64
	i := 0
	for ; i+4 <= n; i += 4 {
		for l := 0; l < 4; l++ {
			wl := w[i+l]
			a[l] += wl * c0[i+l]
			b[l] += wl * c1[i+l]
			c[l] += wl * c2[i+l]
			d[l] += wl * c3[i+l]
		}
	}
	for ; i < n; i++ {
		a[0] += w[i] * c0[i]
		b[0] += w[i] * c1[i]
		c[0] += w[i] * c2[i]
		d[0] += w[i] * c3[i]
	}
	for j, s := range [4]*[4]float64{&a, &b, &c, &d} {
		out[j] = (s[0] + s[1]) + (s[2] + s[3])
	}
}

// bisqWeightsGo is bisqWeights in Go, the same operations in the same
// order as the AVX kernel.
func bisqWeightsGo(r, w, wr []float64, inv float64) {
	w, wr = w[:len(r)], wr[:len(r)]
	for i, ri := range r {
		v := ri * inv
		t := 1 - v*v
		if !(t >= 0) && t == t {
			t = 0 // max(1 − v², 0), keeping NaN as the kernel's max does
		}
		t2 := t * t
		w[i] = t2
		wr[i] = t2 * ri
	}
}

// bisqResidualSumsGo is bisqResidualSums in Go: r_i = y_i − Σ_k β_k x_ik,
// subtracting in order of k (as p vector updates would), and, with
// v = r_i·inv, t = max(1 − v², 0), u = r_i·invW and t_W = max(1 − u², 0),
// the sums Σ (1 − t²·t), Σ v²·t² and Σ (1 − t_W·t_W·t_W): with inv =
// 1/(c·s), the mean rho at scale s is (c²/6)·rho/d and the mean psi(u)·u is
// c²·psiu/d; rhoW is the rho sum at the scale of invW. Each sum is kept in
// four lanes (row i in lane i mod 4, in row order for the first n − n mod 4
// rows), the lanes added as (l0 + l1) + (l2 + l3), then the last n mod 4
// rows added in order: the order of the AVX kernel, so both give the same
// values bit for bit.
func bisqResidualSumsGo(y, xt, beta, r []float64, inv, invW float64) (rho, psiu, rhoW float64) {
	n := len(r)
	y = y[:n]
	var lr, lp, lw [4]float64
	term := func(i int) (a, b, c float64) {
		ri := y[i]
		for k, bk := range beta {
			ri -= bk * xt[k*n+i]
		}
		r[i] = ri
		v := ri * inv
		v2 := v * v
		t := 1 - v2
		if !(t >= 0) && t == t {
			t = 0
		}
		t2 := t * t
		u := ri * invW
		tw := 1 - u*u
		if !(tw >= 0) && tw == tw {
			tw = 0
		}
		return 1 - t*t2, v2 * t2, 1 - tw*tw*tw
	}
	i := 0
	for ; i+4 <= n; i += 4 {
		for l := 0; l < 4; l++ {
			a, b, c := term(i + l)
			lr[l] += a
			lp[l] += b
			lw[l] += c
		}
	}
	rho = (lr[0] + lr[1]) + (lr[2] + lr[3])
	psiu = (lp[0] + lp[1]) + (lp[2] + lp[3])
	rhoW = (lw[0] + lw[1]) + (lw[2] + lw[3])
	for ; i < n; i++ {
		a, b, c := term(i)
		rho += a
		psiu += b
		rhoW += c
	}
	return rho, psiu, rhoW
}

// residualsAbsGo is residualsAbs in Go: the residuals as
// bisqResidualSumsGo forms them, then absMaxSumGo.
func residualsAbsGo(y, xt, beta, r, a []float64) (top, sum float64) {
	n := len(r)
	for i := range r {
		ri := y[i]
		for k, bk := range beta {
			ri -= bk * xt[k*n+i]
		}
		r[i] = ri
	}
	return absMaxSumGo(r, a)
}

// residualsSquaresGo is residualsSquares in Go.
func residualsSquaresGo(y, xt, beta, r2 []float64) (top, sum float64) {
	n := len(r2)
	for i := range r2 {
		ri := y[i]
		for k, bk := range beta {
			ri -= bk * xt[k*n+i]
		}
		v := ri * ri
		r2[i] = v
		top = max(top, v)
		sum += v
	}
	return top, sum
}
