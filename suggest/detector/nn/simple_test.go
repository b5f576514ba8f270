package nn

import (
	"math"
	"testing"
)

// TestReLUGradMask checks the branch-free masks against y > 0 on the
// values where bit tricks go wrong: both zeros, the smallest and largest
// finite values, infinities and NaNs of either sign. Source: the
// definition of the ReLU gradient (PyTorch takes 0 at 0).
func TestReLUGradMask(t *testing.T) {
	vals := []float64{0, math.Copysign(0, -1), 1, -1, 5e-324, -5e-324, 1e-45, 1.5e-45, -1e-45, math.SmallestNonzeroFloat32,
		math.MaxFloat32, -math.MaxFloat32, math.MaxFloat64, -math.MaxFloat64, math.Inf(1), math.Inf(-1), math.NaN(), -math.NaN()}
	for _, v := range vals {
		dx32 := []float32{7}
		reluGrad32([]float32{float32(v)}, []float32{3}, dx32)
		want32 := float32(0)
		if float32(v) > 0 {
			want32 = 3
		}
		if dx32[0] != want32 {
			t.Errorf("float32 y = %v: dx = %v", float32(v), dx32[0])
		}
		dx64 := []float64{7}
		reluGrad64([]float64{v}, []float64{3}, dx64)
		want64 := 0.0
		if v > 0 {
			want64 = 3
		}
		if dx64[0] != want64 {
			t.Errorf("float64 y = %v: dx = %v", v, dx64[0])
		}
	}
}
