//go:build openblas && cgo

package nn

import (
	"fmt"
	"math"
	"os"
	"runtime"
	"strings"
	"sync"
	"sync/atomic"
	"unsafe"

	"golang.org/x/sys/cpu"

	"boxwright/suggest/detector/nn/internal/openblas"
)

// useBLAS sends Gemm to OpenBLAS; blasInit sets it once, tests switch it.
var useBLAS bool

var blas struct {
	once    sync.Once
	usable  bool   // loaded and passed the self-check
	status  string // what GemmBackend reports
	mu      sync.RWMutex
	threads atomic.Int32 // what openblas_set_num_threads was last given
}

// blasInit loads and checks OpenBLAS on the first call and reports
// whether Gemm uses it.
func blasInit() bool {
	blas.once.Do(loadBLAS)
	return useBLAS
}

func blasStatus() string {
	blas.once.Do(loadBLAS)
	return blas.status
}

// blasLibs are tried in turn; BOXWRIGHT_OPENBLAS names another build.
func blasLibs() []string {
	if p := os.Getenv("BOXWRIGHT_OPENBLAS"); p != "" {
		return []string{p}
	}
	if runtime.GOOS == "darwin" {
		return []string{"libopenblas.dylib", "libopenblas.0.dylib"}
	}
	return []string{"libopenblas.so.0", "libopenblas.so"}
}

func loadBLAS() {
	if v := os.Getenv("BOXWRIGHT_GEMM"); v == "purego" || v == "asm" {
		blas.status = "OpenBLAS off (BOXWRIGHT_GEMM=" + v + ")"
		return
	}
	coreType, how := os.Getenv("OPENBLAS_CORETYPE"), "from the environment"
	weSet := false
	if coreType == "" {
		if coreType = coreTypeFor(cpuTier()); coreType != "" {
			// With cgo, os.Setenv reaches the C environment that
			// OpenBLAS's constructor reads; it is put back after loading.
			os.Setenv("OPENBLAS_CORETYPE", coreType)
			weSet, how = true, "chosen for this CPU"
		}
	}
	err := openblas.Open(blasLibs())
	if weSet {
		os.Unsetenv("OPENBLAS_CORETYPE")
	}
	if err != nil {
		blas.status = "OpenBLAS not loaded: " + err.Error()
		return
	}
	core := openblas.CoreName()
	version := strings.Join(firstN(strings.Fields(openblas.Config()), 2), " ")
	desc := fmt.Sprintf("%s, core %s", version, core)
	if coreType != "" {
		desc += fmt.Sprintf(" (OPENBLAS_CORETYPE=%s %s)", coreType, how)
	}
	setBLASThreads(int32(Threads()))
	if e := blasSelfCheck(blasGemm[float32], blasGemm[float64]); e != nil {
		blas.status = "OpenBLAS not used: " + desc + " failed the self-check: " + e.Error()
		return
	}
	blas.usable = true
	if weSet && blasBehind(core, cpuTier()) {
		// Asked for a core it did not take (an older build, or a copy
		// loaded earlier): its kernels would be slower than Go's.
		blas.status = "OpenBLAS not used: " + desc + " runs kernels older than this CPU"
		return
	}
	useBLAS = true
	blas.status = desc
}

func firstN(s []string, n int) []string { return s[:min(n, len(s))] }

// cpuTier grades the CPU's vector units: 3 for AVX-512, 2 for AVX2 with
// FMA, 1 for AVX, 0 below. x/sys/cpu counts a feature only if the OS
// saves its registers.
func cpuTier() int {
	x := cpu.X86
	switch {
	case x.HasAVX512F && x.HasAVX512CD && x.HasAVX512BW && x.HasAVX512DQ && x.HasAVX512VL:
		return 3
	case x.HasAVX2 && x.HasFMA:
		return 2
	case x.HasAVX:
		return 1
	}
	return 0
}

// coreTypeFor is the OPENBLAS_CORETYPE for a tier, "" to leave the choice
// to OpenBLAS. Its own detection can take an AVX-512 Xeon for an old core
// and run several times slower.
func coreTypeFor(tier int) string {
	return [...]string{"", "SANDYBRIDGE", "HASWELL", "SKYLAKEX"}[tier]
}

// coreTier grades an openblas_get_corename result like cpuTier; -1 for a
// name it does not know.
func coreTier(name string) int {
	switch strings.ToLower(name) {
	case "skylakex", "cooperlake", "sapphirerapids":
		return 3
	case "haswell", "zen":
		return 2
	case "sandybridge", "bulldozer", "piledriver", "steamroller", "excavator":
		return 1
	case "prescott", "core2", "penryn", "dunnington", "nehalem", "atom", "nano",
		"opteron", "opteron_sse3", "barcelona", "bobcat", "katmai", "coppermine", "northwood", "banias", "athlon":
		return 0
	}
	return -1
}

// blasBehind reports a core without AVX2 kernels on a CPU that has them,
// where the Go assembly kernel is faster.
func blasBehind(core string, cpuTier int) bool {
	t := coreTier(core)
	return t >= 0 && t < min(cpuTier, 2)
}

func setBLASThreads(n int32) {
	if blas.threads.Load() == n {
		return
	}
	blas.mu.Lock()
	defer blas.mu.Unlock()
	if blas.threads.Load() != n {
		openblas.SetThreads(int(n))
		blas.threads.Store(n)
	}
}

// gemmBLAS adds alpha·op(A)·op(B) to C with OpenBLAS if it is in use;
// Gemm has checked the shapes, scaled C by beta and ruled out empty
// products. OpenBLAS runs Threads() threads of its own.
func gemmBLAS[T Float](transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, c []T, ldc int) bool {
	if !blasInit() || max(m, n, k, lda, ldb, ldc) > math.MaxInt32 {
		return false
	}
	setBLASThreads(int32(Threads()))
	// Read-locked so that the thread count does not change mid-product.
	blas.mu.RLock()
	defer blas.mu.RUnlock()
	blasGemm(transA, transB, m, n, k, alpha, a, lda, b, ldb, c, ldc)
	return true
}

// blasGemm calls cblas_sgemm or cblas_dgemm with beta = 1; a named float
// type goes by its size, as in Gemm.
func blasGemm[T Float](transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, c []T, ldc int) {
	if unsafe.Sizeof(alpha) == 4 {
		openblas.Sgemm(transA, transB, m, n, k, *(*float32)(unsafe.Pointer(&alpha)), asF32(a), lda, asF32(b), ldb, asF32(c), ldc)
		return
	}
	openblas.Dgemm(transA, transB, m, n, k, *(*float64)(unsafe.Pointer(&alpha)), asF64(a), lda, asF64(b), ldb, asF64(c), ldc)
}
