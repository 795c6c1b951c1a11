//go:build !amd64 || purego

package estimators

// huberSums5 is the loop of evaluateHuberSums5 (huberSums5Go).
func huberSums5(r, c, ps []float64, offs []int, data []float64, stride int, k, sigma float64, h *[5]float64) (csum float64, off int) {
	return huberSums5Go(r, c, ps, offs, data, stride, k, sigma, h)
}
