package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"unsafe"
)

// Conv2D is a 2-D convolution (cross-correlation, as in PyTorch) with a
// square kernel, the same stride and zero padding on both axes.
type Conv2D[T Float] struct {
	// In and Out are the channel counts, K the kernel size, Stride and Pad
	// the stride and zero padding on each side.
	In, Out, K, Stride, Pad int
	// Weight is Out×In×K×K; Bias is nil without a bias.
	Weight, Bias *Param[T]
	// SkipInputGrad makes Backward return nil instead of the input
	// gradient, which the first layer of a network does not need.
	SkipInputGrad bool

	x *Tensor[T]
}

// NewConv2D returns a convolution with Kaiming-normal weights (std
// sqrt(2/fan_in), fan_in = in·k·k, the choice for ReLU networks) drawn from
// rng, and a zero bias if bias is set. Parameter names are name+".weight"
// and name+".bias".
func NewConv2D[T Float](name string, in, out, k, stride, pad int, bias bool, rng *rand.Rand) *Conv2D[T] {
	if in <= 0 || out <= 0 || k <= 0 || stride <= 0 || pad < 0 {
		panic(fmt.Sprintf("nn.NewConv2D %s: bad geometry in=%d out=%d k=%d stride=%d pad=%d", name, in, out, k, stride, pad))
	}
	l := &Conv2D[T]{In: in, Out: out, K: k, Stride: stride, Pad: pad}
	l.Weight = newParam[T](name+".weight", true, out, in, k, k)
	std := math.Sqrt(2 / float64(in*k*k))
	for i := range l.Weight.W {
		l.Weight.W[i] = T(rng.NormFloat64() * std)
	}
	if bias {
		l.Bias = newParam[T](name+".bias", true, out)
		l.Bias.NoDecay = true
	}
	return l
}

// OutSize returns the output height and width for an h×w input.
func (l *Conv2D[T]) OutSize(h, w int) (int, int) {
	return (h+2*l.Pad-l.K)/l.Stride + 1, (w+2*l.Pad-l.K)/l.Stride + 1
}

// Params returns the weight and, if present, the bias.
func (l *Conv2D[T]) Params() []*Param[T] {
	if l.Bias == nil {
		return []*Param[T]{l.Weight}
	}
	return []*Param[T]{l.Weight, l.Bias}
}

// direct reports whether the input image is already its own column matrix
// (1×1 kernel, stride 1, no padding), which saves the copy.
func (l *Conv2D[T]) direct() bool { return l.K == 1 && l.Stride == 1 && l.Pad == 0 }

// Forward computes the convolution of x as GEMMs: the Out×(In·K·K)
// weights times the (In·K·K)×(Ho·Wo) im2col matrix of each image, built
// and multiplied a panel of output pixels at a time so that it stays in
// cache. The images of a batch run side by side.
func (l *Conv2D[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	if x.C != l.In {
		panic(fmt.Sprintf("nn.Conv2D %s: input has %d channels, want %d", l.Weight.Name, x.C, l.In))
	}
	ho, wo := l.OutSize(x.H, x.W)
	if ho <= 0 || wo <= 0 {
		panic(fmt.Sprintf("nn.Conv2D %s: input %dx%d is smaller than the kernel", l.Weight.Name, x.H, x.W))
	}
	l.x = nil
	if train {
		l.x = x
	}
	y := Zeros[T](x.N, l.Out, ho, wo)
	kk := l.In * l.K * l.K
	hw := ho * wo
	pw := l.panel(kk, hw)
	// The weights are packed once for every panel of every image.
	wp := packGemmA(Threads(), false, l.Out, kk, l.Weight.W, kk)
	defer wp.free()
	outer, inner := shareThreads(x.N)
	kc, nr := gemmBLayout[T]()
	parallelFor(x.N, outer, 1, func(lo, hi int) {
		buf := l.colBuf(kk * roundUp(pw, nr))
		defer putBuf(buf)
		for n := lo; n < hi; n++ {
			img, yn := x.Image(n), y.Image(n)
			// y is fresh zeros: beta 1 gives the bits of beta 0 without
			// clearing it a second time. Columns of C are independent, so
			// panels do not change any sum.
			if l.direct() {
				gemmPacked(inner, wp, false, hw, 1, img, hw, 1, yn, hw)
			} else {
				for q0 := 0; q0 < hw; q0 += pw {
					q1 := min(hw, q0+pw)
					// The columns go straight into the GEMM's packed layout.
					l.im2colPacked(img, x.H, x.W, ho, wo, q0, q1, *buf, kc, nr, inner)
					gemmPackedAB(inner, wp, *buf, q1-q0, 1, 1, yn[q0:], hw)
				}
			}
			if l.Bias != nil {
				for o, b := range l.Bias.W {
					for i := range yn[o*hw : (o+1)*hw] {
						yn[o*hw+i] += b
					}
				}
			}
		}
	})
	return y
}

// panel returns how many output pixels go into one column matrix: a
// multiple of the GEMM's kc, so that splitting the pixel sum of dW into
// panels keeps its blocks (and bits), and about 1 MiB of float32 columns.
// A direct layer takes the whole image, which is its own column matrix.
func (l *Conv2D[T]) panel(kk, hw int) int {
	if l.direct() {
		return hw
	}
	kc, _ := gemmBLayout[T]()
	return min(hw, kc*max(1, (1<<18)/(kk*kc)))
}

// shareThreads splits Threads() between n images run side by side and
// the work within each, so that about Threads() goroutines are busy.
func shareThreads(n int) (outer, inner int) {
	nt := Threads()
	outer = max(1, min(nt, n))
	return outer, max(1, nt/outer)
}

// colBuf returns a pooled column matrix of size n, or an empty one for a
// direct layer, which needs none.
func (l *Conv2D[T]) colBuf(n int) *[]T {
	if l.direct() {
		n = 0
	}
	return getBuf[T](n)
}

// columns returns output pixels q0..q1 of the column matrix of img, built
// in col unless the image is its own (then q0, q1 cover the image).
func (l *Conv2D[T]) columns(img []T, h, w, ho, wo, q0, q1 int, col []T, nt int) []T {
	if l.direct() {
		return img
	}
	col = col[:l.In*l.K*l.K*(q1-q0)]
	l.im2col(img, h, w, ho, wo, q0, q1, col, nt)
	return col
}

// Backward adds dW = dy·colᵀ and db = Σdy, and returns dx = col2im(Wᵀ·dy).
// The column matrix is rebuilt from the kept input rather than stored:
// it is K·K times the size of the input. Images run side by side; with
// more than one, each gets its own dW, and these are added in image order,
// so the sums do not depend on the thread count.
func (l *Conv2D[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	mustForward("Conv2D.Backward", l.x)
	x := l.x
	ho, wo := l.OutSize(x.H, x.W)
	if dy.N != x.N || dy.C != l.Out || dy.H != ho || dy.W != wo {
		panic(fmt.Sprintf("nn.Conv2D %s: gradient %v does not match output %v", l.Weight.Name, dy.Shape(), [4]int{x.N, l.Out, ho, wo}))
	}
	kk := l.In * l.K * l.K
	hw := ho * wo
	pw := l.panel(kk, hw)
	var dx *Tensor[T]
	var wt packedA[T] // Wᵀ, packed once for every panel of every image
	if !l.SkipInputGrad {
		dx = Like(x)
		wt = packGemmA(Threads(), true, kk, l.Out, l.Weight.W, kk)
		defer wt.free()
	}
	nw := len(l.Weight.G)
	var dws *[]T
	if x.N > 1 {
		dws = getBuf[T](x.N * nw)
		defer putBuf(dws)
	}
	var dbs []T
	if l.Bias != nil {
		dbs = make([]T, x.N*l.Out)
	}
	outer, inner := shareThreads(x.N)
	parallelFor(x.N, outer, 1, func(lo, hi int) {
		buf := l.colBuf(kk * pw)
		defer putBuf(buf)
		for n := lo; n < hi; n++ {
			img, dyn := x.Image(n), dy.Image(n)
			dw, beta := l.Weight.G, T(1)
			if dws != nil {
				dw, beta = (*dws)[n*nw:(n+1)*nw], 0
			}
			for q0 := 0; q0 < hw; q0 += pw {
				q1 := min(hw, q0+pw)
				np := q1 - q0
				col := l.columns(img, x.H, x.W, ho, wo, q0, q1, *buf, inner)
				gemm(inner, false, true, l.Out, kk, np, 1, dyn[q0:], hw, col, np, beta, dw, kk)
				beta = 1
				if dx == nil {
					continue
				}
				if l.direct() {
					// dx is fresh zeros, as y in Forward.
					gemmPacked(inner, wt, false, np, 1, dyn[q0:], hw, 1, dx.Image(n)[q0:], hw)
					continue
				}
				// col is free again once dW has it: reuse it for the column
				// gradient.
				gemmPacked(inner, wt, false, np, 1, dyn[q0:], hw, 0, col, np)
				l.col2im(col, x.H, x.W, ho, wo, q0, q1, dx.Image(n), inner)
			}
			if dbs != nil {
				for o := range l.Out {
					var s T
					for _, v := range dyn[o*hw : (o+1)*hw] {
						s += v
					}
					dbs[n*l.Out+o] = s
				}
			}
		}
	})
	if dws != nil {
		g := l.Weight.G
		parallelFor(nw, Threads(), grainFor(nw, Threads(), 4096), func(lo, hi int) {
			for n := range x.N {
				for i, v := range (*dws)[n*nw+lo : n*nw+hi] {
					g[lo+i] += v
				}
			}
		})
	}
	if l.Bias != nil {
		for n := range x.N {
			for o, s := range dbs[n*l.Out : (n+1)*l.Out] {
				l.Bias.G[o] += s
			}
		}
	}
	l.x = nil
	return dx
}

// im2col lays out output pixels q0..q1 of the receptive fields of one
// C×H×W image: row (c·K+i)·K+j of col holds, for each of those pixels,
// the input at kernel offset (i, j) in channel c, or 0 in the padding.
// Rows are independent and shared among nt goroutines.
func (l *Conv2D[T]) im2col(img []T, h, w, ho, wo, q0, q1 int, col []T, nt int) {
	rows, np := l.In*l.K*l.K, q1-q0
	parallelFor(rows, nt, grainFor(rows, nt, 1), func(rlo, rhi int) {
		for r := rlo; r < rhi; r++ {
			l.im2colRow(r, img, h, w, wo, q0, q1, col[r*np:(r+1)*np])
		}
	})
}

// im2colRow writes row r of the column matrix for pixels q0..q1 to dst.
func (l *Conv2D[T]) im2colRow(r int, img []T, h, w, wo, q0, q1 int, dst []T) {
	k, s, p := l.K, l.Stride, l.Pad
	c, i, j := r/(k*k), r/k%k, r%k
	plane := img[c*h*w : (c+1)*h*w]
	lo, hi := validRange(j, p, s, w, wo)
	for oy := q0 / wo; oy*wo < q1; oy++ {
		// This output row's share of the panel is ox in [a, b), of which
		// [vlo, vhi) reads inside the image.
		a, b := max(0, q0-oy*wo), min(wo, q1-oy*wo)
		d := dst[oy*wo+a-q0 : oy*wo+b-q0]
		iy := oy*s - p + i
		if iy < 0 || iy >= h {
			clear(d)
			continue
		}
		vlo := min(max(a, lo), b)
		vhi := max(min(b, hi), vlo)
		src := plane[iy*w : (iy+1)*w]
		clear(d[:vlo-a])
		v, st := d[vlo-a:vhi-a], vlo*s-p+j
		switch {
		case s == 1:
			copy(v, src[st:])
		case s == 2 && len(v) > 0:
			// A constant stride and one bounds check make this twice as
			// fast as the general loop.
			sv := src[st : st+2*len(v)-1]
			for x := range v {
				v[x] = sv[2*x]
			}
		default:
			for x := range v {
				v[x] = src[st+x*s]
			}
		}
		clear(d[vhi-a:])
	}
}

// im2colPacked is im2col into the layout of a packed GEMM operand (see
// gemmBLayout, with kc and nr from it), which saves writing the column
// matrix out and reading it back to pack it: each row is built in a
// buffer that stays in L1 and dealt out into its strips.
func (l *Conv2D[T]) im2colPacked(img []T, h, w, ho, wo, q0, q1 int, dst []T, kc, nr, nt int) {
	rows, np := l.In*l.K*l.K, q1-q0
	npad := roundUp(np, nr)
	parallelFor(rows, nt, grainFor(rows, nt, 1), func(rlo, rhi int) {
		buf := getBuf[T](npad)
		defer putBuf(buf)
		row := *buf
		clear(row[np:])
		for r := rlo; r < rhi; r++ {
			l.im2colRow(r, img, h, w, wo, q0, q1, row[:np])
			pc := r / kc * kc
			step := nr * min(kc, rows-pc)
			d := dst[pc*npad+(r-pc)*nr:]
			if nr == 16 && unsafe.Sizeof(row[0]) == 4 {
				deal16(asF32(d), asF32(row), step)
				continue
			}
			for q := 0; q < npad; q += nr {
				copy(d[:nr], row[q:q+nr])
				d = d[min(step, len(d)):]
			}
		}
	})
}

// deal16 copies row in pieces of 16 to dst, step apart. Going through a
// local array makes the compiler move the 64 bytes in registers instead
// of calling memmove, as it must when the two might overlap.
func deal16(dst, row []float32, step int) {
	for q := 0; q < len(row); q += 16 {
		v := *(*[16]float32)(row[q:])
		*(*[16]float32)(dst) = v
		dst = dst[min(step, len(dst)):]
	}
}

// col2im adds output pixels q0..q1 of the column gradient back onto the
// image gradient, the adjoint of im2col. Channels are shared among nt
// goroutines; within one, the rows are added in order.
func (l *Conv2D[T]) col2im(col []T, h, w, ho, wo, q0, q1 int, img []T, nt int) {
	k, s, p := l.K, l.Stride, l.Pad
	np := q1 - q0
	parallelFor(l.In, nt, grainFor(l.In, nt, 1), func(clo, chi int) {
		for c := clo; c < chi; c++ {
			plane := img[c*h*w : (c+1)*h*w]
			for i := range k {
				for j := range k {
					r := (c*k+i)*k + j
					row := col[r*np : (r+1)*np]
					lo, hi := validRange(j, p, s, w, wo)
					for oy := q0 / wo; oy*wo < q1; oy++ {
						iy := oy*s - p + i
						if iy < 0 || iy >= h {
							continue
						}
						a, b := max(0, q0-oy*wo), min(wo, q1-oy*wo)
						vlo := min(max(a, lo), b)
						vhi := max(min(b, hi), vlo)
						src := row[oy*wo+vlo-q0 : oy*wo+vhi-q0]
						dst := plane[iy*w : (iy+1)*w]
						st := vlo*s - p + j
						switch {
						case s == 1:
							addTo(dst[st:st+len(src)], src)
						case s == 2 && len(src) > 0:
							d := dst[st : st+2*len(src)-1]
							for x, v := range src {
								d[2*x] += v
							}
						default:
							for x, v := range src {
								dst[st+x*s] += v
							}
						}
					}
				}
			}
		}
	})
}

// addTo adds src to dst, of the same length, eight at a time: the
// unrolled loop has no bounds checks inside and about half the cost.
func addTo[T Float](dst, src []T) {
	src = src[:len(dst)]
	i := 0
	for ; i+8 <= len(dst); i += 8 {
		d, s := (*[8]T)(dst[i:]), (*[8]T)(src[i:])
		d[0] += s[0]
		d[1] += s[1]
		d[2] += s[2]
		d[3] += s[3]
		d[4] += s[4]
		d[5] += s[5]
		d[6] += s[6]
		d[7] += s[7]
	}
	for ; i < len(dst); i++ {
		dst[i] += src[i]
	}
}

// validRange returns the output columns [lo, hi) whose input column
// ox·s−p+j lies inside 0..w−1.
func validRange(j, p, s, w, wo int) (lo, hi int) {
	lo = max(0, ceilDiv(p-j, s))
	if p-j <= 0 {
		lo = 0
	}
	hi = min(wo, (w-1+p-j)/s+1)
	if w-1+p-j < 0 {
		hi = 0
	}
	return lo, max(lo, hi)
}
