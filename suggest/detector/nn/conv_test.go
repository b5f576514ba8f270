package nn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// naiveConv returns y = conv(x) + b, dx, dW and db for the gradient dy by
// the defining sums, in float64.
func naiveConv(l *Conv2D[float64], x, dy *Tensor[float64]) (y, dx *Tensor[float64], dw, db []float64) {
	k, s, p := l.K, l.Stride, l.Pad
	ho, wo := l.OutSize(x.H, x.W)
	y, dx = Zeros[float64](x.N, l.Out, ho, wo), Like(x)
	dw, db = make([]float64, len(l.Weight.W)), make([]float64, l.Out)
	for n := range x.N {
		for o := range l.Out {
			for oy := range ho {
				for ox := range wo {
					var v float64
					if l.Bias != nil {
						v = l.Bias.W[o]
					}
					g := dy.At(n, o, oy, ox)
					db[o] += g
					for c := range l.In {
						for i := range k {
							for j := range k {
								iy, ix := oy*s-p+i, ox*s-p+j
								if iy < 0 || iy >= x.H || ix < 0 || ix >= x.W {
									continue
								}
								wi := ((o*l.In+c)*k+i)*k + j
								v += l.Weight.W[wi] * x.At(n, c, iy, ix)
								dw[wi] += g * x.At(n, c, iy, ix)
								dx.Data[dx.Index(n, c, iy, ix)] += g * l.Weight.W[wi]
							}
						}
					}
					y.Set(n, o, oy, ox, v)
				}
			}
		}
	}
	return y, dx, dw, db
}

// convCases have enough input channels that the column matrix comes in
// several pixel panels, whose edges fall inside output rows. Source: the
// definition of the convolution (naive sums).
var convCases = []struct{ n, in, out, k, s, p, h, w int }{
	{2, 64, 5, 3, 1, 1, 23, 19},
	{3, 64, 4, 3, 2, 1, 41, 37},
	{1, 40, 3, 3, 1, 0, 30, 29},
	{2, 96, 6, 1, 1, 0, 25, 23}, // direct: the image is its column matrix
}

func TestConv2DPanelsAgainstNaive(t *testing.T) {
	noBLAS(t) // the Go kernels' bits are the subject
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(31, 32))
	for _, c := range convCases {
		l := NewConv2D[float64]("conv", c.in, c.out, c.k, c.s, c.p, true, r)
		for i := range l.Bias.W {
			l.Bias.W[i] = r.Float64() - 0.5
		}
		ho, wo := l.OutSize(c.h, c.w)
		if !l.direct() && l.panel(c.in*c.k*c.k, ho*wo) >= ho*wo {
			t.Fatalf("%+v: one panel only", c)
		}
		x := randTensor(r, c.n, c.in, c.h, c.w)
		dy := randTensor(r, c.n, c.out, ho, wo)
		wantY, wantDx, wantDw, wantDb := naiveConv(l, x, dy)
		for _, th := range []int{1, 2, 3} {
			SetThreads(th)
			clear(l.Weight.G)
			clear(l.Bias.G)
			y := l.Forward(x, true)
			dx := l.Backward(dy)
			name := fmt.Sprintf("%+v %d threads", c, th)
			closeTo(t, name+" y", y.Data, wantY.Data)
			closeTo(t, name+" dx", dx.Data, wantDx.Data)
			closeTo(t, name+" dW", l.Weight.G, wantDw)
			closeTo(t, name+" db", l.Bias.G, wantDb)
		}
	}
}

func closeTo(t *testing.T, name string, got, want []float64) {
	t.Helper()
	for i := range want {
		if !(math.Abs(got[i]-want[i]) <= 1e-10*(1+math.Abs(want[i]))) {
			t.Fatalf("%s[%d] = %v, want %v", name, i, got[i], want[i])
		}
	}
}

// TestConv2DThreadsBitIdentical checks the determinism rule for float32
// convolutions run image by image and panel by panel: the same y, dx, dW
// and db bits whatever the thread count, for one image (threads inside
// the GEMMs) and several (images side by side). With one image, dW must
// also be the single GEMM over the whole column matrix, bit for bit (the
// panels are whole kc blocks), and so must y, whose columns are packed
// straight from the image. Source: this package's determinism rule.
func TestConv2DThreadsBitIdentical(t *testing.T) {
	noBLAS(t) // the Go kernels' bits are the subject
	defer SetThreads(0)
	r := rand.New(rand.NewPCG(33, 34))
	for _, c := range convCases {
		for _, n := range []int{1, 3} {
			l := NewConv2D[float32]("conv", c.in, c.out, c.k, c.s, c.p, true, r)
			x := New(n, c.in, c.h, c.w, rand32(r, n*c.in*c.h*c.w, 1, 0))
			ho, wo := l.OutSize(c.h, c.w)
			dy := New(n, c.out, ho, wo, rand32(r, n*c.out*ho*wo, 1, 0))
			var ref [4][]float32
			for _, th := range []int{1, 2, 3, 5} {
				SetThreads(th)
				clear(l.Weight.G)
				clear(l.Bias.G)
				y := l.Forward(x, true)
				dx := l.Backward(dy)
				got := [4][]float32{y.Data, dx.Data, slices.Clone(l.Weight.G), slices.Clone(l.Bias.G)}
				if th == 1 {
					ref = got
					continue
				}
				for a, what := range []string{"y", "dx", "dW", "db"} {
					if i := firstDiff(got[a], ref[a]); i >= 0 {
						t.Fatalf("%+v batch %d: %d threads give %s[%d] = %v, 1 thread %v", c, n, th, what, i, got[a][i], ref[a][i])
					}
				}
			}
			if n != 1 {
				continue
			}
			kk, hw := c.in*c.k*c.k, ho*wo
			col := make([]float32, kk*hw)
			l.im2col(x.Image(0), c.h, c.w, ho, wo, 0, hw, col, 1)
			if l.direct() {
				col = x.Image(0)
			}
			dw := make([]float32, len(l.Weight.G))
			Gemm(false, true, c.out, kk, hw, 1, dy.Image(0), hw, col, hw, 1, dw, kk)
			if i := firstDiff(dw, ref[2]); i >= 0 {
				t.Fatalf("%+v: panelled dW[%d] = %v, one GEMM %v", c, i, ref[2][i], dw[i])
			}
			y := make([]float32, c.out*hw)
			Gemm(false, false, c.out, hw, kk, 1, l.Weight.W, kk, col, hw, 0, y, hw)
			for o, b := range l.Bias.W {
				for i := range hw {
					y[o*hw+i] += b
				}
			}
			if i := firstDiff(y, ref[0]); i >= 0 {
				t.Fatalf("%+v: panelled y[%d] = %v, one GEMM %v", c, i, ref[0][i], y[i])
			}
		}
	}
}
