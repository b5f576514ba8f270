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
// machine and build.
package nn
