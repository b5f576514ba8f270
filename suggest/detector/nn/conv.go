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
// image.
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
	var col []T
	if !l.direct() {
		buf := getBuf[T](kk * hw)
		defer putBuf(buf)
		col = *buf
	}
	for n := range x.N {
		if l.direct() {
			col = x.Image(n)
		} else {
			l.im2col(x.Image(n), x.H, x.W, ho, wo, col)
		}
		yn := y.Image(n)
		Gemm(false, false, l.Out, hw, kk, 1, l.Weight.W, kk, col, hw, 0, yn, hw)
		if l.Bias != nil {
			for o, b := range l.Bias.W {
				for i := range yn[o*hw : (o+1)*hw] {
					yn[o*hw+i] += b
				}
			}
		}
	}
	return y
}

// Backward adds dW = dy·colᵀ and db = Σdy, and returns dx = col2im(Wᵀ·dy).
// The column matrix is rebuilt from the kept input rather than stored:
// it is K·K times the size of the input.
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
	var col []T
	if !l.direct() {
		buf := getBuf[T](kk * hw)
		defer putBuf(buf)
		col = *buf
	}
	for n := range x.N {
		dyn := dy.Image(n)
		if l.direct() {
			col = x.Image(n)
		} else {
			l.im2col(x.Image(n), x.H, x.W, ho, wo, col)
		}
		Gemm(false, true, l.Out, kk, hw, 1, dyn, hw, col, hw, 1, l.Weight.G, kk)
		if l.Bias != nil {
			for o := range l.Out {
				var s T
				for _, v := range dyn[o*hw : (o+1)*hw] {
					s += v
				}
				l.Bias.G[o] += s
			}
		}
		if dx == nil {
			continue
		}
		if l.direct() {
			Gemm(true, false, kk, hw, l.Out, 1, l.Weight.W, kk, dyn, hw, 0, dx.Image(n), hw)
			continue
		}
		// col is free again once dW has it: reuse it for the column gradient.
		Gemm(true, false, kk, hw, l.Out, 1, l.Weight.W, kk, dyn, hw, 0, col, hw)
		l.col2im(col, x.H, x.W, ho, wo, dx.Image(n))
	}
	l.x = nil
	return dx
}

// im2col lays out the receptive fields of one C×H×W image: row
// (c·K+i)·K+j of col holds, for every output pixel, the input at kernel
// offset (i, j) in channel c, or 0 in the padding.
func (l *Conv2D[T]) im2col(img []T, h, w, ho, wo int, col []T) {
	k, s, p := l.K, l.Stride, l.Pad
	r := 0
	for c := range l.In {
		plane := img[c*h*w : (c+1)*h*w]
		for i := range k {
			for j := range k {
				row := col[r*ho*wo : (r+1)*ho*wo]
				r++
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
		}
	}
}

// col2im adds the column gradient back onto the image gradient, the
// adjoint of im2col.
func (l *Conv2D[T]) col2im(col []T, h, w, ho, wo int, img []T) {
	k, s, p := l.K, l.Stride, l.Pad
	r := 0
	for c := range l.In {
		plane := img[c*h*w : (c+1)*h*w]
		for i := range k {
			for j := range k {
				row := col[r*ho*wo : (r+1)*ho*wo]
				r++
				lo, hi := validRange(j, p, s, w, wo)
				for oy := range ho {
					iy := oy*s - p + i
					if iy < 0 || iy >= h {
						continue
					}
					src := row[oy*wo : (oy+1)*wo]
					dst := plane[iy*w : (iy+1)*w]
					for ox := lo; ox < hi; ox++ {
						dst[ox*s-p+j] += src[ox]
					}
				}
			}
		}
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
