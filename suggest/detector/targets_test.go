package detector

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"

	"boxwright/project"
	"boxwright/suggest/detector/nn"
)

func near(a, b project.Box, tol float64) bool {
	return math.Abs(a.X0-b.X0) <= tol && math.Abs(a.Y0-b.Y0) <= tol && math.Abs(a.X1-b.X1) <= tol && math.Abs(a.Y1-b.Y1) <= tol
}

// rawOf is the box head output that regresses the target box at each
// cell: the inverse of distanceOf.
func rawOf(tg Targets) []float32 {
	hw := tg.H * tg.W
	raw := make([]float32, 4*hw)
	for j := range hw {
		ax, ay := anchor(j%tg.W), anchor(j/tg.W)
		d := [4]float64{ax - float64(tg.Box[j]), ay - float64(tg.Box[hw+j]), float64(tg.Box[2*hw+j]) - ax, float64(tg.Box[3*hw+j]) - ay}
		for c := range 4 {
			raw[c*hw+j] = float32(math.Log(max(d[c], 1e-3) / Stride))
		}
	}
	return raw
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
	ds := Decode(tg.Heat, rawOf(tg), 2, tg.H, tg.W, 100, 0.99)
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

// The heat Gaussian follows the box's shape (TTFNet, Liu et al. 2020):
// a box four times as wide as high spreads four times as far across, and
// its regression weights sum to the log of its area.
func TestEncodeShapesGaussianToBox(t *testing.T) {
	s := Sample{W: 256, H: 128, Boxes: []project.Box{{X0: 40, Y0: 40, X1: 200, Y1: 80}}, Classes: []int{0}}
	tg := Encode(s, 1)
	px, py := 120/Stride, 60/Stride
	spread := func(dx, dy int) int {
		n := 0
		for k := 1; ; k++ {
			x, y := px+k*dx, py+k*dy
			if x < 0 || y < 0 || x >= tg.W || y >= tg.H || tg.Heat[y*tg.W+x] == 0 {
				return n
			}
			n++
		}
	}
	// Radii int(0.54·40/2) = 10 and int(0.54·10/2) = 2 cells.
	if a, b := spread(1, 0), spread(0, 1); a != 10 || b != 2 {
		t.Errorf("spread %d across and %d down, want 10 and 2", a, b)
	}
	var sum float64
	for _, w := range tg.Weight {
		sum += float64(w)
	}
	if want := math.Log(160 * 40); math.Abs(sum-want) > 1e-4 {
		t.Errorf("weights sum to %v, want log(area) = %v", sum, want)
	}
}

// The box loss's gradient against central finite differences (common
// practice), through the exponential that maps the raw maps to distances.
func TestBoxLossGradient(t *testing.T) {
	s := Sample{W: 64, H: 64, Boxes: []project.Box{{X0: 8, Y0: 10, X1: 40, Y1: 30}, {X0: 30, Y0: 30, X1: 50, Y1: 60}}, Classes: []int{0, 0}}
	tg := Encode(s, 1)
	r := rand.New(rand.NewPCG(7, 8))
	raw := nn.Zeros[float32](1, 4, tg.H, tg.W)
	for i := range raw.Data {
		raw.Data[i] = float32(r.Float64()*2 + 0.5)
	}
	_, g := boxLoss(raw, []Targets{tg})
	// A few cells with weight, each side, in float32: a relative step.
	hw := tg.H * tg.W
	checked := 0
	for j, w := range tg.Weight {
		if w == 0 || checked >= 6 {
			continue
		}
		checked++
		for c := range 4 {
			i := c*hw + j
			v := raw.Data[i]
			const h = 1e-2
			raw.Data[i] = v + h
			up, _ := boxLoss(raw, []Targets{tg})
			raw.Data[i] = v - h
			down, _ := boxLoss(raw, []Targets{tg})
			raw.Data[i] = v
			num := (up - down) / (2 * h)
			if math.Abs(num-float64(g.Data[i])) > 1e-3*max(1, math.Abs(num)) {
				t.Errorf("cell %d side %d: gradient %v, numeric %v", j, c, g.Data[i], num)
			}
		}
	}
	if checked == 0 {
		t.Fatal("no weighted cells")
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
