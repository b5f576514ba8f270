package nn

import (
	"fmt"
	"math"
	"math/bits"
	"unsafe"
)

// ReLU is max(x, 0).
type ReLU[T Float] struct{ y *Tensor[T] }

// Forward returns max(x, 0).
func (l *ReLU[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	y := Like(x)
	elementwise(len(x.Data), func(lo, hi int) {
		for i, v := range x.Data[lo:hi] {
			y.Data[lo+i] = max(v, 0)
		}
	})
	l.y = nil
	if train {
		l.y = y
	}
	return y
}

// Backward passes dy where the output was positive (the gradient at 0 is
// taken as 0, as PyTorch does).
func (l *ReLU[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	mustForward("ReLU.Backward", l.y)
	mustSameShape("ReLU.Backward", dy, l.y)
	dx := Like(dy)
	y := l.y.Data
	elementwise(len(y), func(lo, hi int) {
		switch unsafe.Sizeof(T(0)) {
		case 4:
			reluGrad32(asF32(y[lo:hi]), asF32(dy.Data[lo:hi]), asF32(dx.Data[lo:hi]))
		default:
			reluGrad64(asF64(y[lo:hi]), asF64(dy.Data[lo:hi]), asF64(dx.Data[lo:hi]))
		}
	})
	l.y = nil
	return dx
}

// reluGrad32 sets dx = dy where y > 0, else 0, with a mask instead of a
// branch: the signs of y are random, and mispredictions cost more than
// the arithmetic. y > 0 exactly when its bits minus one are below those
// of +Inf (zero wraps round, negatives and NaNs are above).
func reluGrad32(y, dy, dx []float32) {
	dy, dx = dy[:len(y)], dx[:len(y)]
	for i, v := range y {
		_, borrow := bits.Sub32(math.Float32bits(v)-1, 0x7f800000, 0)
		dx[i] = math.Float32frombits(math.Float32bits(dy[i]) & -borrow)
	}
}

// reluGrad64 is reluGrad32 for float64.
func reluGrad64(y, dy, dx []float64) {
	dy, dx = dy[:len(y)], dx[:len(y)]
	for i, v := range y {
		_, borrow := bits.Sub64(math.Float64bits(v)-1, 0x7ff0000000000000, 0)
		dx[i] = math.Float64frombits(math.Float64bits(dy[i]) & -borrow)
	}
}

// elementwise shares an element-by-element pass over n values among
// Threads() goroutines, in ranges long enough to be worth a goroutine.
func elementwise(n int, f func(lo, hi int)) {
	nt := Threads()
	parallelFor(n, nt, grainFor(n, nt, 1<<15), f)
}

// Params returns nil: ReLU learns nothing.
func (l *ReLU[T]) Params() []*Param[T] { return nil }

// Sigmoid is 1/(1+e^−x).
type Sigmoid[T Float] struct{ y *Tensor[T] }

// Forward returns the logistic function of x.
func (l *Sigmoid[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	y := Like(x)
	for i, v := range x.Data {
		y.Data[i] = sigmoid(v)
	}
	l.y = nil
	if train {
		l.y = y
	}
	return y
}

// Backward returns dy·y·(1−y).
func (l *Sigmoid[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	mustForward("Sigmoid.Backward", l.y)
	mustSameShape("Sigmoid.Backward", dy, l.y)
	dx := Like(dy)
	for i, y := range l.y.Data {
		dx.Data[i] = dy.Data[i] * y * (1 - y)
	}
	l.y = nil
	return dx
}

// Params returns nil: Sigmoid learns nothing.
func (l *Sigmoid[T]) Params() []*Param[T] { return nil }

// sigmoid is computed in float64 on the side where exp cannot overflow.
func sigmoid[T Float](v T) T {
	x := float64(v)
	if x >= 0 {
		return T(1 / (1 + math.Exp(-x)))
	}
	e := math.Exp(x)
	return T(e / (1 + e))
}

// Upsample2x doubles height and width by repeating each pixel in a 2×2
// block (nearest neighbour).
type Upsample2x[T Float] struct{ x *Tensor[T] }

// Forward returns the 2×-upsampled x.
func (l *Upsample2x[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	y := Zeros[T](x.N, x.C, 2*x.H, 2*x.W)
	planes(x, func(n, c int) {
		src, dst := x.Plane(n, c), y.Plane(n, c)
		for i := range x.H {
			row := src[i*x.W : (i+1)*x.W]
			d0 := dst[2*i*y.W : (2*i+1)*y.W]
			for j, v := range row {
				d0[2*j], d0[2*j+1] = v, v
			}
			copy(dst[(2*i+1)*y.W:(2*i+2)*y.W], d0)
		}
	})
	l.x = nil
	if train {
		l.x = x
	}
	return y
}

// Backward sums each 2×2 block of dy.
func (l *Upsample2x[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	mustForward("Upsample2x.Backward", l.x)
	x := l.x
	if dy.N != x.N || dy.C != x.C || dy.H != 2*x.H || dy.W != 2*x.W {
		panic(fmt.Sprintf("nn.Upsample2x.Backward: gradient %v for input %v", dy.Shape(), x.Shape()))
	}
	dx := Like(x)
	planes(x, func(n, c int) {
		src, dst := dy.Plane(n, c), dx.Plane(n, c)
		for i := range x.H {
			r0 := src[2*i*dy.W : (2*i+1)*dy.W]
			r1 := src[(2*i+1)*dy.W : (2*i+2)*dy.W]
			for j := range x.W {
				dst[i*x.W+j] = r0[2*j] + r0[2*j+1] + r1[2*j] + r1[2*j+1]
			}
		}
	})
	l.x = nil
	return dx
}

// Params returns nil: Upsample2x learns nothing.
func (l *Upsample2x[T]) Params() []*Param[T] { return nil }

// Add is the sum of two tensors of the same shape, for skip connections.
// It has two inputs, so it is not a Layer.
type Add[T Float] struct{}

// Forward returns a + b.
func (Add[T]) Forward(a, b *Tensor[T]) *Tensor[T] {
	mustSameShape("Add.Forward", a, b)
	y := Like(a)
	elementwise(len(a.Data), func(lo, hi int) {
		for i, v := range a.Data[lo:hi] {
			y.Data[lo+i] = v + b.Data[lo+i]
		}
	})
	return y
}

// Backward returns the gradients of both inputs, each equal to dy. They are
// separate copies, so either may be changed in place (for instance with
// AddFrom) without touching the other.
func (Add[T]) Backward(dy *Tensor[T]) (da, db *Tensor[T]) {
	return dy.Clone(), dy.Clone()
}

// planes calls f on every (image, channel) plane of t, shared among
// Threads() goroutines.
func planes[T Float](t *Tensor[T], f func(n, c int)) {
	nt, np := Threads(), t.N*t.C
	parallelFor(np, nt, grainFor(np, nt, max(1, (1<<15)/max(t.H*t.W, 1))), func(lo, hi int) {
		for p := lo; p < hi; p++ {
			f(p/t.C, p%t.C)
		}
	})
}
