package psi

import "testing"

// BenchmarkCustomRho measures rho of a custom psi given without a rho
// expression, so rho comes from integrating
func BenchmarkCustomRho(b *testing.B) {
	c, err := NewCustom(CustomSpec{Psi: "abs(r) <= k ? r : k * sign(r)", Constants: []Constant{{"k", 1.345}}, Kinks: []float64{1.345}})
	if err != nil {
		b.Fatal(err)
	}
	us := []float64{0.3, -1.1, 2.7, 0.05, -4.2, 9.5, 1.345, -0.8}
	var sink float64
	for i := 0; b.Loop(); i++ {
		sink += c.Rho(us[i%len(us)])
	}
	_ = sink
}
