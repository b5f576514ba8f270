package nn

import (
	"runtime"
	"sync"
	"sync/atomic"
	"unsafe"
)

// Blocking of the GEMM (after Goto & van de Geijn): a kc×nc panel of B is
// packed once and shared, mc×kc blocks of A are packed per goroutine, and a
// mr×nr register tile of C is accumulated over kc steps. kc is fixed so
// that the order of the sums never depends on the thread count. The 2×4
// tile is the largest that Go keeps in the 16 SSE registers without
// spilling much; 4×4 measured slower here.
const (
	gemmMR = 2
	gemmNR = 4
	gemmKC = 256
	gemmMC = 64
	gemmNC = 2048
)

var threads atomic.Int32

// SetThreads sets how many goroutines Gemm and the layers use; n <= 0
// restores the default, runtime.GOMAXPROCS(0). Results are bit-identical
// whatever the setting, so this only trades speed for CPU (with the openblas
// tag, only for a fixed setting: see the package doc).
func SetThreads(n int) { threads.Store(int32(max(n, 0))) }

// Threads returns how many goroutines Gemm and the layers use.
func Threads() int {
	if n := int(threads.Load()); n > 0 {
		return n
	}
	return runtime.GOMAXPROCS(0)
}

// Gemm computes C = alpha·op(A)·op(B) + beta·C on row-major matrices, as
// the BLAS routine of that name: op(A) is m×k, op(B) is k×n, C is m×n with
// row stride ldc. With transA, a holds A as k×m (so op(A) = Aᵀ), likewise
// for transB; lda and ldb are the row strides of a and b as stored. With
// beta = 0, C is overwritten (NaNs in it do not survive).
//
// Rows or columns of C are shared among Threads() goroutines; each
// element is computed by one goroutine, summing over k in the same order
// whatever the thread count, so the result does not depend on it. On amd64 CPUs with
// AVX2 and FMA, float32 products take an assembly path (see plan32) whose
// fused multiply-adds round differently from the pure-Go kernel, so the
// two paths may differ in the last bits; each is deterministic.
func Gemm[T Float](transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	gemm(Threads(), transA, transB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}

// gemm is Gemm on nt goroutines, for callers that already share the
// threads out (a conv layer running images side by side).
func gemm[T Float](nt int, transA, transB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	checkGemm(transA, m, k, len(a), lda, "A")
	product(nt, transA, transB, m, n, k, alpha, a, lda, nil, b, ldb, nil, beta, c, ldc)
}

// packedA is op(A), m×k, packed once in the layout of the path Gemm takes
// for T, for several products with the same A (a conv layer's weights
// times each panel of each image).
type packedA[T Float] struct {
	m, k int
	buf  *[]T
}

// packGemmA packs op(A) on nt goroutines; free returns the buffer.
func packGemmA[T Float](nt int, trans bool, m, k int, a []T, lda int) packedA[T] {
	checkGemm(trans, m, k, len(a), lda, "A")
	var z T
	if useAsm32 && unsafe.Sizeof(z) == 4 {
		buf := getBuf[T](roundUp(m, gemm32MR) * k)
		packWholeA(plan32, nt, trans, asF32(a), lda, m, k, asF32(*buf))
		return packedA[T]{m, k, buf}
	}
	buf := getBuf[T](roundUp(m, gemmMR) * k)
	packWholeA(pureGoPlan[T](), nt, trans, a, lda, m, k, *buf)
	return packedA[T]{m, k, buf}
}

func (pa packedA[T]) free() { putBuf(pa.buf) }

// gemmPacked is gemm with A packed beforehand; the bits are gemm's.
func gemmPacked[T Float](nt int, pa packedA[T], transB bool, n int, alpha T, b []T, ldb int, beta T, c []T, ldc int) {
	if pa.m == 0 || n == 0 {
		return
	}
	product(nt, false, transB, pa.m, n, pa.k, alpha, nil, 0, *pa.buf, b, ldb, nil, beta, c, ldc)
}

// gemmPackedAB is gemmPacked with B (k×n) also packed by the caller, all
// of it, in the layout gemmBLayout describes; the bits are gemm's.
func gemmPackedAB[T Float](nt int, pa packedA[T], bw []T, n int, alpha, beta T, c []T, ldc int) {
	if pa.m == 0 || n == 0 {
		return
	}
	if _, nr := gemmBLayout[T](); len(bw) < pa.k*roundUp(n, nr) {
		panic("nn.Gemm: packed B is too short")
	}
	product(nt, false, false, pa.m, n, pa.k, alpha, nil, 0, *pa.buf, nil, 0, bw, beta, c, ldc)
}

// gemmBLayout returns the kc and nr of the path Gemm takes for T, which
// fix the layout of a k×n matrix B packed whole: its kc block at pc
// starts at pc·roundUp(n, nr) and holds strips of nr columns, each kc×nr
// row-major, one after another. Products split along k at multiples of
// kc sum in the same blocks, so give the same bits.
func gemmBLayout[T Float]() (kc, nr int) {
	var z T
	if useAsm32 && unsafe.Sizeof(z) == 4 {
		return gemm32KC, gemm32NR
	}
	return gemmKC, gemmNR
}

// product checks B and C, applies beta and runs the kernel's driver, with
// A either as stored (a, lda) or packed whole (ap, from packGemmA), and
// likewise B (b, ldb) or bw.
func product[T Float](nt int, transA, transB bool, m, n, k int, alpha T, a []T, lda int, ap []T, b []T, ldb int, bw []T, beta T, c []T, ldc int) {
	if bw == nil {
		checkGemm(transB, k, n, len(b), ldb, "B")
	}
	checkGemm(false, m, n, len(c), ldc, "C")
	if beta != 1 {
		parallelFor(m, nt, max(1, (1<<16)/n), func(lo, hi int) {
			for i := lo; i < hi; i++ {
				row := c[i*ldc : i*ldc+n]
				if beta == 0 {
					clear(row)
				} else {
					for j := range row {
						row[j] *= beta
					}
				}
			}
		})
	}
	if k == 0 || alpha == 0 {
		return
	}
	// OpenBLAS takes matrices as stored; packed ones are the Go kernels' layout.
	if ap == nil && bw == nil && gemmBLAS(transA, transB, m, n, k, alpha, a, lda, b, ldb, c, ldc) {
		return
	}
	// Size 4 means an underlying float32, which has float32's layout.
	if useAsm32 && unsafe.Sizeof(alpha) == 4 {
		blocked(plan32, nt, transA, transB, m, n, k, *(*float32)(unsafe.Pointer(&alpha)), asF32(a), lda, asF32(ap), asF32(b), ldb, asF32(bw), asF32(c), ldc)
		return
	}
	blocked(pureGoPlan[T](), nt, transA, transB, m, n, k, alpha, a, lda, ap, b, ldb, bw, c, ldc)
}

// gemmPlan is one blocking of the driver: the register tile and block
// sizes, and the packing and kernel routines made for them.
type gemmPlan[T Float] struct {
	mr, nr, kc, mc, nc int
	packA              func(trans bool, a []T, lda, ic, pc, mb, kc int, dst []T)
	packB              func(trans bool, b []T, ldb, pc, jc, kc, nc int, dst []T)
	kernel             func(mb, nc, kc int, alpha T, ap, bp []T, c []T, ldc int)
}

// panelB returns the packed kc×nc panel of B at (pc, jc): a slice of bw
// when B came packed whole (np columns rounded up to the strip), else
// packed into *buf now.
func (p gemmPlan[T]) panelB(transB bool, b []T, ldb int, bw []T, np, pc, jc, kc, nc int, buf *[]T) []T {
	if bw != nil {
		return bw[pc*np+jc*kc:]
	}
	p.packB(transB, b, ldb, pc, jc, kc, nc, *buf)
	return *buf
}

func pureGoPlan[T Float]() gemmPlan[T] {
	return gemmPlan[T]{gemmMR, gemmNR, gemmKC, gemmMC, gemmNC, packA[T], packB[T], macroKernel[T]}
}

// blocked adds alpha·op(A)·op(B) to C in the plan's blocks; Gemm has
// checked the shapes, scaled C by beta and ruled out k = 0 and alpha = 0.
// A non-nil ap is all of op(A) packed by packWholeA, and a is unused;
// a non-nil bw is all of op(B) packed as gemmBLayout says, and b unused.
func blocked[T Float](p gemmPlan[T], nt int, transA, transB bool, m, n, k int, alpha T, a []T, lda int, ap []T, b []T, ldb int, bw []T, c []T, ldc int) {
	if nt > 1 && (ap != nil || splitColumns(p, nt, m, n, k)) {
		blockedColumns(p, nt, transA, transB, m, n, k, alpha, a, lda, ap, b, ldb, bw, c, ldc)
		return
	}
	mp, np := roundUp(m, p.mr), roundUp(n, p.nr)
	// Blocks of rows small enough that every goroutine gets some, but whole
	// register tiles; the block size does not change any sum's order.
	mc := min(p.mc/p.mr, ceilDiv(ceilDiv(m, nt), p.mr)) * p.mr
	nblk := ceilDiv(m, mc)
	nt = min(nt, nblk)

	var bp *[]T
	if bw == nil {
		bp = getBuf[T](p.kc * roundUp(min(n, p.nc), p.nr))
		defer putBuf(bp)
	}
	aps := make([]*[]T, nt)
	for t := range aps {
		if ap == nil {
			aps[t] = getBuf[T](mc * p.kc)
			defer putBuf(aps[t])
		}
	}
	for jc := 0; jc < n; jc += p.nc {
		nc := min(p.nc, n-jc)
		for pc := 0; pc < k; pc += p.kc {
			kc := min(p.kc, k-pc)
			bs := p.panelB(transB, b, ldb, bw, np, pc, jc, kc, nc, bp)
			block := func(t, ib int) {
				ic := ib * mc
				mb := min(mc, m-ic)
				if ap != nil {
					p.kernel(mb, nc, kc, alpha, ap[pc*mp+ic*kc:], bs, c[ic*ldc+jc:], ldc)
					return
				}
				p.packA(transA, a, lda, ic, pc, mb, kc, *aps[t])
				p.kernel(mb, nc, kc, alpha, *aps[t], bs, c[ic*ldc+jc:], ldc)
			}
			if nt == 1 {
				for ib := range nblk {
					block(0, ib)
				}
				continue
			}
			var next atomic.Int32
			var wg sync.WaitGroup
			for t := range nt {
				wg.Go(func() {
					for {
						ib := int(next.Add(1)) - 1
						if ib >= nblk {
							return
						}
						block(t, ib)
					}
				})
			}
			wg.Wait()
		}
	}
}

// splitColumns reports whether the columns of C, rather than its rows,
// should be shared out: when there are too few rows for every goroutine
// to get whole blocks (conv layers have 16 to 96 output channels and
// thousands of pixels) and all of A, packed, is small. Row blocks pack the
// B panel in one goroutine while the others wait, which then dominates.
func splitColumns[T Float](p gemmPlan[T], nt, m, n, k int) bool {
	return ceilDiv(m, p.mc) < 2*nt && n >= 2*nt*p.nr && roundUp(m, p.mr)*k <= 1<<21
}

// blockedColumns packs all of A once, in parallel, unless ap has it, and
// then hands out panels of columns; each goroutine packs the part of B
// its panel needs. Every element of C still gets its kc blocks in order
// from one goroutine, through the same kernel, so the result is that of
// the serial driver.
func blockedColumns[T Float](p gemmPlan[T], nt int, transA, transB bool, m, n, k int, alpha T, a []T, lda int, ap []T, b []T, ldb int, bw []T, c []T, ldc int) {
	mp, np := roundUp(m, p.mr), roundUp(n, p.nr)
	if ap == nil {
		buf := getBuf[T](mp * k)
		defer putBuf(buf)
		ap = *buf
		packWholeA(p, nt, transA, a, lda, m, k, ap)
	}
	w := min(p.nc, roundUp(ceilDiv(n, 4*nt), p.nr))
	parallelFor(ceilDiv(n, w), nt, 1, func(lo, hi int) {
		var bp *[]T
		if bw == nil {
			bp = getBuf[T](p.kc * w)
			defer putBuf(bp)
		}
		for jc := lo * w; jc < min(n, hi*w); jc += w {
			nc := min(w, n-jc)
			for pc := 0; pc < k; pc += p.kc {
				kc := min(p.kc, k-pc)
				bs := p.panelB(transB, b, ldb, bw, np, pc, jc, kc, nc, bp)
				for ic := 0; ic < m; ic += p.mc {
					p.kernel(min(p.mc, m-ic), nc, kc, alpha, ap[pc*mp+ic*kc:], bs, c[ic*ldc+jc:], ldc)
				}
			}
		}
	})
}

// packWholeA packs all of op(A) into dst on nt goroutines: its kc block
// at pc starts at pc·roundUp(m, mr), and within that, rows from ic (a
// multiple of mr) start at ic·kc, as the kernel reads them.
func packWholeA[T Float](p gemmPlan[T], nt int, trans bool, a []T, lda, m, k int, dst []T) {
	mp := roundUp(m, p.mr)
	nib := ceilDiv(m, p.mc)
	parallelFor(ceilDiv(k, p.kc)*nib, nt, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			pc, ic := i/nib*p.kc, i%nib*p.mc
			kc := min(p.kc, k-pc)
			p.packA(trans, a, lda, ic, pc, min(p.mc, m-ic), kc, dst[pc*mp+ic*kc:])
		}
	})
}

// stored is the shape in memory of an operand that is rows×cols after
// op(): swapped when it is transposed.
func stored(trans bool, rows, cols int) (int, int) {
	if trans {
		return cols, rows
	}
	return rows, cols
}

func checkGemm(trans bool, rows, cols, n, ld int, name string) {
	rows, cols = stored(trans, rows, cols)
	if rows == 0 || cols == 0 {
		return
	}
	if ld < cols || n < (rows-1)*ld+cols {
		panic("nn.Gemm: " + name + " is too short for its shape and stride")
	}
}

// packA copies rows ic..ic+mb, columns pc..pc+kc of op(A) into strips of
// gemmMR rows, k-major, padding the last strip with zeros.
func packA[T Float](trans bool, a []T, lda, ic, pc, mb, kc int, dst []T) {
	d := 0
	for i0 := 0; i0 < mb; i0 += gemmMR {
		r := min(gemmMR, mb-i0)
		for p := range kc {
			for i := range gemmMR {
				var v T
				if i < r {
					if trans {
						v = a[(pc+p)*lda+ic+i0+i]
					} else {
						v = a[(ic+i0+i)*lda+pc+p]
					}
				}
				dst[d] = v
				d++
			}
		}
	}
}

// packB copies rows pc..pc+kc, columns jc..jc+nc of op(B) into strips of
// gemmNR columns, k-major, padding the last strip with zeros.
func packB[T Float](trans bool, b []T, ldb, pc, jc, kc, nc int, dst []T) {
	d := 0
	for j0 := 0; j0 < nc; j0 += gemmNR {
		r := min(gemmNR, nc-j0)
		for p := range kc {
			if !trans && r == gemmNR {
				row := b[(pc+p)*ldb+jc+j0:]
				dst[d], dst[d+1], dst[d+2], dst[d+3] = row[0], row[1], row[2], row[3]
				d += gemmNR
				continue
			}
			for j := range gemmNR {
				var v T
				if j < r {
					if trans {
						v = b[(jc+j0+j)*ldb+pc+p]
					} else {
						v = b[(pc+p)*ldb+jc+j0+j]
					}
				}
				dst[d] = v
				d++
			}
		}
	}
}

// macroKernel adds alpha·Ap·Bp to the mb×nc block of C at c. Padded tiles
// go through the same kernel as full ones, so every element of C is summed
// by the same instructions.
func macroKernel[T Float](mb, nc, kc int, alpha T, ap, bp []T, c []T, ldc int) {
	var tile [gemmMR * gemmNR]T
	for j0 := 0; j0 < nc; j0 += gemmNR {
		bs := bp[j0*kc : (j0+gemmNR)*kc]
		nr := min(gemmNR, nc-j0)
		for i0 := 0; i0 < mb; i0 += gemmMR {
			as := ap[i0*kc : (i0+gemmMR)*kc]
			microKernel(kc, as, bs, &tile)
			mr := min(gemmMR, mb-i0)
			for i := range mr {
				row := c[(i0+i)*ldc+j0 : (i0+i)*ldc+j0+nr]
				for j := range row {
					row[j] += alpha * tile[i*gemmNR+j]
				}
			}
		}
	}
}

// microKernel sums a gemmMR×gemmNR tile over kc steps in registers.
func microKernel[T Float](kc int, a, b []T, out *[gemmMR * gemmNR]T) {
	var c00, c01, c02, c03 T
	var c10, c11, c12, c13 T
	a = a[:kc*gemmMR]
	b = b[:kc*gemmNR]
	for len(a) >= 2 && len(b) >= 4 {
		b0, b1, b2, b3 := b[0], b[1], b[2], b[3]
		a0 := a[0]
		c00 += a0 * b0
		c01 += a0 * b1
		c02 += a0 * b2
		c03 += a0 * b3
		a1 := a[1]
		c10 += a1 * b0
		c11 += a1 * b1
		c12 += a1 * b2
		c13 += a1 * b3
		a = a[2:]
		b = b[4:]
	}
	*out = [gemmMR * gemmNR]T{
		c00, c01, c02, c03,
		c10, c11, c12, c13,
	}
}

func ceilDiv(a, b int) int { return (a + b - 1) / b }

func roundUp(a, b int) int { return ceilDiv(a, b) * b }

// Scratch buffers are pooled per element type: a conv layer calls Gemm
// once per image and per pass. Named float types share poolOther, where a
// buffer of the wrong type is just not reused.
var (
	pool32, pool64, poolOther sync.Pool
)

func getBuf[T Float](n int) *[]T {
	p := poolFor[T]()
	if v, ok := p.Get().(*[]T); ok && cap(*v) >= n {
		*v = (*v)[:n]
		return v
	}
	s := make([]T, n)
	return &s
}

func putBuf[T Float](b *[]T) { poolFor[T]().Put(b) }

func poolFor[T Float]() *sync.Pool {
	var z T
	switch any(z).(type) {
	case float32:
		return &pool32
	case float64:
		return &pool64
	}
	return &poolOther
}
