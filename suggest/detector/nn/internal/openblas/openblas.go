//go:build openblas && cgo

package openblas

/*
#cgo linux LDFLAGS: -ldl
#include <dlfcn.h>
#include <stddef.h>
#include <stdlib.h>
#include <cblas.h>

// __typeof__ makes the compiler check the pointers against cblas.h.
static __typeof__(cblas_sgemm) *bw_sgemm_fn;
static __typeof__(cblas_dgemm) *bw_dgemm_fn;
static void (*bw_set_threads_fn)(int);
static int (*bw_get_threads_fn)(void);
static char *(*bw_corename_fn)(void);
static char *(*bw_config_fn)(void);

// bw_open loads the library and finds its routines; it returns NULL, or
// why it could not.
static const char *bw_open(const char *path) {
	void *h = dlopen(path, RTLD_NOW | RTLD_LOCAL);
	if (h == NULL) {
		return dlerror();
	}
	bw_sgemm_fn = (__typeof__(bw_sgemm_fn))dlsym(h, "cblas_sgemm");
	bw_dgemm_fn = (__typeof__(bw_dgemm_fn))dlsym(h, "cblas_dgemm");
	bw_set_threads_fn = (void (*)(int))dlsym(h, "openblas_set_num_threads");
	bw_get_threads_fn = (int (*)(void))dlsym(h, "openblas_get_num_threads");
	bw_corename_fn = (char *(*)(void))dlsym(h, "openblas_get_corename");
	bw_config_fn = (char *(*)(void))dlsym(h, "openblas_get_config");
	if (!bw_sgemm_fn || !bw_dgemm_fn || !bw_set_threads_fn || !bw_get_threads_fn || !bw_corename_fn || !bw_config_fn) {
		return "cblas_sgemm, cblas_dgemm or an openblas_* routine is missing";
	}
	return NULL;
}

static const char *bw_corename(void) { return bw_corename_fn(); }
static const char *bw_config(void) { return bw_config_fn(); }
static void bw_set_threads(int n) { bw_set_threads_fn(n); }
static int bw_get_threads(void) { return bw_get_threads_fn(); }

// beta is 1: the caller has already scaled C.
static void bw_sgemm(int ta, int tb, int m, int n, int k, float alpha,
		const float *a, int lda, const float *b, int ldb, float *c, int ldc) {
	bw_sgemm_fn(CblasRowMajor, ta ? CblasTrans : CblasNoTrans, tb ? CblasTrans : CblasNoTrans,
		m, n, k, alpha, a, lda, b, ldb, 1.0f, c, ldc);
}

static void bw_dgemm(int ta, int tb, int m, int n, int k, double alpha,
		const double *a, int lda, const double *b, int ldb, double *c, int ldc) {
	bw_dgemm_fn(CblasRowMajor, ta ? CblasTrans : CblasNoTrans, tb ? CblasTrans : CblasNoTrans,
		m, n, k, alpha, a, lda, b, ldb, 1.0, c, ldc);
}
*/
import "C"

import (
	"errors"
	"unsafe"
)

// Open loads the first of libs that loads and has the routines; it may be
// called again after a failure. OpenBLAS reads OPENBLAS_CORETYPE and
// OPENBLAS_NUM_THREADS while it loads.
func Open(libs []string) error {
	var first error
	for _, lib := range libs {
		p := C.CString(lib)
		e := C.bw_open(p)
		C.free(unsafe.Pointer(p))
		if e == nil {
			return nil
		}
		if first == nil {
			first = errors.New(C.GoString(e))
		}
	}
	if first == nil {
		first = errors.New("no library named")
	}
	return first
}

// CoreName is openblas_get_corename: the kernels OpenBLAS chose.
func CoreName() string { return C.GoString(C.bw_corename()) }

// Config is openblas_get_config: version and build options.
func Config() string { return C.GoString(C.bw_config()) }

// SetThreads is openblas_set_num_threads.
func SetThreads(n int) { C.bw_set_threads(C.int(n)) }

// Threads is openblas_get_num_threads.
func Threads() int { return int(C.bw_get_threads()) }

func cbool(b bool) C.int {
	if b {
		return 1
	}
	return 0
}

// Sgemm is cblas_sgemm on row-major matrices with beta = 1. The caller
// checks shapes and that every size fits in a C int.
func Sgemm(transA, transB bool, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, c []float32, ldc int) {
	C.bw_sgemm(cbool(transA), cbool(transB), C.int(m), C.int(n), C.int(k), C.float(alpha),
		(*C.float)(unsafe.Pointer(&a[0])), C.int(lda), (*C.float)(unsafe.Pointer(&b[0])), C.int(ldb),
		(*C.float)(unsafe.Pointer(&c[0])), C.int(ldc))
}

// Dgemm is cblas_dgemm on row-major matrices with beta = 1, like Sgemm.
func Dgemm(transA, transB bool, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
	C.bw_dgemm(cbool(transA), cbool(transB), C.int(m), C.int(n), C.int(k), C.double(alpha),
		(*C.double)(unsafe.Pointer(&a[0])), C.int(lda), (*C.double)(unsafe.Pointer(&b[0])), C.int(ldb),
		(*C.double)(unsafe.Pointer(&c[0])), C.int(ldc))
}
