// Package openblas is nn's cgo binding to OpenBLAS's cblas_sgemm and
// cblas_dgemm, built only with the openblas tag. It is a package of its
// own because a package that uses cgo cannot hold Go assembly, and nn
// does.
//
// The library is opened with dlopen by Open rather than linked: a linked
// libopenblas picks its kernels in its own constructor, which runs before
// any constructor of the executable and before Go's init, too early for
// the caller to set OPENBLAS_CORETYPE. Only the header (libopenblas-dev)
// is needed to build; without the library at run time Open fails and the
// caller keeps its own kernels.
package openblas
