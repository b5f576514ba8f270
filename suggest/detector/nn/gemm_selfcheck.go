package nn

import (
	"fmt"
	"math"
	"unsafe"
)

// gemmFunc adds alpha·op(A)·op(B) to C, as gemmBLAS does after Gemm has
// applied beta.
type gemmFunc[T Float] func(transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, c []T, ldc int)

// blasSelfCheck runs a foreign GEMM on small products, every transpose
// combination and strides wider than the rows, against a float64 triple
// loop, so that a broken library is never used. The largest product is
// big enough for OpenBLAS to use its threads.
func blasSelfCheck(g32 gemmFunc[float32], g64 gemmFunc[float64]) error {
	for _, sz := range [][3]int{{1, 1, 1}, {7, 5, 3}, {29, 37, 67}, {70, 90, 80}} {
		for _, tr := range [][2]bool{{false, false}, {false, true}, {true, false}, {true, true}} {
			if err := selfCheckOne(g32, tr[0], tr[1], sz[0], sz[1], sz[2]); err != nil {
				return err
			}
			if err := selfCheckOne(g64, tr[0], tr[1], sz[0], sz[1], sz[2]); err != nil {
				return err
			}
		}
	}
	return nil
}

func selfCheckOne[T Float](g gemmFunc[T], ta, tb bool, m, n, k int) error {
	ar, ac := stored(ta, m, k)
	br, bc := stored(tb, k, n)
	lda, ldb, ldc := ac+1, bc+2, n+3
	// Fixed values in [-1, 1] that no pattern of a wrong stride preserves.
	fill := func(s []T, seed int) {
		for i := range s {
			s[i] = T(float64((i*7919+seed*104729)%201-100) / 100)
		}
	}
	a, b, c := make([]T, (ar-1)*lda+ac), make([]T, (br-1)*ldb+bc), make([]T, (m-1)*ldc+n)
	fill(a, 1)
	fill(b, 2)
	fill(c, 3)
	c0 := append([]T(nil), c...)
	const alpha = 0.75
	g(ta, tb, m, n, k, alpha, a, lda, b, ldb, c, ldc)

	var z T
	size, eps := unsafe.Sizeof(z), 0x1p-53
	if size == 4 {
		eps = 0x1p-24
	}
	for i := range m {
		for j := range n {
			var s, abs float64
			for p := range k {
				ai, bi := i*lda+p, p*ldb+j
				if ta {
					ai = p*lda + i
				}
				if tb {
					bi = j*ldb + p
				}
				av, bv := float64(a[ai]), float64(b[bi])
				s += av * bv
				abs += math.Abs(av * bv)
			}
			want := float64(c0[i*ldc+j]) + alpha*s
			// A bound for any order of summation, FMA or not, with room.
			tol := 2 * float64(k+2) * eps * (alpha*abs + math.Abs(float64(c0[i*ldc+j])))
			if got := float64(c[i*ldc+j]); !(math.Abs(got-want) <= tol) {
				return fmt.Errorf("%dx%dx%d transA=%v transB=%v, %d-byte floats: C[%d,%d] = %v, want %v", m, n, k, ta, tb, size, i, j, got, want)
			}
		}
		for j := n; j < ldc && i < m-1; j++ {
			if c[i*ldc+j] != c0[i*ldc+j] {
				return fmt.Errorf("%dx%dx%d transA=%v transB=%v: wrote between rows of C at [%d,%d]", m, n, k, ta, tb, i, j)
			}
		}
	}
	return nil
}
