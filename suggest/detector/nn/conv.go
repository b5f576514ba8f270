package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
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

// Forward computes the convolution of x as one GEMM per image: the
// Out×(In·K·K) weights times the (In·K·K)×(Ho·Wo) im2col matrix of the
// image. The images of a batch run side by side.
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
	outer, inner := shareThreads(x.N)
	parallelFor(x.N, outer, 1, func(lo, hi int) {
		col := l.colBuf(kk * hw)
		defer putBuf(col)
		for n := lo; n < hi; n++ {
			c := l.columns(x, n, ho, wo, *col, inner)
			yn := y.Image(n)
			// y is fresh zeros: beta 1 gives the bits of beta 0 without
			// clearing it a second time.
			gemm(inner, false, false, l.Out, hw, kk, 1, l.Weight.W, kk, c, hw, 1, yn, hw)
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

// columns returns the column matrix of image n of x, built in col unless
// the image is its own.
func (l *Conv2D[T]) columns(x *Tensor[T], n, ho, wo int, col []T, nt int) []T {
	if l.direct() {
		return x.Image(n)
	}
	l.im2col(x.Image(n), x.H, x.W, ho, wo, col, nt)
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
	var dx *Tensor[T]
	if !l.SkipInputGrad {
		dx = Like(x)
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
		buf := l.colBuf(kk * hw)
		defer putBuf(buf)
		for n := lo; n < hi; n++ {
			dyn := dy.Image(n)
			col := l.columns(x, n, ho, wo, *buf, inner)
			if dws == nil {
				gemm(inner, false, true, l.Out, kk, hw, 1, dyn, hw, col, hw, 1, l.Weight.G, kk)
			} else {
				gemm(inner, false, true, l.Out, kk, hw, 1, dyn, hw, col, hw, 0, (*dws)[n*nw:(n+1)*nw], kk)
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
			if dx == nil {
				continue
			}
			if l.direct() {
				// dx is fresh zeros, as y in Forward.
				gemm(inner, true, false, kk, hw, l.Out, 1, l.Weight.W, kk, dyn, hw, 1, dx.Image(n), hw)
				continue
			}
			// col is free again once dW has it: reuse it for the column gradient.
			gemm(inner, true, false, kk, hw, l.Out, 1, l.Weight.W, kk, dyn, hw, 0, col, hw)
			l.col2im(col, x.H, x.W, ho, wo, dx.Image(n), inner)
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

// im2col lays out the receptive fields of one C×H×W image: row
// (c·K+i)·K+j of col holds, for every output pixel, the input at kernel
// offset (i, j) in channel c, or 0 in the padding. Rows are independent
// and shared among nt goroutines.
func (l *Conv2D[T]) im2col(img []T, h, w, ho, wo int, col []T, nt int) {
	k, s, p := l.K, l.Stride, l.Pad
	rows := l.In * k * k
	parallelFor(rows, nt, grainFor(rows, nt, 1), func(lo, hi int) {
		for r := lo; r < hi; r++ {
			c, i, j := r/(k*k), r/k%k, r%k
			plane := img[c*h*w : (c+1)*h*w]
			row := col[r*ho*wo : (r+1)*ho*wo]
			lo, hi := validRange(j, p, s, w, wo)
			for oy := range ho {
				dst := row[oy*wo : (oy+1)*wo]
				iy := oy*s - p + i
				if iy < 0 || iy >= h {
					clear(dst)
					continue
				}
				src := plane[iy*w : (iy+1)*w]
				clear(dst[:lo])
				if s == 1 {
					copy(dst[lo:hi], src[lo-p+j:])
				} else {
					for ox := lo; ox < hi; ox++ {
						dst[ox] = src[ox*s-p+j]
					}
				}
				clear(dst[hi:])
			}
		}
	})
}

// col2im adds the column gradient back onto the image gradient, the
// adjoint of im2col. Channels are shared among nt goroutines; within one,
// the rows are added in order.
func (l *Conv2D[T]) col2im(col []T, h, w, ho, wo int, img []T, nt int) {
	k, s, p := l.K, l.Stride, l.Pad
	parallelFor(l.In, nt, grainFor(l.In, nt, 1), func(clo, chi int) {
		for c := clo; c < chi; c++ {
			plane := img[c*h*w : (c+1)*h*w]
			for i := range k {
				for j := range k {
					r := (c*k+i)*k + j
					row := col[r*ho*wo : (r+1)*ho*wo]
					lo, hi := validRange(j, p, s, w, wo)
					for oy := range ho {
						iy := oy*s - p + i
						if iy < 0 || iy >= h {
							continue
						}
						src := row[oy*wo : (oy+1)*wo]
						dst := plane[iy*w : (iy+1)*w]
						if s == 1 {
							// Equal-length slices: no bounds checks in the loop.
							d := dst[lo-p+j : hi-p+j]
							for x, v := range src[lo:hi][:len(d)] {
								d[x] += v
							}
							continue
						}
						for ox := lo; ox < hi; ox++ {
							dst[ox*s-p+j] += src[ox]
						}
					}
				}
			}
		}
	})
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
