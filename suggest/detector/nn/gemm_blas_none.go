//go:build !openblas || !cgo

package nn

// Built without the openblas tag (or without cgo) there is no BLAS path.
var useBLAS = false

func blasInit() bool { return false }

func blasStatus() string { return "" }

func gemmBLAS[T Float](transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, c []T, ldc int) bool {
	return false
}
