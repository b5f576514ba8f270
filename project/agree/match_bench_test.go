package agree

import (
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

func newBenchRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 17)) }

// randomBoxes places n boxes of 20 to 120 pixels on a 1000×1000 image.
func randomBoxes(r *rand.Rand, n int) []project.Box {
	out := make([]project.Box, n)
	for i := range out {
		x, y := r.Float64()*880, r.Float64()*880
		out[i] = project.Box{X0: x, Y0: y, X1: x + 20 + r.Float64()*100, Y1: y + 20 + r.Float64()*100}
	}
	return out
}

// redraw is another annotator's version of the same image: most boxes a few
// pixels off, one in ten missed and replaced by a box of their own, as real
// annotators differ.
func redraw(r *rand.Rand, a []project.Box) []project.Box {
	jitter := func() float64 { return (r.Float64() - 0.5) * 8 }
	var b []project.Box
	for _, o := range a {
		if r.IntN(10) > 0 {
			b = append(b, project.Box{X0: o.X0 + jitter(), Y0: o.Y0 + jitter(), X1: o.X1 + jitter(), Y1: o.Y1 + jitter()})
		}
	}
	return append(b, randomBoxes(r, len(a)-len(b))...)
}

// benchScene is one image's boxes for two annotators.
func benchScene(r *rand.Rand, n int) (a, b []project.Box) {
	a = randomBoxes(r, n)
	return a, redraw(r, a)
}

const benchImages = 10_000

// BenchmarkMatchBoxes matches 10,000 images × 2 annotators × 20 boxes per
// operation: ns/op is the time for the whole set.
func BenchmarkMatchBoxes(b *testing.B) {
	r := newBenchRand(42)
	as, bs := make([][]project.Box, benchImages), make([][]project.Box, benchImages)
	for i := range as {
		as[i], bs[i] = benchScene(r, 20)
	}
	for b.Loop() {
		for i := range as {
			MatchBoxes(as[i], bs[i], nil, nil, 0.5, false)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/benchImages, "ns/image")
}

// BenchmarkGroupObjects groups 10,000 images × 5 annotators × 20 boxes per
// operation.
func BenchmarkGroupObjects(b *testing.B) {
	r := newBenchRand(43)
	images := make([][][]project.Box, benchImages)
	for i := range images {
		truth := randomBoxes(r, 20)
		for range 5 {
			images[i] = append(images[i], redraw(r, truth))
		}
	}
	for b.Loop() {
		for _, im := range images {
			GroupObjects(im, nil, 0.5, false)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/benchImages, "ns/image")
}
