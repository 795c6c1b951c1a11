//go:build !purego

package estimators

// huberSums5AVX is huberSums5 by AVX instructions (huber_amd64.s).
//
//go:noescape
func huberSums5AVX(r, c, ps *float64, offs *int, data *float64, n, stride int, k, sigma float64, h *[5]float64) (csum float64, off int)

// huberSums5 is the loop of evaluateHuberSums5: with AVX, huberSums5AVX,
// which gives the same values bit for bit (TestHuberSums5Kernel);
// otherwise huberSums5Go.
func huberSums5(r, c, ps []float64, offs []int, data []float64, stride int, k, sigma float64, h *[5]float64) (csum float64, off int) {
	n := len(r)
	if !useAVX || n == 0 || stride < 5 {
		return huberSums5Go(r, c, ps, offs, data, stride, k, sigma, h)
	}
	_, _, _ = c[n-1], ps[n-1], offs[n-1]
	_ = data[(n-1)*stride+4]
	return huberSums5AVX(&r[0], &c[0], &ps[0], &offs[0], &data[0], n, stride, k, sigma, h)
}
