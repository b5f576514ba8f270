//go:build openblas && cgo

package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"slices"
	"strings"
	"sync"
	"testing"

	"boxwright/suggest/detector/nn/internal/openblas"
)

// needBLAS sends Gemm to OpenBLAS for one test. A build with the tag that
// cannot use the library fails rather than skips, unless BOXWRIGHT_GEMM
// asked for the Go kernels.
func needBLAS(t testing.TB) {
	blasInit()
	if v := os.Getenv("BOXWRIGHT_GEMM"); v == "purego" || v == "asm" {
		t.Skip("BOXWRIGHT_GEMM=" + v + " keeps OpenBLAS off")
	}
	if !blas.usable {
		t.Fatalf("built with -tags openblas but OpenBLAS is unusable: %s", blasStatus())
	}
	old := useBLAS
	useBLAS = true
	t.Cleanup(func() { useBLAS = old })
}

// runGemm runs Gemm on a copy of c through OpenBLAS or the pure-Go kernel.
func runGemm[T Float](t *testing.T, viaBLAS bool, ta, tb bool, m, n, k int, alpha, beta T, a []T, lda int, b []T, ldb int, c []T, ldc int) []T {
	t.Helper()
	oldB, oldA := useBLAS, useAsm32
	useBLAS, useAsm32 = viaBLAS, false
	defer func() { useBLAS, useAsm32 = oldB, oldA }()
	got := slices.Clone(c)
	Gemm(ta, tb, m, n, k, alpha, a, lda, b, ldb, beta, got, ldc)
	return got
}

var blasSizes = [][3]int{
	{1, 1, 1}, {1, 7, 3}, {5, 1, 9}, {7, 13, 5}, {3, 3, 257}, {17, 19, 1},
	{67, 131, 259}, {130, 5, 600}, {9, 2051, 17}, {97, 33, 257}, {300, 517, 1153},
}

// testBLASAgainstGo compares OpenBLAS with the pure-Go kernel for every
// size, transpose combination and alpha, beta pair. tol is per unit of k.
func testBLASAgainstGo[T Float](t *testing.T, tol float64) {
	needBLAS(t)
	r := rand.New(rand.NewPCG(21, 22))
	for _, sz := range blasSizes {
		m, n, k := sz[0], sz[1], sz[2]
		for ti, tr := range gemmTrans {
			for ai, ab := range gemmAlphaBeta {
				// One alpha, beta pair per transpose on the large products,
				// which the pure-Go reference is slow on.
				if m*n*k > 1<<20 && ai != ti%len(gemmAlphaBeta) {
					continue
				}
				a, b, c, lda, ldb, ldc := gemmCase[T](r, tr[0], tr[1], m, n, k, ab[1])
				alpha, beta := T(ab[0]), T(ab[1])
				got := runGemm(t, true, tr[0], tr[1], m, n, k, alpha, beta, a, lda, b, ldb, c, ldc)
				want := runGemm(t, false, tr[0], tr[1], m, n, k, alpha, beta, a, lda, b, ldb, c, ldc)
				lim := tol * (float64(k)*math.Abs(ab[0]) + math.Abs(ab[1]) + 1)
				for i := range m {
					for j := range n {
						g, w := float64(got[i*ldc+j]), float64(want[i*ldc+j])
						if !(math.Abs(g-w) <= lim) {
							t.Fatalf("%dx%dx%d trans=%v alpha,beta=%v: OpenBLAS C[%d,%d] = %v, pure Go %v", m, n, k, tr, ab, i, j, g, w)
						}
					}
					for j := n; j < ldc && i < m-1; j++ {
						if g, w := float64(got[i*ldc+j]), float64(c[i*ldc+j]); g != w && !(math.IsNaN(g) && math.IsNaN(w)) {
							t.Fatalf("%dx%dx%d trans=%v: OpenBLAS changed the gap C[%d,%d]", m, n, k, tr, i, j)
						}
					}
				}
			}
		}
	}
}

// TestOpenBLASAgainstGo32 checks cblas_sgemm on odd sizes, sizes that
// cross block edges and one that OpenBLAS threads, all four transpose
// combinations and three alpha, beta pairs. Reference: the package's own
// pure-Go kernel, itself checked against a naive triple loop
// (TestGemmAgainstNaive) and, through the conv layers, PyTorch
// (TestAgainstPyTorch).
func TestOpenBLASAgainstGo32(t *testing.T) { testBLASAgainstGo[float32](t, 1e-5) }

// TestOpenBLASAgainstGo64 is the same for cblas_dgemm. Reference: the
// package's own pure-Go kernel, as for float32.
func TestOpenBLASAgainstGo64(t *testing.T) { testBLASAgainstGo[float64](t, 1e-13) }

// TestOpenBLASNamedType checks that a named float32 type reaches
// cblas_sgemm and gets the same bits as float32. Reference: Gemm on plain
// float32 through OpenBLAS.
func TestOpenBLASNamedType(t *testing.T) {
	needBLAS(t)
	checkNamedFloat32(t, 23)
}

// TestOpenBLASDeterministic checks that for a fixed thread count repeated
// products are bit-identical, and that SetThreads reaches OpenBLAS
// (openblas_get_num_threads).
// Whether different counts agree is only logged: OpenBLAS does not
// promise it (and its single-threaded path sums differently). Reference:
// the first run at the same thread count.
func TestOpenBLASDeterministic(t *testing.T) {
	needBLAS(t)
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(25, 26))
	for _, sz := range [][3]int{{131, 67, 515}, {32, 4100, 300}, {257, 2100, 33}} {
		m, n, k := sz[0], sz[1], sz[2]
		for _, tr := range gemmTrans {
			a, b, c, lda, ldb, ldc := gemmCase[float32](r, tr[0], tr[1], m, n, k, 0.5)
			var first []float32
			var differ []int
			for _, th := range []int{1, 2, 3, 7} {
				SetThreads(th)
				var ref []float32
				for range 3 {
					got := runGemm(t, true, tr[0], tr[1], m, n, k, 1.25, 0.5, a, lda, b, ldb, c, ldc)
					if n := openblas.Threads(); n != th {
						t.Fatalf("SetThreads(%d) left OpenBLAS at %d threads", th, n)
					}
					if ref == nil {
						ref = got
						continue
					}
					if i := firstDiff(got, ref); i >= 0 {
						t.Fatalf("%dx%dx%d trans=%v, %d threads: run gives C[%d] = %v, first run %v", m, n, k, tr, th, i, got[i], ref[i])
					}
				}
				if first == nil {
					first = ref
				} else if firstDiff(ref, first) >= 0 {
					differ = append(differ, th)
				}
			}
			if differ != nil {
				t.Logf("%dx%dx%d trans=%v: %v threads differ from 1 thread in the last bits", m, n, k, tr, differ)
			}
		}
	}
}

// TestOpenBLASConcurrent runs products from several goroutines at once,
// as training and suggesting may, and checks each against the same
// product run alone. Reference: OpenBLAS run alone at the same thread
// count.
func TestOpenBLASConcurrent(t *testing.T) {
	needBLAS(t)
	defer SetThreads(0)
	SetThreads(2)
	r := rand.New(rand.NewPCG(27, 28))
	type job struct {
		m, n, k      int
		a, b, c, out []float32
	}
	jobs := make([]job, 6)
	for i := range jobs {
		m, n, k := 40+17*i, 300+50*i, 100+30*i
		j := job{m: m, n: n, k: k, a: randSlice[float32](r, m*k), b: randSlice[float32](r, k*n), c: randSlice[float32](r, m*n)}
		j.out = runGemm(t, true, false, false, m, n, k, 1, 1, j.a, k, j.b, n, j.c, n)
		jobs[i] = j
	}
	var wg sync.WaitGroup
	errs := make([]string, len(jobs))
	for i, j := range jobs {
		wg.Go(func() {
			for range 5 {
				got := slices.Clone(j.c)
				Gemm(false, false, j.m, j.n, j.k, 1, j.a, j.k, j.b, j.n, 1, got, j.n)
				if d := firstDiff(got, j.out); d >= 0 {
					errs[i] = fmt.Sprintf("job %d: C[%d] = %v, alone %v", i, d, got[d], j.out[d])
					return
				}
			}
		})
	}
	wg.Wait()
	for _, e := range errs {
		if e != "" {
			t.Error(e)
		}
	}
}

// TestOpenBLASBackend checks what GemmBackend reports and the core-type
// choice for this CPU. Reference: x/sys/cpu's feature flags and
// openblas_get_corename.
func TestOpenBLASBackend(t *testing.T) {
	needBLAS(t)
	s := GemmBackend()
	t.Logf("GemmBackend: %s", s)
	if !strings.HasPrefix(s, "OpenBLAS ") {
		t.Fatalf("GemmBackend() = %q, want OpenBLAS", s)
	}
	if os.Getenv("OPENBLAS_CORETYPE") == "" && cpuTier() >= 2 {
		if want := coreTypeFor(cpuTier()); !strings.Contains(s, "OPENBLAS_CORETYPE="+want+" chosen") {
			t.Errorf("GemmBackend() = %q, want OPENBLAS_CORETYPE=%s chosen", s, want)
		}
		if _, had := os.LookupEnv("OPENBLAS_CORETYPE"); had {
			t.Error("OPENBLAS_CORETYPE left in the environment after loading")
		}
	}
}

// TestOpenBLASCoreTiers checks the grading used to spot a library that
// runs kernels older than the CPU. Reference: the vector extensions each
// OpenBLAS core's kernels use (OpenBLAS's kernel/x86_64 sources).
func TestOpenBLASCoreTiers(t *testing.T) {
	for _, c := range []struct {
		core   string
		tier   int
		behind bool // on an AVX-512 CPU
	}{
		{"SkylakeX", 3, false}, {"Cooperlake", 3, false}, {"Haswell", 2, false}, {"Zen", 2, false},
		{"Sandybridge", 1, true}, {"Prescott", 0, true}, {"Nehalem", 0, true}, {"Core2", 0, true},
		{"SomeFutureCore", -1, false},
	} {
		if got := coreTier(c.core); got != c.tier {
			t.Errorf("coreTier(%q) = %d, want %d", c.core, got, c.tier)
		}
		if got := blasBehind(c.core, 3); got != c.behind {
			t.Errorf("blasBehind(%q, AVX-512) = %v, want %v", c.core, got, c.behind)
		}
	}
	if blasBehind("Sandybridge", 1) || blasBehind("Prescott", 0) {
		t.Error("a core as new as the CPU counted as behind")
	}
	for tier, want := range []string{"", "SANDYBRIDGE", "HASWELL", "SKYLAKEX"} {
		if got := coreTypeFor(tier); got != want {
			t.Errorf("coreTypeFor(%d) = %q, want %q", tier, got, want)
		}
	}
}

// TestOpenBLASCoretypeEnv checks, in child processes since OpenBLAS
// reads the variable while it loads, that an OPENBLAS_CORETYPE the user
// set is honoured and reported, and that BOXWRIGHT_GEMM=asm keeps the
// library out. Reference: openblas_get_corename in the child.
func TestOpenBLASCoretypeEnv(t *testing.T) {
	if os.Getenv("BOXWRIGHT_BLAS_CHILD") == "1" {
		fmt.Printf("BACKEND %s\n", GemmBackend())
		return
	}
	needBLAS(t)
	if testing.Short() {
		t.Skip("starts child processes")
	}
	child := func(env ...string) string {
		cmd := exec.Command(os.Args[0], "-test.run=^TestOpenBLASCoretypeEnv$", "-test.v")
		cmd.Env = append(os.Environ(), append(env, "BOXWRIGHT_BLAS_CHILD=1")...)
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Fatalf("child %v: %v\n%s", env, err, out)
		}
		for l := range strings.Lines(string(out)) {
			if s, ok := strings.CutPrefix(l, "BACKEND "); ok {
				return strings.TrimSpace(s)
			}
		}
		t.Fatalf("child %v printed no backend:\n%s", env, out)
		return ""
	}
	if s := child("OPENBLAS_CORETYPE=PRESCOTT"); !strings.Contains(s, "core Prescott (OPENBLAS_CORETYPE=PRESCOTT from the environment)") {
		t.Errorf("with OPENBLAS_CORETYPE=PRESCOTT: %q", s)
	}
	if s := child("BOXWRIGHT_GEMM=asm"); !strings.Contains(s, "OpenBLAS off") {
		t.Errorf("with BOXWRIGHT_GEMM=asm: %q", s)
	}
	if s := child("BOXWRIGHT_OPENBLAS=/nonexistent/libopenblas.so"); !strings.Contains(s, "OpenBLAS not loaded") {
		t.Errorf("with a missing library: %q", s)
	}
}
