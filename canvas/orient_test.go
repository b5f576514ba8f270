package canvas

import (
	"context"
	"image"
	"image/color"
	"testing"

	"boxwright/project"
	"boxwright/store/imagefile"
)

// orientedBox is where a box drawn on the stored pixels of a w×h image
// appears once the image is displayed under an EXIF orientation. It is
// derived from the Orientation tag (0x0112) table of CIPA DC-008-2019
// (Exif 2.32), which says which visual side the stored 0th row and 0th
// column are on:
//
//	1 row top,    column left    5 row left,   column top
//	2 row top,    column right   6 row right,  column top
//	3 row bottom, column right   7 row right,  column bottom
//	4 row bottom, column left    8 row left,   column bottom
//
// (table wording from memory of the standard). Where stored rows run
// along the displayed x axis (5..8), stored y becomes displayed x; a side
// "right" or "bottom" counts from the far edge, so a stored coordinate u
// becomes size-u and the box's low and high edges swap.
func orientedBox(b project.Box, w, h float64, o int) project.Box {
	flip := func(lo, hi, size float64) (float64, float64) { return size - hi, size - lo }
	x0, x1, y0, y1 := b.X0, b.X1, b.Y0, b.Y1
	switch o {
	case 1:
		return b
	case 2: // column 0 on the right
		x0, x1 = flip(x0, x1, w)
		return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
	case 3: // row 0 at the bottom, column 0 on the right
		x0, x1 = flip(x0, x1, w)
		y0, y1 = flip(y0, y1, h)
		return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
	case 4: // row 0 at the bottom
		y0, y1 = flip(y0, y1, h)
		return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
	case 5: // row 0 on the left, column 0 at the top: displayed (x,y) = stored (y,x)
		return project.Box{X0: y0, Y0: x0, X1: y1, Y1: x1}
	case 6: // row 0 on the right, column 0 at the top
		dx0, dx1 := flip(y0, y1, h)
		return project.Box{X0: dx0, Y0: x0, X1: dx1, Y1: x1}
	case 7: // row 0 on the right, column 0 at the bottom
		dx0, dx1 := flip(y0, y1, h)
		dy0, dy1 := flip(x0, x1, w)
		return project.Box{X0: dx0, Y0: dy0, X1: dx1, Y1: dy1}
	case 8: // row 0 on the left, column 0 at the bottom
		dy0, dy1 := flip(x0, x1, w)
		return project.Box{X0: y0, Y0: dy0, X1: y1, Y1: dy1}
	}
	panic("orientation out of range")
}

var orientRed = color.RGBA{0xff, 0, 0, 0xff}

// redBounds is the box covering the red pixels of img, in continuous
// pixel coordinates (a pixel (x,y) covers [x,x+1)×[y,y+1)).
func redBounds(img image.Image) (project.Box, bool) {
	r := image.Rectangle{}
	found := false
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if color.RGBAModel.Convert(img.At(x, y)) == orientRed {
				p := image.Rect(x, y, x+1, y+1)
				if !found {
					r, found = p, true
				} else {
					r = r.Union(p)
				}
			}
		}
	}
	return project.Box{X0: float64(r.Min.X), Y0: float64(r.Min.Y), X1: float64(r.Max.X), Y1: float64(r.Max.Y)}, found
}

func TestBoxesOnImagesInAllEightOrientations(t *testing.T) {
	const w, h = 37, 23 // odd, so no flip maps the rectangle onto itself
	raw := image.NewRGBA(image.Rect(0, 0, w, h))
	for i := 0; i < len(raw.Pix); i += 4 {
		raw.Pix[i], raw.Pix[i+1], raw.Pix[i+2], raw.Pix[i+3] = 40, 90, 160, 0xff
	}
	// Stored pixels x 5..11, y 3..8: off centre in both directions.
	rawBox := project.Box{X0: 5, Y0: 3, X1: 12, Y1: 9}
	for y := 3; y < 9; y++ {
		for x := 5; x < 12; x++ {
			raw.SetRGBA(x, y, orientRed)
		}
	}
	bg := color.RGBA{0, 0, 0, 0xff}
	const viewW, viewH = 1013, 777
	for o := 1; o <= 8; o++ {
		oriented := imagefile.Orient(raw, o)
		dw, dh := float64(w), float64(h)
		if o >= 5 {
			dw, dh = dh, dw
		}
		if b := oriented.Bounds(); b != image.Rect(0, 0, int(dw), int(dh)) {
			t.Fatalf("orientation %d: displayed bounds %v, want %v×%v", o, b, dw, dh)
		}
		want := orientedBox(rawBox, w, h, o)
		got, ok := redBounds(oriented)
		if !ok || got != want {
			t.Errorf("orientation %d: red box displayed at %v, want %v (from the Exif table)", o, got, want)
			continue
		}

		// The brief's odd view: fitted, then one zoom off centre. Where
		// that leaves the box off screen, a pan brings its centre to the
		// middle, so the pixel checks below are never vacuous.
		tr := Fit(dw, dh, viewW, viewH).ZoomAt(1.7, 311.5, 97.25)
		sb := tr.BoxToScreen(want)
		if sb.Intersect(project.Box{X1: viewW, Y1: viewH}).Empty() {
			cx, cy := sb.Center()
			tr = tr.Pan(viewW/2-cx, viewH/2-cy)
			t.Logf("orientation %d: box off screen after the zoom; panned by (%g,%g)", o, viewW/2-cx, viewH/2-cy)
			sb = tr.BoxToScreen(want)
		}
		x0, y0 := tr.ToImage(sb.X0, sb.Y0)
		x1, y1 := tr.ToImage(sb.X1, sb.Y1)
		if back := (project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}); !geomNearBox(back, want) {
			t.Errorf("orientation %d: box %v -> screen %v -> %v", o, want, sb, back)
		}
		// A press at the box's screen centre finds it, not the image-sized
		// box under it nor a decoy elsewhere.
		cx, cy := sb.Center()
		ix, iy := tr.ToImage(cx, cy)
		boxes := []project.Box{{X1: dw, Y1: dh}, want, {X0: dw - 3, Y0: dh - 3, X1: dw, Y1: dh}}
		if hits := HitTest(boxes, ix, iy); len(hits) == 0 || hits[0] != 1 {
			t.Errorf("orientation %d: HitTest at (%g,%g) = %v, want the red box first", o, ix, iy, hits)
		}

		p, err := NewPyramid(context.Background(), oriented)
		if err != nil {
			t.Fatal(err)
		}
		dst := image.NewRGBA(image.Rect(0, 0, viewW, viewH))
		p.Render(dst, tr, bg)
		checkRedOnScreen(t, o, dst, sb)
	}
}

// checkRedOnScreen checks that red screen pixels lie where the box is on
// screen. A screen pixel is red when its centre maps into the red source
// pixels (Render's nearest-neighbour rule), so a red pixel's square may
// reach up to 1 px beyond the box's continuous edges, and only pixels
// whose squares lie 1 px inside the edges must be red: a box edge at a
// fractional screen coordinate falls inside a pixel whose centre may lie
// on either side of it.
func checkRedOnScreen(t *testing.T, o int, dst *image.RGBA, sb project.Box) {
	t.Helper()
	outer := project.Box{X0: sb.X0 - 1, Y0: sb.Y0 - 1, X1: sb.X1 + 1, Y1: sb.Y1 + 1}
	inner := project.Box{X0: sb.X0 + 1, Y0: sb.Y0 + 1, X1: sb.X1 - 1, Y1: sb.Y1 - 1}
	red, stray, missing := 0, 0, 0
	r := dst.Rect
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			px := project.Box{X0: float64(x), Y0: float64(y), X1: float64(x + 1), Y1: float64(y + 1)}
			isRed := dst.RGBAAt(x, y) == orientRed
			if isRed {
				red++
				if px.X0 < outer.X0 || px.Y0 < outer.Y0 || px.X1 > outer.X1 || px.Y1 > outer.Y1 {
					stray++
				}
				// The exact rule: the pixel centre lies in the box.
				if cx, cy := px.Center(); !sb.Contains(cx, cy) {
					stray++
				}
			} else if px.X0 >= inner.X0 && px.Y0 >= inner.Y0 && px.X1 <= inner.X1 && px.Y1 <= inner.Y1 {
				missing++
			}
		}
	}
	if red == 0 {
		t.Errorf("orientation %d: no red pixel on screen; box on screen at %v", o, sb)
	}
	if stray > 0 || missing > 0 {
		t.Errorf("orientation %d: box on screen %v: %d red pixels outside it, %d pixels inside it not red", o, sb, stray, missing)
	}
}
