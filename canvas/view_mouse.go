package canvas

import (
	"math"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"

	"boxwright/project"
)

type gestureKind int

const (
	gestureNone gestureKind = iota
	gestureDraw
	gestureMove
	gestureResize
	gesturePan
)

// gesture is a press of a mouse button and what it is doing.
type gesture struct {
	kind    gestureKind
	pressed bool
	dragged bool
	key     int64
	handle  Handle
	start   fyne.Position // screen, where the press was
	orig    project.Box
	preview project.Box // image coordinates of the box being drawn or edited
	valid   bool
}

// handleRadius is how near a handle a press must be, in screen units.
const handleRadius = 6

func (v *View) begin(pos fyne.Position, secondary bool) {
	v.gesture = gesture{pressed: true, start: pos}
	v.ptr = pos
	if v.w == 0 {
		return
	}
	if secondary || v.space {
		v.gesture.kind = gesturePan
		return
	}
	t := v.Transform()
	// The nearest handle within reach: any of the selected box's, or a
	// corner of any editable box (the selected one wins a tie).
	sx, sy := float64(pos.X), float64(pos.Y)
	hi, hh, hd := v.cornerUnder(t, sx, sy)
	if i := v.index(v.sel); i >= 0 {
		sb := t.BoxToScreen(v.items[i].Box)
		if h := PickHandle(sb, sx, sy, handleRadius); h != HandleNone && h != HandleInside {
			if px, py := HandlePoint(sb, h); hi < 0 || math.Max(math.Abs(sx-px), math.Abs(sy-py)) <= hd {
				hi, hh = i, h
			}
		}
	}
	if hi >= 0 {
		key := v.items[hi].Key
		v.Select(key)
		v.gesture.kind, v.gesture.key, v.gesture.handle, v.gesture.orig = gestureResize, key, hh, v.items[hi].Box
		return
	}
	x, y := t.ToImage(float64(pos.X), float64(pos.Y))
	hits := v.editableHits(x, y)
	if len(hits) > 0 {
		key := hits[0]
		for _, k := range hits {
			if k == v.sel { // keep a nested selection when pressing inside it
				key = k
			}
		}
		v.Select(key)
		v.gesture.kind, v.gesture.key, v.gesture.handle, v.gesture.orig = gestureMove, key, HandleInside, v.items[v.index(key)].Box
		return
	}
	v.Select(0)
	v.gesture.kind = gestureDraw
}

// cornerMinSide is the smallest on-screen side of an unselected box whose
// corners a press takes hold of: a smaller box is moved by a press
// anywhere on it (once selected, its handles resize it).
const cornerMinSide = 3 * handleRadius

// cornerUnder finds the editable box, selected or not, whose corner
// handle is nearest the screen point (sx, sy) within handleRadius, the
// point on the box (its handles are not drawn: a drag started just
// beside a box draws a new one, as it must in a crowded scene): a press
// there resizes that box rather than moving it. Ties go to the smaller box. It returns the index (-1 when
// none), the corner and its distance (in the sense of PickHandle).
func (v *View) cornerUnder(t Transform, sx, sy float64) (int, Handle, float64) {
	best, bestH, bestD, bestA := -1, HandleNone, math.Inf(1), math.Inf(1)
	for i, it := range v.items {
		if it.ReadOnly {
			continue
		}
		b := t.BoxToScreen(it.Box)
		if b.Width() < cornerMinSide || b.Height() < cornerMinSide ||
			!b.Contains(sx, sy) {
			continue
		}
		for _, h := range [4]Handle{HandleTopLeft, HandleTopRight, HandleBottomRight, HandleBottomLeft} {
			hx, hy := HandlePoint(b, h)
			d := math.Max(math.Abs(sx-hx), math.Abs(sy-hy))
			if d > handleRadius {
				continue
			}
			if a := b.Area(); d < bestD || (d == bestD && a < bestA) {
				best, bestH, bestD, bestA = i, h, d, a
			}
		}
	}
	return best, bestH, bestD
}

func (v *View) drag(pos fyne.Position, delta fyne.Delta) {
	g := &v.gesture
	if !g.pressed {
		v.begin(pos.Subtract(delta), false)
	}
	g.dragged = true
	t := v.Transform()
	switch g.kind {
	case gesturePan:
		v.PanBy(float64(delta.DX), float64(delta.DY))
		return
	case gestureDraw:
		ax, ay := t.ToImage(float64(g.start.X), float64(g.start.Y))
		bx, by := t.ToImage(float64(pos.X), float64(pos.Y))
		g.preview, g.valid = v.bounds().Span(ax, ay, bx, by)
	case gestureMove, gestureResize:
		dx := float64(pos.X-g.start.X) / t.Scale
		dy := float64(pos.Y-g.start.Y) / t.Scale
		if g.kind == gestureMove {
			g.preview = v.bounds().Move(g.orig, dx, dy)
		} else {
			g.preview = v.bounds().Resize(g.orig, g.handle, dx, dy)
		}
		g.valid = true
	}
	v.pointerAt(pos)
	v.Refresh()
}

func (v *View) end() {
	g := v.gesture
	v.gesture = gesture{}
	if g.dragged && g.valid {
		switch g.kind {
		case gestureDraw:
			if v.OnCreate != nil {
				v.OnCreate(g.preview)
			}
		case gestureMove, gestureResize:
			if g.preview != g.orig && v.OnChange != nil {
				v.OnChange(g.key, g.preview)
			}
		}
	}
	v.Refresh()
}

// CancelGesture drops a drag in progress without changing anything.
func (v *View) CancelGesture() {
	if v.gesture.kind != gestureNone {
		v.gesture = gesture{pressed: v.gesture.pressed, kind: gestureNone}
		v.Refresh()
	}
}

// Dragging says whether a drag is under way (for tests and the status line).
func (v *View) Dragging() bool { return v.gesture.dragged }

// MouseDown is part of desktop.Mouseable.
func (v *View) MouseDown(ev *desktop.MouseEvent) {
	v.focus()
	v.begin(ev.Position, ev.Button == desktop.MouseButtonSecondary)
}

// MouseUp is part of desktop.Mouseable. The desktop driver calls it
// before DragEnd, so a primary-button drag is finished there; a secondary
// button (pan) gets no DragEnd and ends here.
func (v *View) MouseUp(ev *desktop.MouseEvent) {
	if ev.Button == desktop.MouseButtonSecondary || !v.gesture.dragged {
		v.gesture = gesture{}
	}
}

// Dragged is part of fyne.Draggable.
func (v *View) Dragged(ev *fyne.DragEvent) { v.drag(ev.Position, ev.Dragged) }

// DragEnd is part of fyne.Draggable.
func (v *View) DragEnd() { v.end() }

// Tapped is part of fyne.Tappable; selection happens on the press.
func (v *View) Tapped(*fyne.PointEvent) { v.focus() }

// Scrolled zooms around the pointer: one wheel notch is a factor of 1.25.
func (v *View) Scrolled(ev *fyne.ScrollEvent) {
	if v.w == 0 {
		return
	}
	d := float64(ev.Scrolled.DY)
	if d == 0 {
		return
	}
	v.ZoomBy(math.Pow(1.25, d/25), float64(ev.Position.X), float64(ev.Position.Y)) // the desktop driver sends 25 per wheel notch
}

// MouseIn is part of desktop.Hoverable.
func (v *View) MouseIn(ev *desktop.MouseEvent) { v.pointerAt(ev.Position) }

// MouseMoved is part of desktop.Hoverable; it also pans while the
// secondary button is held (the toolkit sends no drag for that button).
func (v *View) MouseMoved(ev *desktop.MouseEvent) {
	if v.gesture.kind == gesturePan && ev.Button == desktop.MouseButtonSecondary {
		d := ev.Position.Subtract(v.ptr)
		v.gesture.dragged = true
		v.PanBy(float64(d.X), float64(d.Y))
	}
	v.pointerAt(ev.Position)
}

// MouseOut is part of desktop.Hoverable.
func (v *View) MouseOut() {
	v.ptrIn = false
	v.setHover(0)
	if v.OnPointer != nil {
		v.OnPointer(0, 0, false)
	}
	if v.guides {
		v.Refresh()
	}
}

func (v *View) pointerAt(p fyne.Position) {
	v.ptr, v.ptrIn = p, true
	x, y := v.Transform().ToImage(float64(p.X), float64(p.Y))
	if v.OnPointer != nil {
		v.OnPointer(x, y, x >= 0 && y >= 0 && x < v.w && y < v.h)
	}
	if v.pyr != nil {
		v.setHover(v.keyUnder(x, y))
	}
	if v.guides && v.r != nil {
		v.r.layoutGuides(v.Size())
	}
}

// Pointer is the last pointer position over the view (screen units).
func (v *View) Pointer() (fyne.Position, bool) { return v.ptr, v.ptrIn }

// Cursor is part of desktop.Cursorable.
func (v *View) Cursor() desktop.Cursor {
	if v.gesture.kind == gesturePan || v.space {
		return desktop.PointerCursor
	}
	if i := v.index(v.sel); i >= 0 {
		switch PickHandle(v.Transform().BoxToScreen(v.items[i].Box), float64(v.ptr.X), float64(v.ptr.Y), handleRadius) {
		case HandleLeft, HandleRight:
			return desktop.HResizeCursor
		case HandleTop, HandleBottom:
			return desktop.VResizeCursor
		case HandleTopLeft, HandleTopRight, HandleBottomLeft, HandleBottomRight:
			return desktop.CrosshairCursor
		}
	}
	return desktop.CrosshairCursor
}

// draft is the box being drawn or edited now, if any.
func (v *View) draft() (project.Box, int64, bool) {
	g := v.gesture
	if g.dragged && g.valid && (g.kind == gestureDraw || g.kind == gestureMove || g.kind == gestureResize) {
		return g.preview, g.key, true
	}
	return project.Box{}, 0, false
}
