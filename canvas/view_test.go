package canvas

import (
	"context"
	"image"
	"image/color"
	"math"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"

	"boxwright/project"
)

// newTestView shows a flat 400×300 image in a 800×600 window (fit scale 2).
func newTestView(t *testing.T) (*View, fyne.Window) {
	t.Helper()
	test.NewTempApp(t)
	img := image.NewRGBA(image.Rect(0, 0, 400, 300))
	for i := range img.Pix {
		img.Pix[i] = 0x40
		if i%4 == 3 {
			img.Pix[i] = 0xff
		}
	}
	p, err := NewPyramid(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	v := NewView()
	w := test.NewTempWindow(t, v)
	w.SetPadded(false)
	w.Resize(fyne.NewSize(800, 600))
	v.SetImage(p)
	if tr := v.Transform(); tr.Scale != 2 {
		t.Fatalf("fit scale %v, want 2", tr.Scale)
	}
	return v, w
}

func press(v *View, x, y float32, b desktop.MouseButton) {
	v.MouseDown(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(x, y)}, Button: b})
}

// dragTo sends drag events the way the desktop driver does: the position
// is where the pointer is, the delta what it moved since the last event.
func dragTo(v *View, from, to fyne.Position, steps int) {
	last := from
	for i := 1; i <= steps; i++ {
		p := fyne.NewPos(from.X+(to.X-from.X)*float32(i)/float32(steps), from.Y+(to.Y-from.Y)*float32(i)/float32(steps))
		v.Dragged(&fyne.DragEvent{PointEvent: fyne.PointEvent{Position: p}, Dragged: fyne.NewDelta(p.X-last.X, p.Y-last.Y)})
		last = p
	}
}

func TestViewDrawsSelectsAndIgnoresReadOnly(t *testing.T) {
	v, _ := newTestView(t)
	var created []project.Box
	v.OnCreate = func(b project.Box) { created = append(created, b) }
	// Screen (100,100)→(300,260) at scale 2 with the image filling the
	// window is image (50,50)→(150,130).
	press(v, 100, 100, desktop.MouseButtonPrimary)
	dragTo(v, fyne.NewPos(100, 100), fyne.NewPos(300, 260), 5)
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	v.DragEnd()
	if len(created) != 1 || created[0] != project.Rect(50, 50, 150, 130) {
		t.Fatalf("created %v", created)
	}
	// A read-only box under an editable one: a click picks the editable one,
	// a click on the read-only one alone selects nothing.
	v.SetItems([]Item{{Key: 1, Box: project.Rect(50, 50, 150, 130)}, {Key: -9, Box: project.Rect(200, 50, 300, 130), ReadOnly: true}})
	press(v, 120, 120, desktop.MouseButtonPrimary)
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	if v.Selected() != 1 {
		t.Errorf("selected %d, want 1", v.Selected())
	}
	press(v, 500, 180, desktop.MouseButtonPrimary)
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	if v.Selected() != 0 {
		t.Errorf("a read-only box was selected (%d)", v.Selected())
	}
	v.Select(-9)
	if v.Selected() != 0 {
		t.Errorf("Select picked a read-only box")
	}
}

func TestViewEscapeCancelsADrag(t *testing.T) {
	v, _ := newTestView(t)
	n := 0
	v.OnCreate = func(project.Box) { n++ }
	press(v, 100, 100, desktop.MouseButtonPrimary)
	dragTo(v, fyne.NewPos(100, 100), fyne.NewPos(300, 260), 3)
	v.TypedKey(&fyne.KeyEvent{Name: fyne.KeyEscape})
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	v.DragEnd()
	if n != 0 {
		t.Errorf("a cancelled drag created a box")
	}
}

func TestViewZoomAndPanGestures(t *testing.T) {
	v, _ := newTestView(t)
	// One wheel notch (25 units from the desktop driver) zooms by 1.25
	// around the pointer: the image point under it stays put.
	x0, y0 := v.Transform().ToImage(333, 222)
	v.Scrolled(&fyne.ScrollEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(333, 222)}, Scrolled: fyne.NewDelta(0, 25)})
	tr := v.Transform()
	if math.Abs(tr.Scale-2.5) > 1e-9 {
		t.Fatalf("scale after a notch %v, want 2.5", tr.Scale)
	}
	if x, y := tr.ToImage(333, 222); math.Abs(x-x0) > 1e-9 || math.Abs(y-y0) > 1e-9 {
		t.Errorf("point under the pointer moved: (%g,%g) -> (%g,%g)", x0, y0, x, y)
	}
	// Right-button drag pans (the driver sends moves, not drags).
	press(v, 400, 300, desktop.MouseButtonSecondary)
	v.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(400, 300)}, Button: desktop.MouseButtonSecondary})
	v.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(380, 290)}, Button: desktop.MouseButtonSecondary})
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonSecondary})
	if got := v.Transform(); got.OffsetX != tr.OffsetX-20 || got.OffsetY != tr.OffsetY-10 {
		t.Errorf("pan by (-20,-10): %+v -> %+v", tr, got)
	}
	// Space held turns a left drag into a pan, and draws nothing.
	n := 0
	v.OnCreate = func(project.Box) { n++ }
	tr = v.Transform()
	v.KeyDown(&fyne.KeyEvent{Name: fyne.KeySpace})
	press(v, 300, 300, desktop.MouseButtonPrimary)
	dragTo(v, fyne.NewPos(300, 300), fyne.NewPos(290, 295), 2)
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	v.DragEnd()
	v.KeyUp(&fyne.KeyEvent{Name: fyne.KeySpace})
	if got := v.Transform(); n != 0 || got.OffsetX != tr.OffsetX-10 || got.OffsetY != tr.OffsetY-5 {
		t.Errorf("space-drag: %d boxes, %+v -> %+v", n, tr, got)
	}
	// The zoom stops at 3200 %; fit brings the whole image back.
	for i := 0; i < 40; i++ {
		v.TypedRune('+')
	}
	if s := v.Transform().Scale; s != MaxScale {
		t.Errorf("zoomed in to %v, want the %v limit", s, MaxScale)
	}
	v.TypedRune('f')
	if s := v.Transform().Scale; s != 2 {
		t.Errorf("fit gives %v, want 2", s)
	}
}

func TestViewRasterShowsBoxesInClassColour(t *testing.T) {
	v, w := newTestView(t)
	red := color.NRGBA{0xd5, 0x5e, 0x00, 0xff}
	v.SetItems([]Item{{Key: 1, Box: project.Rect(50, 50, 150, 130), Color: red}})
	img := w.Canvas().Capture()
	// The box's left edge is at screen x 100; its 2-unit stroke lies just
	// inside it, a dark halo just outside; the middle shows the image.
	if c := color.NRGBAModel.Convert(img.At(101, 180)).(color.NRGBA); c.R != red.R || c.G != red.G || c.B != red.B {
		t.Errorf("stroke pixel %v, want %v", c, red)
	}
	if c := color.NRGBAModel.Convert(img.At(200, 180)).(color.NRGBA); c.R != 0x40 {
		t.Errorf("inside pixel %v, want the image's grey", c)
	}
	if c := color.NRGBAModel.Convert(img.At(99, 180)).(color.NRGBA); c.R >= 0x40 {
		t.Errorf("halo pixel %v should be darker than the image", c)
	}
}
