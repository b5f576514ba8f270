// Package nn holds the numeric building blocks of the box suggester's
// detector, a small CenterNet-style network ("Objects as Points", Zhou,
// Wang & Krähenbühl 2019) trained on a laptop CPU: NCHW tensors, a parallel
// GEMM, convolution, batch normalisation, activations, nearest upsampling,
// the focal and masked L1 losses, Adam, and a checksummed parameter format.
//
// Convolutions are im2col followed by one GEMM per image, so nearly all the
// time goes to a single cache-blocked kernel that is worth tuning; the
// backward pass is the two transposed GEMMs and col2im.
//
// Everything is generic over the float type: the detector runs in float32,
// and the tests run the very same code in float64, where central finite
// differences are accurate enough to check every gradient tightly.
//
// Determinism: results do not depend on the number of threads. The GEMM
// splits rows of C among goroutines, but each element is computed by one
// goroutine with its sum over k in a fixed order; everything else runs on
// one goroutine. A seeded run therefore repeats bit for bit on the same
// machine and build. With the openblas tag that holds only for a fixed
// thread count: OpenBLAS's sums can change with its thread count.
//
// OpenBLAS: `go build -tags openblas` (cgo; cblas.h from Debian's
// libopenblas-dev) sends float32 and float64 products to cblas_sgemm and
// cblas_dgemm on Threads() threads. The library is opened with dlopen at
// first use so that OPENBLAS_CORETYPE, if unset, is first set from
// x/sys/cpu (SKYLAKEX for AVX-512, HASWELL for AVX2 and FMA): Debian's
// 0.3.21 can take an AVX-512 Xeon for an old core and run several times
// slower. If the library is missing, fails a self-check, or still runs a
// pre-AVX2 core on an AVX2 CPU, Gemm keeps the Go kernels, as it does with
// BOXWRIGHT_GEMM=asm; GemmBackend reports the path and core.
package nn
