package nn

import "testing"

// noBLAS keeps Gemm on the Go kernels for one test or benchmark, in
// builds with or without the openblas tag: OpenBLAS's sums depend on its
// thread count, and tests of the Go kernels must reach them.
func noBLAS(t testing.TB) {
	blasInit()
	old := useBLAS
	useBLAS = false
	t.Cleanup(func() { useBLAS = old })
}

// TestBLASSelfCheckCatchesErrors feeds the start-up self-check a GEMM
// that is right and ones that are wrong in small ways, so that a broken
// library would not be used. Reference: the self-check's own float64
// triple loop; the good GEMM is this package's pure-Go kernel.
func TestBLASSelfCheckCatchesErrors(t *testing.T) {
	noBLAS(t)
	setAsm32(t, false)
	good32 := func(ta, tb bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
		Gemm(ta, tb, m, n, k, alpha, a, lda, b, ldb, 1, c, ldc)
	}
	good64 := func(ta, tb bool, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
		Gemm(ta, tb, m, n, k, alpha, a, lda, b, ldb, 1, c, ldc)
	}
	if err := blasSelfCheck(good32, good64); err != nil {
		t.Fatalf("the Go kernel fails the self-check: %v", err)
	}
	bad := map[string]gemmFunc[float32]{
		"one element off": func(ta, tb bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
			good32(ta, tb, m, n, k, alpha, a, lda, b, ldb, c, ldc)
			if m*n > 100 {
				c[(m-1)*ldc+n-1] += 1e-3
			}
		},
		"alpha ignored": func(ta, tb bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
			good32(ta, tb, m, n, k, 1, a, lda, b, ldb, c, ldc)
		},
		"beta 0 instead of 1": func(ta, tb bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
			Gemm(ta, tb, m, n, k, alpha, a, lda, b, ldb, 0, c, ldc)
		},
		"writes between rows": func(ta, tb bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
			good32(ta, tb, m, n, k, alpha, a, lda, b, ldb, c, ldc)
			if m > 1 {
				c[n] = 7
			}
		},
	}
	for name, g := range bad {
		if err := blasSelfCheck(g, good64); err == nil {
			t.Errorf("%s: passed the self-check", name)
		}
	}
}
