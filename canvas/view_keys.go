package canvas

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
)

func (v *View) focus() {
	if c := fyne.CurrentApp().Driver().CanvasForObject(v); c != nil && c.Focused() != v {
		c.Focus(v)
	}
}

// FocusGained is part of fyne.Focusable.
func (v *View) FocusGained() { v.focused = true }

// FocusLost is part of fyne.Focusable; held keys are forgotten.
func (v *View) FocusLost() { v.focused, v.shift, v.space, v.ctrl = false, false, false, false }

// AcceptsTab keeps Tab for cycling through boxes.
func (v *View) AcceptsTab() bool { return true }

// KeyDown is part of desktop.Keyable: it tracks held Shift, Control and
// Space (Space held turns a left-button drag into a pan).
func (v *View) KeyDown(ev *fyne.KeyEvent) {
	switch ev.Name {
	case desktop.KeyShiftLeft, desktop.KeyShiftRight:
		v.shift = true
	case desktop.KeyControlLeft, desktop.KeyControlRight:
		v.ctrl = true
	case fyne.KeySpace:
		v.space = true
	}
}

// KeyUp is part of desktop.Keyable.
func (v *View) KeyUp(ev *fyne.KeyEvent) {
	switch ev.Name {
	case desktop.KeyShiftLeft, desktop.KeyShiftRight:
		v.shift = false
	case desktop.KeyControlLeft, desktop.KeyControlRight:
		v.ctrl = false
	case fyne.KeySpace:
		v.space = false
	}
}

// Step is how far one arrow press moves: 1 image pixel, 10 with Shift.
func (v *View) step() float64 {
	if v.shift {
		return 10
	}
	return 1
}

// TypedKey is part of fyne.Focusable: arrows nudge the selected box (or
// pan when none is selected), Tab cycles through boxes, Escape cancels a
// drag or clears the selection; other keys go to OnKey.
func (v *View) TypedKey(ev *fyne.KeyEvent) {
	if v.underDialog() {
		return
	}
	dx, dy := 0.0, 0.0
	switch ev.Name {
	case fyne.KeyLeft:
		dx = -1
	case fyne.KeyRight:
		dx = 1
	case fyne.KeyUp:
		dy = -1
	case fyne.KeyDown:
		dy = 1
	case fyne.KeyTab:
		if v.shift {
			v.CycleAll(-1)
		} else {
			v.CycleAll(1)
		}
		return
	case fyne.KeyEscape:
		if v.gesture.kind != gestureNone && v.gesture.dragged {
			v.CancelGesture()
		} else {
			v.Select(0)
		}
		return
	case fyne.KeySpace:
		return // held for panning; see KeyDown
	default:
		if v.OnKey != nil {
			v.OnKey(ev)
		}
		return
	}
	if v.sel == 0 {
		s := v.Size()
		v.PanBy(-dx*float64(s.Width)/10, -dy*float64(s.Height)/10)
		return
	}
	v.Nudge(dx*v.step(), dy*v.step())
}

// TypedRune is part of fyne.Focusable: + and - zoom, f fits, r shows
// actual pixels, g toggles guides, t the name tags, c cycles boxes under
// the pointer;
// other characters go to OnRune.
func (v *View) TypedRune(r rune) {
	if v.underDialog() {
		return
	}
	cx, cy := v.zoomCentre()
	switch r {
	case '+', '=':
		v.ZoomBy(1.25, cx, cy)
	case '-', '_':
		v.ZoomBy(1/1.25, cx, cy)
	case 'f':
		v.FitToWindow()
	case 'r':
		v.ActualPixels(cx, cy)
	case 'g':
		v.SetGuides(!v.guides)
	case 't':
		v.SetNames(v.noNames)
	case 'c':
		v.CycleUnderPointer()
	case ' ':
	default:
		if v.OnRune != nil {
			v.OnRune(r)
		}
	}
}

// underDialog says whether a dialog or pop-up covers the window: keys
// typed then are meant for it, never for the image (Enter would mark the
// image done behind a dialog).
func (v *View) underDialog() bool {
	c := fyne.CurrentApp().Driver().CanvasForObject(v)
	return c != nil && c.Overlays().Top() != nil
}

// zoomCentre is the pointer when it is over the view, else the middle.
func (v *View) zoomCentre() (float64, float64) {
	if v.ptrIn {
		return float64(v.ptr.X), float64(v.ptr.Y)
	}
	s := v.Size()
	return float64(s.Width) / 2, float64(s.Height) / 2
}
