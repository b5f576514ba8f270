package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// Shapes for which the driver shares out columns at 2, 3 and 7 threads:
// few rows, odd widths crossing the nr, kc and (asm) nc edges.
var columnSizes = [][3]int{{1, 231, 5}, {5, 333, 257}, {16, 1000, 400}, {7, 4133, 20}, {96, 517, 771}, {13, 229, 1}}

// TestGemmColumnsAgainstNaive checks the column-sharing driver on both
// kernels against the float64 triple loop, for all transposes, and that
// each thread count gives the bits of one thread. Source: the definition
// of the matrix product (naive loop) and this package's determinism rule.
func TestGemmColumnsAgainstNaive(t *testing.T) {
	noBLAS(t) // the Go kernels' bits are the subject
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(21, 22))
	for _, sz := range columnSizes {
		m, n, k := sz[0], sz[1], sz[2]
		for _, th := range []int{2, 3, 7} {
			if !splitColumns(pureGoPlan[float64](), th, m, n, k) || !splitColumns(plan32, th, m, n, k) {
				t.Fatalf("%dx%dx%d at %d threads does not take the column driver", m, n, k, th)
			}
		}
		for ti, tr := range gemmTrans {
			ab := gemmAlphaBeta[ti%len(gemmAlphaBeta)]
			name := fmt.Sprintf("%dx%dx%d trans=%v", m, n, k, tr)

			// float64, pure-Go kernel.
			a, b, c, lda, ldb, ldc, _ := gemm32Case(r, tr[0], tr[1], m, n, k, ab[0], ab[1])
			a64, b64, c64 := widen(a), widen(b), widen(c)
			want := slices.Clone(c64)
			naiveGemm(tr[0], tr[1], m, n, k, ab[0], a64, lda, b64, ldb, ab[1], want, ldc)
			var ref []float64
			for _, th := range []int{1, 2, 3, 7} {
				SetThreads(th)
				got := slices.Clone(c64)
				Gemm(tr[0], tr[1], m, n, k, ab[0], a64, lda, b64, ldb, ab[1], got, ldc)
				for i := range m {
					for j := range n {
						if g, w := got[i*ldc+j], want[i*ldc+j]; !(math.Abs(g-w) <= 1e-12*float64(k+1)) {
							t.Fatalf("%s float64 %d threads: C[%d,%d] = %v, want %v", name, th, i, j, g, w)
						}
					}
				}
				if ref == nil {
					ref = got
				} else if i := firstDiff(got, ref); i >= 0 {
					t.Fatalf("%s float64: %d threads give C[%d] = %v, 1 thread %v", name, th, i, got[i], ref[i])
				}
			}

			// float32, each kernel this build has.
			want = widen(c)
			naiveGemm(tr[0], tr[1], m, n, k, ab[0], a64, lda, b64, ldb, ab[1], want, ldc)
			for _, asm := range []bool{false, true} {
				if asm && !haveAsm32 {
					continue
				}
				setAsm32(t, asm)
				var ref []float32
				for _, th := range []int{1, 2, 3, 7} {
					SetThreads(th)
					got := slices.Clone(c)
					Gemm(tr[0], tr[1], m, n, k, float32(ab[0]), a, lda, b, ldb, float32(ab[1]), got, ldc)
					checkGemm32(t, fmt.Sprintf("%s asm=%v %d threads", name, asm, th), m, n, k, ldc, ab[0], ab[1], c, got, want)
					if ref == nil {
						ref = got
					} else if i := firstDiff(got, ref); i >= 0 {
						t.Fatalf("%s asm=%v: %d threads give C[%d] = %v, 1 thread %v", name, asm, th, i, got[i], ref[i])
					}
				}
			}
		}
	}
}

func widen(s []float32) []float64 {
	d := make([]float64, len(s))
	for i, v := range s {
		d[i] = float64(v)
	}
	return d
}

// firstDiff returns the first index where a and b differ in their bits
// (NaNs of the same payload are equal), or -1.
func firstDiff[T Float](a, b []T) int {
	for i := range a {
		if math.Float64bits(float64(a[i])) != math.Float64bits(float64(b[i])) {
			return i
		}
	}
	return -1
}

// TestGemmPackedA checks that products with A packed beforehand give the
// bits of plain Gemm, on both kernels, for every thread count, including
// shapes with many row blocks. Source: this package's determinism rule.
func TestGemmPackedA(t *testing.T) {
	noBLAS(t) // the Go kernels' bits are the subject
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(23, 24))
	sizes := append([][3]int{{300, 517, 97}, {130, 20, 600}}, columnSizes...)
	for _, asm := range []bool{false, true} {
		if asm && !haveAsm32 {
			continue
		}
		setAsm32(t, asm)
		for _, sz := range sizes {
			m, n, k := sz[0], sz[1], sz[2]
			for _, tr := range gemmTrans {
				a, b, c, lda, ldb, ldc, _ := gemm32Case(r, tr[0], tr[1], m, n, k, 0.75, 0.5)
				SetThreads(1)
				want := slices.Clone(c)
				Gemm(tr[0], tr[1], m, n, k, 0.75, a, lda, b, ldb, 0.5, want, ldc)
				for _, th := range []int{1, 2, 3} {
					SetThreads(th)
					pa := packGemmA(th, tr[0], m, k, a, lda)
					got := slices.Clone(c)
					gemmPacked(th, pa, tr[1], n, 0.75, b, ldb, 0.5, got, ldc)
					pa.free()
					if i := firstDiff(got, want); i >= 0 {
						t.Fatalf("asm=%v %dx%dx%d trans=%v %d threads: packed C[%d] = %v, Gemm %v", asm, m, n, k, tr, th, i, got[i], want[i])
					}
				}
			}
		}
	}
}
