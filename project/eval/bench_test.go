package eval

import (
	"math/rand/v2"
	"testing"
)

// benchScene is an invented scene of the stated size (fixed seed): half the
// predictions jitter around a truth of the same image, the rest are random.
func benchScene(images, truthsN, predsN, classes int) ([]Truth, []Prediction) {
	r := rand.New(rand.NewPCG(1, 2))
	box := func() (x, y, w, h float64) {
		return r.Float64() * 600, r.Float64() * 400, 8 + r.Float64()*150, 8 + r.Float64()*150
	}
	truths := make([]Truth, truthsN)
	for i := range truths {
		x, y, w, h := box()
		truths[i] = Truth{ImageID: int64(i % images), ClassID: int64(r.IntN(classes)), Box: bx(x, y, x+w, y+h), Crowd: r.IntN(50) == 0, Ref: int64(i)}
	}
	preds := make([]Prediction, predsN)
	for i := range preds {
		p := Prediction{Score: r.Float64(), Ref: int64(i)}
		if i%2 == 0 {
			t := truths[r.IntN(truthsN)]
			j := func() float64 { return (r.Float64() - 0.5) * 0.3 * t.Box.Width() }
			p.ImageID, p.ClassID = t.ImageID, t.ClassID
			p.Box = bx(t.Box.X0+j(), t.Box.Y0+j(), t.Box.X1+j(), t.Box.Y1+j())
			if p.Box.X1 <= p.Box.X0 || p.Box.Y1 <= p.Box.Y0 {
				p.Box = t.Box
			}
		} else {
			x, y, w, h := box()
			p.ImageID, p.ClassID, p.Box = int64(r.IntN(images)), int64(r.IntN(classes)), bx(x, y, x+w, y+h)
		}
		preds[i] = p
	}
	return truths, preds
}

// BenchmarkEvaluateCOCO: 5,000 images, 40,000 truths, 200,000 predictions
// over 10 classes, COCO AP@[.50:.95] with 101-point interpolation.
func BenchmarkEvaluateCOCO(b *testing.B) {
	truths, preds := benchScene(5000, 40000, 200000, 10)
	opt := Options{Protocol: COCO, Interpolation: Point101}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Evaluate(truths, preds, opt); err != nil {
			b.Fatal(err)
		}
	}
}
