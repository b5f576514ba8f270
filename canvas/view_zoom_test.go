package canvas

import (
	"context"
	"image"
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"
)

// newSizedView shows a flat imgW×imgH image in a winW×winH window.
func newSizedView(t *testing.T, imgW, imgH int, winW, winH float32) (*View, fyne.Window) {
	t.Helper()
	test.NewTempApp(t)
	img := image.NewRGBA(image.Rect(0, 0, imgW, imgH))
	for i := range img.Pix {
		img.Pix[i] = 0x40
	}
	p, err := NewPyramid(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	v := NewView()
	w := test.NewTempWindow(t, v)
	w.SetPadded(false)
	w.Resize(fyne.NewSize(winW, winH))
	v.SetImage(p)
	return v, w
}

func wheel(v *View, x, y float32, notches float32) {
	v.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(x, y)}, Scrolled: fyne.NewDelta(0, 25*notches)})
}

// checkWheelKeepsPoint turns the wheel at (x, y) and fails when the image
// point under the pointer moved by more than 1e-6 image pixels.
func checkWheelKeepsPoint(t *testing.T, v *View, x, y, notches float32, what string) {
	t.Helper()
	bx, by := v.Transform().ToImage(float64(x), float64(y))
	wheel(v, x, y, notches)
	ax, ay := v.Transform().ToImage(float64(x), float64(y))
	if math.Abs(ax-bx) > 1e-6 || math.Abs(ay-by) > 1e-6 {
		t.Errorf("%s: the image point under the pointer (%g,%g) moved to (%g,%g), by (%.3g,%.3g) image px",
			what, bx, by, ax, ay, ax-bx, ay-by)
	}
}

// Every wheel step keeps the image point under the pointer, the first one
// out of a fitted view too (it used to re-centre the short side of the
// image and shift the point by up to 35 image px here), and after the
// window was resized.
func TestWheelKeepsPointUnderPointerOutOfFit(t *testing.T) {
	// 400×300 in 1000×600: fit scale 2, 100 px empty on the left and right.
	v, w := newSizedView(t, 400, 300, 1000, 600)
	if tr := v.Transform(); tr.Scale != 2 || tr.OffsetX != 100 {
		t.Fatalf("fit %+v, want scale 2 offset x 100", tr)
	}
	checkWheelKeepsPoint(t, v, 150, 100, 1, "first step in from fit")
	for i := 0; i < 3; i++ {
		checkWheelKeepsPoint(t, v, 870, 520, 1, "later step in")
	}
	checkWheelKeepsPoint(t, v, 300, 80, -1, "step out")
	checkWheelKeepsPoint(t, v, 300, 80, -2, "two notches out")

	v.FitToWindow()
	checkWheelKeepsPoint(t, v, 880, 40, -1, "first step out from fit")

	// The window changes size (fit scale now 2.25, the image 92.5 px from
	// the top): still exact, in and out.
	w.Resize(fyne.NewSize(900, 860))
	v.FitToWindow()
	if tr := v.Transform(); math.Abs(tr.Scale-2.25) > 1e-9 {
		t.Fatalf("after the resize the fit scale is %v, want 900/400 = 2.25", tr.Scale)
	}
	checkWheelKeepsPoint(t, v, 600, 200, 1, "first step in after a resize")
	v.FitToWindow()
	checkWheelKeepsPoint(t, v, 20, 700, -1, "first step out after a resize")
	w.Resize(fyne.NewSize(1000, 500))
	checkWheelKeepsPoint(t, v, 400, 300, 1, "first step after a resize of a fitted view")
}

// A pan after an exact zoom may bring the image back towards the limits
// but does not jump, and does not go further past them.
func TestPanAfterExactZoomDoesNotJump(t *testing.T) {
	v, _ := newSizedView(t, 400, 300, 1000, 600)
	wheel(v, 150, 100, 1) // scale 2.5: 1000 px wide, offset x 87.5
	tr := v.Transform()
	if math.Abs(tr.OffsetX-87.5) > 1e-9 {
		t.Fatalf("offset x after the zoom %v, want 87.5", tr.OffsetX)
	}
	v.PanBy(-10, 0) // towards the limit (offset 0)
	if got := v.Transform().OffsetX; math.Abs(got-77.5) > 1e-9 {
		t.Errorf("a pan of -10 towards the limit gave offset %v, want 77.5", got)
	}
	v.PanBy(50, 0) // away from it: held where it was
	if got := v.Transform().OffsetX; math.Abs(got-77.5) > 1e-9 {
		t.Errorf("a pan away from the limit gave offset %v, want it held at 77.5", got)
	}
}

// A wheel turn with the pointer beside the image zooms around the nearest
// image point: ten notches in leave that point where it was, on screen.
func TestWheelBesideImageKeepsImageInSight(t *testing.T) {
	v, _ := newSizedView(t, 400, 300, 1000, 600)
	for i := 0; i < 10; i++ {
		wheel(v, 30, 300, 1) // in the empty margin left of the image (x < 100)
	}
	if sx, sy := v.Transform().ToScreen(0, 150); math.Abs(sx-100) > 1e-6 || math.Abs(sy-300) > 1e-6 {
		t.Errorf("the image's left edge went to (%g,%g), want (100,300)", sx, sy)
	}
}

// A resize that refits the image reports the new transform (OnView), so
// the zoom shown beside the view is current.
func TestResizeOfFittedViewReportsView(t *testing.T) {
	v, w := newSizedView(t, 400, 300, 1000, 600)
	var scales []float64
	v.OnView = func() { scales = append(scales, v.Transform().Scale) }
	w.Resize(fyne.NewSize(600, 600)) // fit scale 600/400 = 1.5
	if len(scales) == 0 || scales[len(scales)-1] != 1.5 {
		t.Errorf("OnView after the resize saw scales %v, want the last 1.5", scales)
	}
	// A zoomed view that the resize does not change reports nothing new.
	v.SetTransform(Transform{Scale: 3, OffsetX: -100, OffsetY: -100})
	n := len(scales)
	w.Resize(fyne.NewSize(600, 600))
	if len(scales) != n {
		t.Errorf("a resize to the same size reported %d view changes", len(scales)-n)
	}
}

// The pointer's image position is reported again whenever the transform
// changes under a pointer that stays still: zoom keys, the wheel beside
// the image, a pan by keys, fit.
func TestPointerReportedWhenViewChangesUnderIt(t *testing.T) {
	v, _ := newSizedView(t, 400, 300, 1000, 600)
	var got [2]float64
	n := 0
	v.OnPointer = func(x, y float64, in bool) { got, n = [2]float64{x, y}, n+1 }
	at := fyne.NewPos(40, 500) // beside the image: zooms move the image under it
	v.MouseIn(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: at}})
	check := func(what string) {
		t.Helper()
		x, y := v.Transform().ToImage(float64(at.X), float64(at.Y))
		if n == 0 || math.Abs(got[0]-x) > 1e-9 || math.Abs(got[1]-y) > 1e-9 {
			t.Errorf("after %s the last pointer report was (%g,%g) (%d reports), want (%g,%g)", what, got[0], got[1], n, x, y)
		}
		n = 0
	}
	check("entering")
	v.TypedRune('+')
	check("the + key")
	wheel(v, at.X, at.Y, 2)
	check("the wheel")
	v.TypedKey(&fyne.KeyEvent{Name: fyne.KeyRight})
	check("an arrow key pan")
	v.TypedRune('f')
	check("fit")
}
