package nn

import (
	"fmt"
	"math"
)

// BatchNorm2D normalises each channel over the batch and the image (Ioffe
// & Szegedy 2015), with PyTorch's conventions: the running estimates move
// by Momentum towards each batch's mean and unbiased variance, while the
// batch itself is normalised with the biased variance.
type BatchNorm2D[T Float] struct {
	// C is the number of channels.
	C int
	// Momentum is the running estimates' update rate, Eps the variance
	// floor added before the square root.
	Momentum, Eps float64
	// Gamma and Beta are the learnt scale and shift.
	Gamma, Beta *Param[T]
	// RunningMean and RunningVar are the estimates used in eval mode.
	RunningMean, RunningVar *Param[T]

	xhat   *Tensor[T]
	invStd []float64
}

// NewBatchNorm2D returns batch normalisation over c channels with gamma 1,
// beta 0, running mean 0, running variance 1, momentum 0.1 and eps 1e-5 (as
// PyTorch). Parameter names are name+".weight", ".bias", ".running_mean"
// and ".running_var".
func NewBatchNorm2D[T Float](name string, c int) *BatchNorm2D[T] {
	if c <= 0 {
		panic(fmt.Sprintf("nn.NewBatchNorm2D %s: %d channels", name, c))
	}
	l := &BatchNorm2D[T]{C: c, Momentum: 0.1, Eps: 1e-5}
	l.Gamma = newParam[T](name+".weight", true, c)
	l.Beta = newParam[T](name+".bias", true, c)
	l.Gamma.NoDecay, l.Beta.NoDecay = true, true
	l.RunningMean = newParam[T](name+".running_mean", false, c)
	l.RunningVar = newParam[T](name+".running_var", false, c)
	for i := range c {
		l.Gamma.W[i] = 1
		l.RunningVar.W[i] = 1
	}
	return l
}

// Params returns gamma and beta.
func (l *BatchNorm2D[T]) Params() []*Param[T] { return []*Param[T]{l.Gamma, l.Beta} }

// Buffers returns the running mean and variance.
func (l *BatchNorm2D[T]) Buffers() []*Param[T] {
	return []*Param[T]{l.RunningMean, l.RunningVar}
}

// Forward normalises with the batch statistics and updates the running
// ones when train is set, and with the running statistics otherwise.
// Sums run in float64 so that float32 statistics over large maps stay
// accurate.
func (l *BatchNorm2D[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	if x.C != l.C {
		panic(fmt.Sprintf("nn.BatchNorm2D %s: input has %d channels, want %d", l.Gamma.Name, x.C, l.C))
	}
	hw := x.H * x.W
	cnt := x.N * hw
	if train && cnt < 2 {
		panic(fmt.Sprintf("nn.BatchNorm2D %s: training needs more than one value per channel", l.Gamma.Name))
	}
	y := Like(x)
	l.xhat = nil
	var xhat *Tensor[T]
	if train {
		xhat = Like(x)
		l.invStd = make([]float64, l.C)
	}
	// Channels are independent: each is one goroutine's, so the sums keep
	// their order whatever the thread count.
	nt := Threads()
	parallelFor(l.C, nt, grainFor(l.C, nt, max(1, (1<<15)/max(cnt, 1))), func(clo, chi int) {
		for c := clo; c < chi; c++ {
			var mean, variance float64
			if train {
				var s float64
				for n := range x.N {
					s += sum4(x.Plane(n, c))
				}
				mean = s / float64(cnt)
				var ss float64
				for n := range x.N {
					ss += sumSq4(x.Plane(n, c), mean)
				}
				variance = ss / float64(cnt)
				m := l.Momentum
				l.RunningMean.W[c] = T((1-m)*float64(l.RunningMean.W[c]) + m*mean)
				l.RunningVar.W[c] = T((1-m)*float64(l.RunningVar.W[c]) + m*ss/float64(cnt-1))
			} else {
				mean, variance = float64(l.RunningMean.W[c]), float64(l.RunningVar.W[c])
			}
			inv := 1 / math.Sqrt(variance+l.Eps)
			g, b := float64(l.Gamma.W[c]), float64(l.Beta.W[c])
			for n := range x.N {
				src, dst := x.Plane(n, c), y.Plane(n, c)
				if !train {
					for i, v := range src {
						dst[i] = T(g*(float64(v)-mean)*inv + b)
					}
					continue
				}
				xh := xhat.Plane(n, c)[:len(src)]
				dst = dst[:len(src)]
				for i, v := range src {
					d := float64(v) - mean
					dst[i] = T(g*d*inv + b)
					xh[i] = T(d * inv)
				}
			}
			if train {
				l.invStd[c] = inv
			}
		}
	})
	l.xhat = xhat
	return y
}

// Backward adds dgamma = Σdy·x̂ and dbeta = Σdy and returns dx; the batch
// statistics depend on x, giving dx = γ/σ·(dy − mean(dy) − x̂·mean(dy·x̂)).
func (l *BatchNorm2D[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	mustForward("BatchNorm2D.Backward", l.xhat)
	mustSameShape("BatchNorm2D.Backward", dy, l.xhat)
	dx := Like(dy)
	cnt := float64(dy.N * dy.H * dy.W)
	nt := Threads()
	parallelFor(l.C, nt, grainFor(l.C, nt, max(1, (1<<15)/max(int(cnt), 1))), func(clo, chi int) {
		for c := clo; c < chi; c++ {
			var sdy, sdyx float64
			for n := range dy.N {
				sdy += sum4(dy.Plane(n, c))
				sdyx += dot4(dy.Plane(n, c), l.xhat.Plane(n, c))
			}
			l.Gamma.G[c] += T(sdyx)
			l.Beta.G[c] += T(sdy)
			k := float64(l.Gamma.W[c]) * l.invStd[c]
			mdy, mdyx := sdy/cnt, sdyx/cnt
			for n := range dy.N {
				xh, src, dst := l.xhat.Plane(n, c), dy.Plane(n, c), dx.Plane(n, c)
				for i, v := range src {
					dst[i] = T(k * (float64(v) - mdy - float64(xh[i])*mdyx))
				}
			}
		}
	})
	l.xhat = nil
	return dx
}

// sum4, sumSq4 and dot4 sum in float64 with four accumulators, which take
// the adds off one chain of latencies; the order is fixed by the index.

// sum4 returns Σx.
func sum4[T Float](x []T) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		v := x[i : i+4 : i+4]
		s0 += float64(v[0])
		s1 += float64(v[1])
		s2 += float64(v[2])
		s3 += float64(v[3])
	}
	for ; i < len(x); i++ {
		s0 += float64(x[i])
	}
	return (s0 + s1) + (s2 + s3)
}

// sumSq4 returns Σ(x − mean)².
func sumSq4[T Float](x []T, mean float64) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		v := x[i : i+4 : i+4]
		d0, d1, d2, d3 := float64(v[0])-mean, float64(v[1])-mean, float64(v[2])-mean, float64(v[3])-mean
		s0 += d0 * d0
		s1 += d1 * d1
		s2 += d2 * d2
		s3 += d3 * d3
	}
	for ; i < len(x); i++ {
		d := float64(x[i]) - mean
		s0 += d * d
	}
	return (s0 + s1) + (s2 + s3)
}

// dot4 returns Σx·y.
func dot4[T Float](x, y []T) float64 {
	y = y[:len(x)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		v, w := x[i:i+4:i+4], y[i:i+4:i+4]
		s0 += float64(v[0]) * float64(w[0])
		s1 += float64(v[1]) * float64(w[1])
		s2 += float64(v[2]) * float64(w[2])
		s3 += float64(v[3]) * float64(w[3])
	}
	for ; i < len(x); i++ {
		s0 += float64(x[i]) * float64(y[i])
	}
	return (s0 + s1) + (s2 + s3)
}
