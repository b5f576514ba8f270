package detector

import (
	"image"
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

// BenchmarkDetectImage is inference on one 1280×960 image at the largest
// input size (640 px), decoding and NMS included.
func BenchmarkDetectImage(b *testing.B) {
	m := &Model{Net: NewNet(4, 1), Classes: []string{"a", "b", "c", "d"}, InputSize: 640}
	img := image.NewRGBA(image.Rect(0, 0, 1280, 960))
	r := rand.New(rand.NewPCG(2, 2))
	for i := range img.Pix {
		img.Pix[i] = uint8(r.IntN(256))
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		m.DetectImage(img, 100, 0.3, 0.5)
	}
}
