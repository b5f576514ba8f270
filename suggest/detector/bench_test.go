package detector

import (
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

func benchSample(w, h int) Sample {
	r := rand.New(rand.NewPCG(1, 1))
	s := Sample{W: w, H: h, Pixels: make([]float32, 3*w*h)}
	for i := range s.Pixels {
		s.Pixels[i] = float32(r.NormFloat64())
	}
	for i := 0; i < 20; i++ {
		x, y := r.Float64()*float64(w-40), r.Float64()*float64(h-40)
		s.Boxes = append(s.Boxes, project.Box{X0: x, Y0: y, X1: x + 10 + r.Float64()*30, Y1: y + 10 + r.Float64()*30})
		s.Classes = append(s.Classes, i%4)
	}
	return s
}

// BenchmarkTrainStep is one forward and backward pass over a batch of
// four 384×288 inputs (the demo's frames at 384 px).
func BenchmarkTrainStep(b *testing.B) {
	net := NewNet(4, 1)
	for i := 0; i < b.N; i++ {
		samples := []Sample{benchSample(384, 288), benchSample(384, 288), benchSample(384, 288), benchSample(384, 288)}
		step(net, samples, 4)
	}
}
