package nn

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkConv2D times a forward and backward pass of convolutions of
// the sizes a small detector has: a wide 3×3 layer at stride 4's 64×64 map
// and a stem layer on a 256×256 image. GFLOP/s counts the three GEMMs.
func BenchmarkConv2D(b *testing.B) {
	for _, c := range convBenchCases {
		b.Run(c.name(), func(b *testing.B) { benchConv(b, c) })
	}
}

type convBenchCase struct{ n, in, out, k, s, p, h int }

var convBenchCases = []convBenchCase{
	{2, 64, 64, 3, 1, 1, 64},
	{2, 3, 16, 3, 2, 1, 256},
}

func (c convBenchCase) name() string {
	return fmt.Sprintf("%dx%dx%dx%d_to_%d_k%d_s%d", c.n, c.in, c.h, c.h, c.out, c.k, c.s)
}

// benchConv times forward and backward passes of one layer.
func benchConv(b *testing.B, c convBenchCase) {
	r := rand.New(rand.NewPCG(1, 2))
	l := NewConv2D[float32]("conv", c.in, c.out, c.k, c.s, c.p, true, r)
	x := New(c.n, c.in, c.h, c.h, rand32(r, c.n*c.in*c.h*c.h, 1, 0))
	ho, wo := l.OutSize(c.h, c.h)
	dy := New(c.n, c.out, ho, wo, rand32(r, c.n*c.out*ho*wo, 1, 0))
	for b.Loop() {
		l.Forward(x, true)
		l.Backward(dy)
	}
	flop := 3 * 2 * float64(c.n*c.out*ho*wo*c.in*c.k*c.k)
	b.ReportMetric(flop*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
}
