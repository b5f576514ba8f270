package onnx

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

// The letterbox of a landscape and a portrait image of odd sizes in odd
// and even inputs: the scale is min(inW/w, inH/h), each scaled side
// rounded, centred with the odd pixel of padding on the right or bottom
// (common practice), and the image's corners land on the content's
// corners exactly.
func TestLetterboxPlacement(t *testing.T) {
	cases := []struct {
		w, h, inW, inH           int
		align                    string
		width, height, left, top int
	}{
		{1281, 719, 640, 640, "centre", 640, 359, 0, 140}, // 719·640/1281 = 359.2
		{719, 1281, 640, 640, "centre", 359, 640, 140, 0},
		{1281, 719, 641, 383, "centre", 641, 360, 0, 11}, // 719·641/1281 = 359.8
		{1281, 719, 640, 640, "top-left", 640, 359, 0, 0},
		{333, 777, 95, 95, "centre", 41, 95, 27, 0}, // 333·95/777 = 40.7
	}
	for _, c := range cases {
		lb := FitLetterbox(c.w, c.h, c.inW, c.inH, "letterbox", c.align)
		if lb.Width != c.width || lb.Height != c.height || lb.Left != c.left || lb.Top != c.top {
			t.Errorf("%d×%d in %d×%d %s: got %+v, want %d×%d at (%d, %d)", c.w, c.h, c.inW, c.inH, c.align, lb, c.width, c.height, c.left, c.top)
		}
		whole := lb.ToInput(project.Box{X1: float64(c.w), Y1: float64(c.h)})
		want := project.Box{X0: float64(c.left), Y0: float64(c.top), X1: float64(c.left + c.width), Y1: float64(c.top + c.height)}
		if whole != want {
			t.Errorf("%d×%d: the whole image maps to %+v, want the content %+v", c.w, c.h, whole, want)
		}
		if back := lb.ToImage(want); back != (project.Box{X1: float64(c.w), Y1: float64(c.h)}) {
			t.Errorf("%d×%d: the content maps back to %+v", c.w, c.h, back)
		}
	}
	if lb := FitLetterbox(1281, 719, 640, 640, "stretch", "centre"); lb.Width != 640 || lb.Height != 640 || lb.Left != 0 || lb.Top != 0 {
		t.Errorf("stretch: %+v", lb)
	}
}

// Boxes round-trip through the letterbox: image → input → image gives
// the box back within 1e-9 px (float64 rounding only: the two mappings
// multiply and divide by the same whole numbers), for random boxes on odd
// sizes of both orientations, centred, top-left and stretched, down to
// inputs a few pixels wide.
func TestLetterboxRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 5))
	for range 2000 {
		w, h := 1+r.IntN(3000), 1+r.IntN(3000)
		if r.IntN(2) == 0 {
			w |= 1
			h |= 1
		}
		inW, inH := 1+r.IntN(1300), 1+r.IntN(1300)
		resize := []string{"letterbox", "stretch"}[r.IntN(2)]
		align := []string{"centre", "top-left"}[r.IntN(2)]
		lb := FitLetterbox(w, h, inW, inH, resize, align)
		x0, y0 := r.Float64()*float64(w), r.Float64()*float64(h)
		b := project.Box{X0: x0, Y0: y0, X1: x0 + r.Float64()*(float64(w)-x0), Y1: y0 + r.Float64()*(float64(h)-y0)}
		back := lb.ToImage(lb.ToInput(b))
		const tol = 1e-9
		if d := math.Max(math.Max(math.Abs(back.X0-b.X0), math.Abs(back.Y0-b.Y0)), math.Max(math.Abs(back.X1-b.X1), math.Abs(back.Y1-b.Y1))); d > tol {
			t.Fatalf("%d×%d in %d×%d (%s, %s): %+v came back as %+v (off by %g)", w, h, inW, inH, resize, align, b, back, d)
		}
		if lb.Left < 0 || lb.Top < 0 || lb.Left+lb.Width > inW || lb.Top+lb.Height > inH {
			t.Fatalf("%d×%d in %d×%d: content %+v outside the input", w, h, inW, inH, lb)
		}
	}
}

// The input tensor: padding in the description's grey, channels in its
// order, (v·scale − mean)/std, NCHW.
func TestLetterboxTensor(t *testing.T) {
	img := image.NewRGBA(image.Rect(0, 0, 4, 2))
	for y := range 2 {
		for x := range 4 {
			img.Set(x, y, color.RGBA{200, 100, 50, 255})
		}
	}
	pad := 114.0
	in := Input{Pad: &pad, Channels: "bgr", Scale: 1.0 / 255, Mean: []float64{0.1, 0.2, 0.3}, Std: []float64{0.5, 0.25, 0.125}}
	lb := FitLetterbox(4, 2, 4, 4, "letterbox", "centre") // rows 1..2 hold the image
	x := lb.Tensor(img, in)
	if len(x) != 3*16 {
		t.Fatalf("%d values", len(x))
	}
	at := func(c, y, xx int) float32 { return x[c*16+y*4+xx] }
	near := func(got float32, want float64) bool { return math.Abs(float64(got)-want) < 1e-6 }
	// Channel 0 is blue (bgr): 50/255.
	if !near(at(0, 1, 2), (50.0/255-0.1)/0.5) || !near(at(1, 2, 0), (100.0/255-0.2)/0.25) || !near(at(2, 1, 3), (200.0/255-0.3)/0.125) {
		t.Errorf("content: %v %v %v", at(0, 1, 2), at(1, 2, 0), at(2, 1, 3))
	}
	if !near(at(0, 0, 0), (114.0/255-0.1)/0.5) || !near(at(2, 3, 3), (114.0/255-0.3)/0.125) {
		t.Errorf("padding: %v %v", at(0, 0, 0), at(2, 3, 3))
	}
}

// The one-pass RGBA path gives the values of the general path (the
// image scaled by golang.org/x/image/draw's ApproxBiLinear, then
// normalised) to the bit, for odd sizes up and down, both alignments,
// both channel orders and a grey pad.
func TestTensorRGBAMatchesDraw(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 9))
	for range 60 {
		w, h := 1+r.IntN(300), 1+r.IntN(300)
		src := image.NewRGBA(image.Rect(0, 0, w, h))
		for i := range src.Pix {
			src.Pix[i] = uint8(r.IntN(256))
		}
		for i := 3; i < len(src.Pix); i += 4 {
			src.Pix[i] = 255
		}
		pad := float64(r.IntN(256))
		in := Input{Pad: &pad, Channels: []string{"rgb", "bgr"}[r.IntN(2)], Scale: 1.0 / 255, Mean: []float64{0.1, 0.45, 0.3}, Std: []float64{0.2, 0.25, 0.5}}
		lb := FitLetterbox(w*(1+r.IntN(3)), h*(1+r.IntN(3)), 1+r.IntN(200), 1+r.IntN(200), "letterbox", []string{"centre", "top-left"}[r.IntN(2)])
		fast := lb.Tensor(src, in)
		slow := lb.Tensor(struct{ image.Image }{src}, in) // not *image.RGBA: the general path
		for i := range fast {
			if fast[i] != slow[i] {
				t.Fatalf("%d×%d into %+v, %s: value %d is %v, the general path %v", w, h, lb, in.Channels, i, fast[i], slow[i])
			}
		}
	}
}
