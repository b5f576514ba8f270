//go:build openblas && cgo

package nn

import (
	"math/rand/v2"
	"testing"
)

// gemmBenchShapes are BenchmarkGemm's product, BenchmarkGemm32's small
// one and the three products of each layer of BenchmarkConv2D (forward,
// weight gradient, column gradient), per image.
var gemmBenchShapes = []struct {
	name    string
	ta, tb  bool
	m, n, k int
}{
	{"256x4096x1152", false, false, 256, 4096, 1152},
	{"32x1152x288", false, false, 32, 1152, 288},
	{"conv64_fwd_64x4096x576", false, false, 64, 4096, 576},
	{"conv64_dW_64x576x4096_NT", false, true, 64, 576, 4096},
	{"conv64_dcol_576x4096x64_TN", true, false, 576, 4096, 64},
	{"stem_fwd_16x16384x27", false, false, 16, 16384, 27},
	{"stem_dW_16x27x16384_NT", false, true, 16, 27, 16384},
	{"stem_dcol_27x16384x16_TN", true, false, 27, 16384, 16},
}

// setBackend picks Gemm's float32 path for one benchmark: "asm" (the Go
// assembly kernel) or "openblas".
func setBackend(b *testing.B, path string) {
	switch path {
	case "asm":
		needAsm32(b)
		setAsm32(b, true)
	case "openblas":
		needBLAS(b)
	}
}

// BenchmarkGemmBackends times the same float32 products through the Go
// assembly kernel and OpenBLAS in one run, for the ratio of the two.
func BenchmarkGemmBackends(b *testing.B) {
	b.Logf("OpenBLAS: %s; %d threads", blasStatus(), Threads())
	for _, s := range gemmBenchShapes {
		r := rand.New(rand.NewPCG(1, 2))
		a, bb := randSlice[float32](r, s.m*s.k), randSlice[float32](r, s.k*s.n)
		c := make([]float32, s.m*s.n)
		lda, ldb := s.k, s.n
		if s.ta {
			lda = s.m
		}
		if s.tb {
			ldb = s.k
		}
		for _, path := range []string{"asm", "openblas"} {
			b.Run(s.name+"/"+path, func(b *testing.B) {
				setBackend(b, path)
				for b.Loop() {
					Gemm(s.ta, s.tb, s.m, s.n, s.k, 1, a, lda, bb, ldb, 0, c, s.n)
				}
				b.ReportMetric(2*float64(s.m)*float64(s.n)*float64(s.k)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
			})
		}
	}
}

// BenchmarkConv2DBackends is BenchmarkConv2D through each backend: the
// whole forward and backward pass, im2col and col2im included.
func BenchmarkConv2DBackends(b *testing.B) {
	for _, c := range convBenchCases {
		for _, path := range []string{"asm", "openblas"} {
			b.Run(c.name()+"/"+path, func(b *testing.B) {
				setBackend(b, path)
				benchConv(b, c)
			})
		}
	}
}
