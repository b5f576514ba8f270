package nn

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// naiveGemm is the textbook triple loop, the reference for Gemm.
func naiveGemm(transA, transB bool, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	for i := range m {
		for j := range n {
			var s float64
			for p := range k {
				var av, bv float64
				if transA {
					av = a[p*lda+i]
				} else {
					av = a[i*lda+p]
				}
				if transB {
					bv = b[j*ldb+p]
				} else {
					bv = b[p*ldb+j]
				}
				s += av * bv
			}
			old := c[i*ldc+j]
			if beta == 0 {
				old = 0
			}
			c[i*ldc+j] = alpha*s + beta*old
		}
	}
}

func randSlice[T Float](r *rand.Rand, n int) []T {
	s := make([]T, n)
	for i := range s {
		s[i] = T(r.Float64()*2 - 1)
	}
	return s
}

// TestGemmAgainstNaive checks all four transpose combinations on odd sizes,
// strides wider than the rows, and sizes that cross the kc, mc and nc
// block edges. Source: the definition of the matrix product (naive loop).
func TestGemmAgainstNaive(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	sizes := [][3]int{{1, 1, 1}, {1, 7, 3}, {5, 1, 9}, {7, 13, 5}, {3, 3, 257}, {67, 131, 259}, {130, 5, 600}, {9, 2051, 17}}
	for _, sz := range sizes {
		m, n, k := sz[0], sz[1], sz[2]
		for _, tr := range [][2]bool{{false, false}, {false, true}, {true, false}, {true, true}} {
			for _, ab := range [][2]float64{{1, 0}, {0.7, 1}, {-1.5, 0.25}} {
				ta, tb := tr[0], tr[1]
				ar, ac := stored(ta, m, k)
				br, bc := stored(tb, k, n)
				lda, ldb, ldc := ac+2, bc+1, n+3
				a := randSlice[float64](r, (ar-1)*lda+ac)
				b := randSlice[float64](r, (br-1)*ldb+bc)
				c := randSlice[float64](r, (m-1)*ldc+n)
				if ab[1] == 0 {
					for i := range c {
						c[i] = math.NaN() // beta 0 must overwrite, not scale
					}
				}
				want := slices.Clone(c)
				naiveGemm(ta, tb, m, n, k, ab[0], a, lda, b, ldb, ab[1], want, ldc)
				got := slices.Clone(c)
				Gemm(ta, tb, m, n, k, ab[0], a, lda, b, ldb, ab[1], got, ldc)
				for i := range m {
					for j := range n {
						g, w := got[i*ldc+j], want[i*ldc+j]
						if math.Abs(g-w) > 1e-12*float64(k) || math.IsNaN(g) {
							t.Fatalf("m=%d n=%d k=%d trans=%v alpha,beta=%v: C[%d,%d] = %v, want %v", m, n, k, tr, ab, i, j, g, w)
						}
					}
					// Gaps between rows of C are not touched.
					for j := n; j < ldc && i < m-1; j++ {
						if g, w := got[i*ldc+j], c[i*ldc+j]; g != w && !(math.IsNaN(g) && math.IsNaN(w)) {
							t.Fatalf("m=%d n=%d k=%d: gap C[%d,%d] changed", m, n, k, i, j)
						}
					}
				}
			}
		}
	}
}

// TestGemmFloat32 checks the float32 instantiation against the float64
// loop. Source: the definition of the matrix product (naive loop).
func TestGemmFloat32(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	m, n, k := 37, 45, 300
	a64, b64 := randSlice[float64](r, m*k), randSlice[float64](r, k*n)
	a32, b32 := make([]float32, m*k), make([]float32, k*n)
	for i, v := range a64 {
		a32[i] = float32(v)
		a64[i] = float64(a32[i])
	}
	for i, v := range b64 {
		b32[i] = float32(v)
		b64[i] = float64(b32[i])
	}
	want := make([]float64, m*n)
	naiveGemm(false, true, m, n, k, 1, a64, k, b64, k, 0, want, n)
	got := make([]float32, m*n)
	Gemm(false, true, m, n, k, 1, a32, k, b32, k, 0, got, n)
	for i := range got {
		if math.Abs(float64(got[i])-want[i]) > 1e-4 {
			t.Fatalf("C[%d] = %v, want %v", i, got[i], want[i])
		}
	}
}

// TestGemmThreadsBitIdentical checks the determinism rule: the same bits
// whatever the thread count, on the Go kernels (OpenBLAS keeps it only
// for a fixed count). Source: this package's determinism rule.
func TestGemmThreadsBitIdentical(t *testing.T) {
	noBLAS(t)
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(5, 6))
	for _, sz := range [][3]int{{131, 67, 515}, {8, 300, 40}, {257, 2100, 33}} {
		m, n, k := sz[0], sz[1], sz[2]
		a, b := randSlice[float32](r, m*k), randSlice[float32](r, n*k)
		var ref []float32
		for _, th := range []int{1, 2, 3, 7} {
			SetThreads(th)
			c := make([]float32, m*n)
			Gemm(true, true, m, n, k, 1, a, m, b, k, 0, c, n)
			if ref == nil {
				ref = c
				continue
			}
			for i := range c {
				if math.Float32bits(c[i]) != math.Float32bits(ref[i]) {
					t.Fatalf("%dx%dx%d: %d threads give C[%d] = %v, 1 thread %v", m, n, k, th, i, c[i], ref[i])
				}
			}
		}
	}
}

// BenchmarkGemm measures the GEMM of a 3×3 convolution with 128 input and
// 256 output channels on a 64×64 map: 256×4096 outputs, k = 1152.
func BenchmarkGemm(b *testing.B) {
	m, n, k := 256, 4096, 1152
	r := rand.New(rand.NewPCG(1, 2))
	a, bb := randSlice[float32](r, m*k), randSlice[float32](r, k*n)
	c := make([]float32, m*n)
	for b.Loop() {
		Gemm(false, false, m, n, k, 1, a, k, bb, n, 0, c, n)
	}
	b.ReportMetric(2*float64(m)*float64(n)*float64(k)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
}
