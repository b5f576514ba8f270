package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"slices"
	"testing"
)

// setAsm32 switches the float32 path for one test and restores it after;
// it also keeps OpenBLAS out of the way.
func setAsm32(t testing.TB, on bool) {
	noBLAS(t)
	old := useAsm32
	useAsm32 = on
	t.Cleanup(func() { useAsm32 = old })
}

func needAsm32(t testing.TB) {
	if !haveAsm32 {
		t.Skip("no float32 assembly path: purego build, not amd64, or CPU without AVX2/FMA")
	}
}

// gemm32Case fills a float32 problem with strides wider than the rows and
// returns the inputs, a copy of C and the float64 reference result.
func gemm32Case(r *rand.Rand, ta, tb bool, m, n, k int, alpha, beta float64) (a, b, c []float32, lda, ldb, ldc int, want []float64) {
	a, b, c, lda, ldb, ldc = gemmCase[float32](r, ta, tb, m, n, k, beta)
	widen := func(s []float32) []float64 {
		d := make([]float64, len(s))
		for i, v := range s {
			d[i] = float64(v)
		}
		return d
	}
	want = widen(c)
	naiveGemm(ta, tb, m, n, k, alpha, widen(a), lda, widen(b), ldb, beta, want, ldc)
	return
}

// checkGemm32 compares got with the float64 reference within float32
// rounding, and checks that the gaps between rows of C are untouched.
func checkGemm32(t *testing.T, name string, m, n, k, ldc int, alpha, beta float64, c0, got []float32, want []float64) {
	t.Helper()
	tol := 1e-5 * (float64(k)*math.Abs(alpha) + math.Abs(beta) + 1)
	for i := range m {
		for j := range n {
			g, w := float64(got[i*ldc+j]), want[i*ldc+j]
			if !(math.Abs(g-w) <= tol) {
				t.Fatalf("%s: C[%d,%d] = %v, want %v (tol %g)", name, i, j, g, w, tol)
			}
		}
		for j := n; j < ldc && i < m-1; j++ {
			if math.Float32bits(got[i*ldc+j]) != math.Float32bits(c0[i*ldc+j]) {
				t.Fatalf("%s: gap C[%d,%d] changed", name, i, j)
			}
		}
	}
}

var gemmTrans = [][2]bool{{false, false}, {false, true}, {true, false}, {true, true}}
var gemmAlphaBeta = [][2]float64{{1, 0}, {0.7, 1}, {-1.5, 0.25}}

// TestGemm32AsmAgainstNaive checks the assembly float32 path against a
// float64 triple loop: every m, n and k in 1..70 (crossing the 6×16 tile
// edges), block edges of kc, mc and nc, and one large product, for all
// four transpose combinations. Source: the definition of the matrix
// product (naive loop).
func TestGemm32AsmAgainstNaive(t *testing.T) {
	needAsm32(t)
	setAsm32(t, true)
	r := rand.New(rand.NewPCG(7, 8))
	var sizes [][3]int
	for s := 1; s <= 70; s++ {
		sizes = append(sizes,
			[3]int{s, 1 + (s*7)%70, 1 + (s*13)%70},
			[3]int{1 + (s*11)%70, s, 1 + (s*5)%70},
			[3]int{1 + (s*3)%70, 1 + (s*17)%70, s})
	}
	sizes = append(sizes, [3]int{97, 33, 257}, [3]int{193, 50, 513}, [3]int{7, 4100, 20}, [3]int{300, 517, 1153})
	for si, sz := range sizes {
		m, n, k := sz[0], sz[1], sz[2]
		for ti, tr := range gemmTrans {
			ab := gemmAlphaBeta[(si+ti)%len(gemmAlphaBeta)]
			a, b, c, lda, ldb, ldc, want := gemm32Case(r, tr[0], tr[1], m, n, k, ab[0], ab[1])
			got := slices.Clone(c)
			Gemm(tr[0], tr[1], m, n, k, float32(ab[0]), a, lda, b, ldb, float32(ab[1]), got, ldc)
			name := fmt.Sprintf("%dx%dx%d trans=%v alpha,beta=%v", m, n, k, tr, ab)
			checkGemm32(t, name, m, n, k, ldc, ab[0], ab[1], c, got, want)
		}
	}
}

// TestGemm32AsmVsPureGo checks that the two float32 paths agree within
// rounding; they differ only in the order of roundings (FMA). Source: this
// package's pure-Go kernel.
func TestGemm32AsmVsPureGo(t *testing.T) {
	needAsm32(t)
	r := rand.New(rand.NewPCG(9, 10))
	for _, sz := range [][3]int{{1, 1, 1}, {6, 16, 4}, {13, 35, 77}, {64, 300, 288}, {130, 70, 600}} {
		m, n, k := sz[0], sz[1], sz[2]
		for _, tr := range gemmTrans {
			a, b, c, lda, ldb, ldc, _ := gemm32Case(r, tr[0], tr[1], m, n, k, 0.5, 1)
			run := func(asm bool) []float32 {
				setAsm32(t, asm)
				got := slices.Clone(c)
				Gemm(tr[0], tr[1], m, n, k, 0.5, a, lda, b, ldb, 1, got, ldc)
				return got
			}
			fast, slow := run(true), run(false)
			tol := 1e-5 * float64(k)
			for i := range fast {
				if d := math.Abs(float64(fast[i]) - float64(slow[i])); !(d <= tol) {
					t.Fatalf("%dx%dx%d trans=%v: asm C[%d] = %v, pure Go %v", m, n, k, tr, i, fast[i], slow[i])
				}
			}
		}
	}
}

// TestGemm32AsmThreadsBitIdentical checks the determinism rule on the
// assembly path, with sizes whose row blocks change with the thread count.
// Source: this package's determinism rule.
func TestGemm32AsmThreadsBitIdentical(t *testing.T) {
	needAsm32(t)
	setAsm32(t, true)
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(11, 12))
	for _, sz := range [][3]int{{131, 67, 515}, {8, 300, 40}, {32, 4100, 300}, {257, 2100, 33}} {
		m, n, k := sz[0], sz[1], sz[2]
		for _, tr := range gemmTrans {
			a, b, c, lda, ldb, ldc, _ := gemm32Case(r, tr[0], tr[1], m, n, k, 1.25, 0.5)
			var ref []float32
			for _, th := range []int{1, 2, 3, 7} {
				SetThreads(th)
				got := slices.Clone(c)
				Gemm(tr[0], tr[1], m, n, k, 1.25, a, lda, b, ldb, 0.5, got, ldc)
				if ref == nil {
					ref = got
					continue
				}
				for i := range got {
					if math.Float32bits(got[i]) != math.Float32bits(ref[i]) {
						t.Fatalf("%dx%dx%d trans=%v: %d threads give C[%d] = %v, 1 thread %v", m, n, k, tr, th, i, got[i], ref[i])
					}
				}
			}
		}
	}
}

// TestGemm32AsmNamedType checks that a named float32 type takes the same
// path, bit for bit. Source: Float admits ~float32.
func TestGemm32AsmNamedType(t *testing.T) {
	needAsm32(t)
	setAsm32(t, true)
	checkNamedFloat32(t, 13)
}

// TestGemmEnvPurego checks that BOXWRIGHT_GEMM=purego turns the assembly
// path off, in a child process since the variable is read at start-up.
// Source: this package's documented switch.
func TestGemmEnvPurego(t *testing.T) {
	if os.Getenv("BOXWRIGHT_GEMM_CHILD") == "1" {
		if useAsm32 {
			t.Fatal("assembly path on despite BOXWRIGHT_GEMM=purego")
		}
		return
	}
	needAsm32(t)
	if testing.Short() {
		t.Skip("starts a child process")
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestGemmEnvPurego$")
	cmd.Env = append(os.Environ(), "BOXWRIGHT_GEMM=purego", "BOXWRIGHT_GEMM_CHILD=1")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("child: %v\n%s", err, out)
	}
}

// BenchmarkGemm32 reports GFLOP/s of the assembly and the pure-Go float32
// paths side by side, for the large convolution GEMM of BenchmarkGemm and
// a small one (32 output channels, 3×3×32 inputs, a 36×32 map).
func BenchmarkGemm32(b *testing.B) {
	for _, sz := range [][3]int{{256, 4096, 1152}, {32, 1152, 288}} {
		m, n, k := sz[0], sz[1], sz[2]
		r := rand.New(rand.NewPCG(1, 2))
		a, bb := randSlice[float32](r, m*k), randSlice[float32](r, k*n)
		c := make([]float32, m*n)
		for _, path := range []string{"asm", "purego"} {
			b.Run(fmt.Sprintf("%s/%dx%dx%d", path, m, n, k), func(b *testing.B) {
				if path == "asm" {
					needAsm32(b)
				}
				setAsm32(b, path == "asm")
				for b.Loop() {
					Gemm(false, false, m, n, k, 1, a, k, bb, n, 0, c, n)
				}
				b.ReportMetric(2*float64(m)*float64(n)*float64(k)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
			})
		}
	}
}

// checkNamedFloat32 multiplies on a named float32 type and on float32 and
// fails unless the bits agree.
func checkNamedFloat32(t *testing.T, seed uint64) {
	t.Helper()
	type f32 float32
	r := rand.New(rand.NewPCG(seed, seed+1))
	m, n, k := 19, 37, 41
	a, b := randSlice[float32](r, m*k), randSlice[float32](r, k*n)
	want := make([]float32, m*n)
	Gemm(false, false, m, n, k, 1, a, k, b, n, 0, want, n)
	na, nb := make([]f32, len(a)), make([]f32, len(b))
	for i, v := range a {
		na[i] = f32(v)
	}
	for i, v := range b {
		nb[i] = f32(v)
	}
	got := make([]f32, m*n)
	Gemm(false, false, m, n, k, 1, na, k, nb, n, 0, got, n)
	for i := range got {
		if math.Float32bits(float32(got[i])) != math.Float32bits(want[i]) {
			t.Fatalf("C[%d] = %v, float32 gives %v", i, got[i], want[i])
		}
	}
}

// gemmCase fills a GEMM problem with strides wider than the rows; with beta 0,
// C starts as NaN, which must be overwritten.
func gemmCase[T Float](r *rand.Rand, ta, tb bool, m, n, k int, beta float64) (a, b, c []T, lda, ldb, ldc int) {
	ar, ac := stored(ta, m, k)
	br, bc := stored(tb, k, n)
	lda, ldb, ldc = ac+3, bc+1, n+2
	a = randSlice[T](r, (ar-1)*lda+ac)
	b = randSlice[T](r, (br-1)*ldb+bc)
	c = randSlice[T](r, (m-1)*ldc+n)
	if beta == 0 {
		for i := range c {
			c[i] = T(math.NaN())
		}
	}
	return
}
