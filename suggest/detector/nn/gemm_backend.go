package nn

// GemmBackend describes the routines Gemm multiplies with in this process,
// for logs and the about box: OpenBLAS with the core it runs on, or the
// Go kernels and, in an openblas build, why OpenBLAS is not used. With the
// openblas tag the first call loads and checks the library.
func GemmBackend() string {
	if blasInit() {
		return blasStatus()
	}
	s := "pure Go"
	if useAsm32 {
		s = "Go assembly (AVX2/FMA) for float32, pure Go for float64"
	}
	if why := blasStatus(); why != "" {
		s += "; " + why
	}
	return s
}
