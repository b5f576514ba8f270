package nn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The gradient checks compare each Backward with central finite
// differences, (f(x+h) − f(x−h)) / 2h, in float64 (source: central finite
// differences, common practice). A layer's scalar is L = Σ dy·y for a fixed
// random dy, so dL/dy = dy.

const (
	fdStep   = 1e-5
	fdMaxErr = 1e-6
)

// numGrad perturbs each element of vals in turn and differentiates f.
func numGrad(vals []float64, f func() float64) []float64 {
	g := make([]float64, len(vals))
	for i := range vals {
		v := vals[i]
		vals[i] = v + fdStep
		up := f()
		vals[i] = v - fdStep
		down := f()
		vals[i] = v
		g[i] = (up - down) / (2 * fdStep)
	}
	return g
}

// relErr is ‖a−b‖ / (‖a‖+‖b‖), 0 when both vanish.
func relErr(a, b []float64) float64 {
	var d, na, nb float64
	for i := range a {
		d += (a[i] - b[i]) * (a[i] - b[i])
		na += a[i] * a[i]
		nb += b[i] * b[i]
	}
	if na+nb == 0 {
		return 0
	}
	return math.Sqrt(d) / (math.Sqrt(na) + math.Sqrt(nb))
}

func checkGrad(t *testing.T, what string, analytic, vals []float64, f func() float64) {
	t.Helper()
	num := numGrad(vals, f)
	e := relErr(analytic, num)
	t.Logf("%s: relative error %.2g over %d values", what, e, len(num))
	if e > fdMaxErr || math.IsNaN(e) {
		t.Errorf("%s: relative error %.3g between analytic and numeric gradient", what, e)
		for i := range min(len(num), 5) {
			t.Logf("  [%d] analytic %.9g numeric %.9g", i, analytic[i], num[i])
		}
	} else if len(analytic) > 0 && relErr(analytic, make([]float64, len(analytic))) == 0 {
		t.Errorf("%s: gradient is all zero, so the check proves nothing", what)
	}
}

func randTensor(r *rand.Rand, n, c, h, w int) *Tensor[float64] {
	return New(n, c, h, w, randSlice[float64](r, n*c*h*w))
}

func dot(a, b []float64) float64 {
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// checkLayer checks dx and every parameter gradient of l at x.
func checkLayer(t *testing.T, what string, l Layer[float64], x *Tensor[float64], r *rand.Rand) {
	t.Helper()
	y := l.Forward(x, true)
	dy := randTensor(r, y.N, y.C, y.H, y.W)
	for _, p := range l.Params() {
		clear(p.G)
	}
	dx := l.Backward(dy)
	loss := func() float64 { return dot(dy.Data, l.Forward(x, true).Data) }
	checkGrad(t, what+" dx", dx.Data, x.Data, loss)
	for _, p := range l.Params() {
		checkGrad(t, what+" d"+p.Name, p.G, p.W, loss)
	}
}

func TestConv2DGradients(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 1))
	for _, c := range []struct {
		name                string
		in, out, k, s, p, h int
		w                   int
		bias                bool
	}{
		{"3x3 s1 p1 bias", 3, 4, 3, 1, 1, 7, 6, true},
		{"3x3 s2 p1", 3, 5, 3, 2, 1, 9, 8, false},
		{"3x3 s2 p0 bias", 2, 3, 3, 2, 0, 8, 9, true},
		{"1x1 s1 p0 bias", 4, 3, 1, 1, 0, 5, 6, true},
		{"5x5 s2 p2", 2, 3, 5, 2, 2, 7, 7, false},
		{"2x2 s2 p0", 3, 2, 2, 2, 0, 6, 5, true},
		{"1x1 s2 p1", 2, 2, 1, 2, 1, 5, 4, false},
	} {
		l := NewConv2D[float64]("conv", c.in, c.out, c.k, c.s, c.p, c.bias, r)
		if c.bias {
			for i := range l.Bias.W {
				l.Bias.W[i] = r.Float64() - 0.5
			}
		}
		checkLayer(t, "Conv2D "+c.name, l, randTensor(r, 2, c.in, c.h, c.w), r)
	}
}

func TestBatchNorm2DGradients(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 2))
	l := NewBatchNorm2D[float64]("bn", 3)
	for i := range 3 {
		l.Gamma.W[i] = 0.5 + r.Float64()
		l.Beta.W[i] = r.Float64() - 0.5
	}
	checkLayer(t, "BatchNorm2D train", l, randTensor(r, 2, 3, 4, 5), r)
}

// TestEvalKeepsNothing: inference must not hold activations between calls.
// Source: this package's Layer contract.
func TestEvalKeepsNothing(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 8))
	conv := NewConv2D[float64]("c", 2, 2, 3, 1, 1, true, r)
	bn := NewBatchNorm2D[float64]("bn", 2)
	relu, sig, up := &ReLU[float64]{}, &Sigmoid[float64]{}, &Upsample2x[float64]{}
	m := NewSequential[float64](conv, bn, relu, sig, up)
	x := randTensor(r, 1, 2, 4, 4)
	m.Forward(x, true)
	m.Forward(x, false)
	if conv.x != nil || bn.xhat != nil || relu.y != nil || sig.y != nil || up.x != nil {
		t.Error("an eval Forward kept tensors for a Backward that cannot come")
	}
}

func TestActivationGradients(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 3))
	x := randTensor(r, 2, 3, 4, 5)
	for i, v := range x.Data {
		if math.Abs(v) < 0.01 { // away from ReLU's kink
			x.Data[i] = 0.5
		}
	}
	checkLayer(t, "ReLU", &ReLU[float64]{}, x, r)
	for i := range x.Data {
		x.Data[i] *= 4
	}
	checkLayer(t, "Sigmoid", &Sigmoid[float64]{}, x, r)
	checkLayer(t, "Upsample2x", &Upsample2x[float64]{}, randTensor(r, 2, 3, 3, 4), r)
}

func TestAddGradients(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 4))
	a, b := randTensor(r, 2, 3, 4, 5), randTensor(r, 2, 3, 4, 5)
	dy := randTensor(r, 2, 3, 4, 5)
	var add Add[float64]
	da, db := add.Backward(dy)
	loss := func() float64 {
		y := add.Forward(a, b)
		return dot(dy.Data, y.Data)
	}
	checkGrad(t, "Add da", da.Data, a.Data, loss)
	checkGrad(t, "Add db", db.Data, b.Data, loss)
	da.Data[0]++
	if db.Data[0] == da.Data[0] {
		t.Error("Add.Backward returns gradients sharing storage")
	}
}

// TestSequentialGradients checks a small chain with a skip connection, the
// shape of the detector's blocks.
func TestSequentialGradients(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 5))
	down := NewSequential[float64](
		NewConv2D[float64]("c1", 2, 4, 3, 2, 1, false, r),
		NewBatchNorm2D[float64]("bn1", 4),
		&ReLU[float64]{},
		&Upsample2x[float64]{},
	)
	side := NewConv2D[float64]("c2", 2, 4, 1, 1, 0, true, r)
	var add Add[float64]
	x := randTensor(r, 2, 2, 6, 8)
	forward := func() *Tensor[float64] { return add.Forward(down.Forward(x, true), side.Forward(x, true)) }
	y := forward()
	dy := randTensor(r, y.N, y.C, y.H, y.W)
	params := append(down.Params(), side.Params()...)
	for _, p := range params {
		clear(p.G)
	}
	da, db := add.Backward(dy)
	dx := down.Backward(da)
	dx.AddFrom(side.Backward(db))
	loss := func() float64 { return dot(dy.Data, forward().Data) }
	checkGrad(t, "chain dx", dx.Data, x.Data, loss)
	for _, p := range params {
		checkGrad(t, "chain d"+p.Name, p.G, p.W, loss)
	}
	if len(down.Buffers()) != 2 {
		t.Errorf("Sequential.Buffers = %d, want the batch norm's 2", len(down.Buffers()))
	}
}

func TestFocalLossGradient(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 6))
	z := randTensor(r, 2, 3, 5, 4)
	y := Like(z)
	for i := range z.Data {
		z.Data[i] *= 4
		switch r.IntN(4) {
		case 0:
			y.Data[i] = 1
		case 1:
			y.Data[i] = r.Float64() // a Gaussian splat's tail
		}
	}
	_, g := FocalLoss(z, y)
	checkGrad(t, "FocalLoss", g.Data, z.Data, func() float64 { l, _ := FocalLoss(z, y); return l })
}

// TestConv2DInit: Kaiming-normal weights have std sqrt(2/fan_in) and repeat
// for the same seed. Source: He et al. 2015, "Delving Deep into
// Rectifiers" (PyTorch's kaiming_normal_ with its defaults).
func TestConv2DInit(t *testing.T) {
	a := NewConv2D[float64]("c", 64, 64, 3, 1, 1, true, rand.New(rand.NewPCG(4, 4)))
	b := NewConv2D[float64]("c", 64, 64, 3, 1, 1, true, rand.New(rand.NewPCG(4, 4)))
	var s, ss float64
	for i, v := range a.Weight.W {
		if v != b.Weight.W[i] {
			t.Fatal("same seed, different weights")
		}
		s += v
		ss += v * v
	}
	n := float64(len(a.Weight.W))
	std, want := math.Sqrt(ss/n-(s/n)*(s/n)), math.Sqrt(2.0/(64*9))
	if math.Abs(std/want-1) > 0.02 || math.Abs(s/n) > 3*want/math.Sqrt(n) {
		t.Errorf("weights: mean %.4g, std %.4g, want 0 and %.4g", s/n, std, want)
	}
	for _, v := range a.Bias.W {
		if v != 0 {
			t.Fatal("bias does not start at zero")
		}
	}
}
