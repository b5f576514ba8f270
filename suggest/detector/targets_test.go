package detector

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

func near(a, b project.Box, tol float64) bool {
	return math.Abs(a.X0-b.X0) <= tol && math.Abs(a.Y0-b.Y0) <= tol && math.Abs(a.X1-b.X1) <= tol && math.Abs(a.Y1-b.Y1) <= tol
}

// Decoding the targets themselves gives back the boxes (round trip), the
// centre cell holds 1 and its neighbours less.
func TestEncodeDecodeRoundTrip(t *testing.T) {
	s := Sample{W: 128, H: 96, Boxes: []project.Box{{X0: 10, Y0: 12, X1: 40, Y1: 30}, {X0: 70, Y0: 50, X1: 77, Y1: 61}}, Classes: []int{0, 1}}
	tg := Encode(s, 2)
	if tg.W != 32 || tg.H != 24 {
		t.Fatalf("target size %dx%d", tg.W, tg.H)
	}
	cx, cy := 25/Stride, 21/Stride
	if v := tg.Heat[cy*tg.W+cx]; v != 1 {
		t.Errorf("peak %v at the centre cell", v)
	}
	if v := tg.Heat[cy*tg.W+cx+1]; !(v > 0 && v < 1) {
		t.Errorf("neighbour %v, want between 0 and 1", v)
	}
	ds := Decode(tg.Heat, tg.Size, tg.Offset, 2, tg.H, tg.W, 100, 0.99)
	if len(ds) != 2 {
		t.Fatalf("decoded %d boxes, want 2: %+v", len(ds), ds)
	}
	for _, d := range ds {
		want := s.Boxes[d.Class]
		if !near(d.Box, want, 1e-4) {
			t.Errorf("class %d: %v, want %v", d.Class, d.Box, want)
		}
	}
	back := ToImage(ds, 0.5, 1000, 1000, 0.5)
	if len(back) != 2 || !near(back[0].Box, project.Box{X0: 20, Y0: 24, X1: 80, Y1: 60}, 1e-3) && !near(back[1].Box, project.Box{X0: 20, Y0: 24, X1: 80, Y1: 60}, 1e-3) {
		t.Errorf("to image: %+v", back)
	}
}

// The peak radius grows with the object and stays inside it: each of the
// three CornerNet cases is a quadratic whose coefficients scale as a and
// a² for a square of side a, so r/a is the same for every a.
func TestGaussianRadiusScales(t *testing.T) {
	base := gaussianRadius(10, 10, 0.7) / 10
	for _, a := range []float64{5, 20, 80} {
		if r := gaussianRadius(a, a, 0.7) / a; math.Abs(r-base) > 1e-12 || r <= 0 || r >= 0.5 {
			t.Errorf("side %v: r/a = %v, want %v", a, r, base)
		}
	}
	if gaussianRadius(8, 30, 0.7) >= gaussianRadius(40, 12, 0.7) {
		t.Errorf("radius does not grow with the box")
	}
}

// Flips and quarter turns move pixels and boxes together: a bright square
// stays under its box.
func TestAugmentMovesPixelsWithBoxes(t *testing.T) {
	img := image.NewRGBA(image.Rect(0, 0, 64, 64))
	for y := 10; y < 20; y++ {
		for x := 40; x < 56; x++ {
			img.Set(x, y, color.RGBA{255, 255, 255, 255})
		}
	}
	box := project.Box{X0: 40, Y0: 10, X1: 56, Y1: 20}
	r := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 12; i++ {
		s := AugmentImage(img, []project.Box{box}, []int{0}, 64, Augment{FlipH: true, FlipV: true, QuarterTurns: true}, r)
		if len(s.Boxes) != 1 {
			t.Fatalf("round %d: %d boxes", i, len(s.Boxes))
		}
		b := s.Boxes[0]
		x, y := int((b.X0+b.X1)/2), int((b.Y0+b.Y1)/2)
		if v := s.Pixels[y*s.W+x]; v < 1 {
			t.Errorf("round %d: the box %v sits on a dark pixel (%v)", i, b, v)
		}
		if math.Abs(b.Area()-160) > 1e-6 {
			t.Errorf("round %d: area %v", i, b.Area())
		}
	}
	p, scale := PrepareImage(img, []project.Box{box}, []int{0}, 32)
	if p.W != 32 || p.H != 32 || scale != 0.5 || !near(p.Boxes[0], project.Box{X0: 20, Y0: 5, X1: 28, Y1: 10}, 1e-9) {
		t.Errorf("prepared %dx%d scale %v boxes %v", p.W, p.H, scale, p.Boxes)
	}
}
