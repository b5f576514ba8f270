package nn

import (
	"unsafe"
)

// Blocking of the float32 assembly path. The 6×16 tile keeps 12 YMM
// accumulators plus two B rows and a broadcast in the 16 YMM registers; a
// kc×16 strip of B (24 KiB) stays in L1 while the mc×kc block of A (180
// KiB) is streamed from L2. kc = 384 takes the common k = 288 (3×3×32) in
// one block; block sizes were chosen by BenchmarkGemm32, which is noisy on
// a shared machine. kc is fixed, as in the generic path, so the order of
// the sums never depends on the thread count.
const (
	gemm32MR = 6
	gemm32NR = 16
	gemm32KC = 384
	gemm32MC = 120
	gemm32NC = 4096
)

// asF32 reinterprets a slice of a type whose underlying type is float32.
func asF32[T Float](s []T) []float32 {
	return unsafe.Slice((*float32)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

// asF64 is asF32 for float64.
func asF64[T Float](s []T) []float64 {
	return unsafe.Slice((*float64)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

// plan32 is the blocking of the assembly path. The kernel sums with FMA,
// so results may differ in the last bits from the pure-Go path, but not
// with the thread count: each element is still summed by one goroutine in
// a fixed order.
var plan32 = gemmPlan[float32]{gemm32MR, gemm32NR, gemm32KC, gemm32MC, gemm32NC, packA32, packB32, macroKernel32}

// packA32 copies rows ic..ic+mb, columns pc..pc+kc of op(A) into strips of
// gemm32MR rows, k-major, padding the last strip with zeros. The loops run
// along the stored rows so that the reads are sequential.
func packA32(trans bool, a []float32, lda, ic, pc, mb, kc int, dst []float32) {
	const mr = gemm32MR
	for i0 := 0; i0 < mb; i0 += mr {
		r := min(mr, mb-i0)
		s := dst[i0*kc : (i0+mr)*kc]
		if trans {
			for p := range kc {
				row := a[(pc+p)*lda+ic+i0:]
				d := s[p*mr : p*mr+mr]
				for i := range r {
					d[i] = row[i]
				}
				clear(d[r:])
			}
			continue
		}
		for i := range r {
			row := a[(ic+i0+i)*lda+pc : (ic+i0+i)*lda+pc+kc]
			for p, v := range row {
				s[p*mr+i] = v
			}
		}
		for i := r; i < mr; i++ {
			for p := range kc {
				s[p*mr+i] = 0
			}
		}
	}
}

// packB32 copies rows pc..pc+kc, columns jc..jc+nc of op(B) into strips of
// gemm32NR columns, k-major, padding the last strip with zeros.
func packB32(trans bool, b []float32, ldb, pc, jc, kc, nc int, dst []float32) {
	const nr = gemm32NR
	if !trans {
		// Strip by strip: the reads walk down 64-byte pieces of kc rows,
		// the writes are sequential. The copy goes through a local so that
		// it is moved in registers rather than by a call to memmove.
		full := nc / nr * nr
		for j0 := 0; j0 < full; j0 += nr {
			s := dst[j0*kc : (j0+nr)*kc]
			src := b[pc*ldb+jc+j0:]
			for p := range kc {
				v := *(*[nr]float32)(src[p*ldb:])
				*(*[nr]float32)(s[p*nr:]) = v
			}
		}
		if full < nc {
			s := dst[full*kc : (full+nr)*kc]
			for p := range kc {
				d := s[p*nr : p*nr+nr]
				copy(d, b[(pc+p)*ldb+jc+full:(pc+p)*ldb+jc+nc])
				clear(d[nc-full:])
			}
		}
		return
	}
	for j0 := 0; j0 < nc; j0 += nr {
		r := min(nr, nc-j0)
		s := dst[j0*kc : (j0+nr)*kc]
		if trans {
			// Four stored rows at a time, so that each write is 16 bytes
			// in a row rather than one scattered float.
			j := 0
			for ; j+4 <= r; j += 4 {
				at := (jc+j0+j)*ldb + pc
				r0 := b[at : at+kc]
				r1 := b[at+ldb : at+ldb+kc]
				r2 := b[at+2*ldb : at+2*ldb+kc]
				r3 := b[at+3*ldb : at+3*ldb+kc]
				for p, v := range r0 {
					d := (*[4]float32)(s[p*nr+j:])
					d[0], d[1], d[2], d[3] = v, r1[p], r2[p], r3[p]
				}
			}
			for ; j < r; j++ {
				row := b[(jc+j0+j)*ldb+pc : (jc+j0+j)*ldb+pc+kc]
				for p, v := range row {
					s[p*nr+j] = v
				}
			}
			for j := r; j < nr; j++ {
				for p := range kc {
					s[p*nr+j] = 0
				}
			}
			continue
		}
		for p := range kc {
			row := b[(pc+p)*ldb+jc+j0:]
			d := s[p*nr : p*nr+nr]
			copy(d, row[:r])
			clear(d[r:])
		}
	}
}

// macroKernel32 adds alpha·Ap·Bp to the mb×nc block of C at c. An edge
// tile is copied into a full 6×16 buffer and back, so it goes through the
// same instructions as a full tile.
func macroKernel32(mb, nc, kc int, alpha float32, ap, bp, c []float32, ldc int) {
	const mr, nr = gemm32MR, gemm32NR
	var tile [mr * nr]float32
	for j0 := 0; j0 < nc; j0 += nr {
		bs := bp[j0*kc : (j0+nr)*kc]
		w := min(nr, nc-j0)
		for i0 := 0; i0 < mb; i0 += mr {
			as := ap[i0*kc : (i0+mr)*kc]
			h := min(mr, mb-i0)
			if h == mr && w == nr {
				// The kernel does not check bounds; this does.
				_ = c[(i0+mr-1)*ldc+j0+nr-1]
				kern6x16(kc, &as[0], &bs[0], &c[i0*ldc+j0], ldc, alpha)
				continue
			}
			for i := range h {
				copy(tile[i*nr:i*nr+w], c[(i0+i)*ldc+j0:])
			}
			kern6x16(kc, &as[0], &bs[0], &tile[0], nr, alpha)
			for i := range h {
				copy(c[(i0+i)*ldc+j0:(i0+i)*ldc+j0+w], tile[i*nr:])
			}
		}
	}
}
