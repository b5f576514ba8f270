package canvas

import (
	"image"
	"image/color"
	"math"
	"sort"
	"sync"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

// Item is one box the view shows.
type Item struct {
	Key     int64 // the caller's identity of the box; never 0
	Box     project.Box
	Color   color.NRGBA
	Caption string
	// ReadOnly boxes (another annotator's) are drawn as a second, dashed
	// layer and cannot be selected or edited.
	ReadOnly bool
	// Dash is a read-only box's dash length in pixels (0: 6; negative: a
	// solid thin line), so that compared annotators look different.
	Dash int
	// Marked boxes get a second, white outline around them: the boxes
	// that found no partner in a comparison.
	Marked bool
	// Suggestion boxes are a model's proposals: selectable and editable
	// like the person's own, but drawn dotted with a tinted fill so that
	// nobody takes them for labels.
	Suggestion bool
}

// View shows one image with its boxes and lets a person zoom, pan, draw,
// select, move and resize boxes with mouse and keyboard. It changes no
// data itself: it reports each finished gesture through its On… callbacks
// and the caller answers with SetItems. Use it from the Fyne goroutine.
type View struct {
	widget.BaseWidget

	// OnCreate reports a box drawn by a drag.
	OnCreate func(b project.Box)
	// OnChange reports a box moved, resized or nudged.
	OnChange func(key int64, b project.Box)
	// OnSelect reports a change of selection (0: none).
	OnSelect func(key int64)
	// OnPointer reports the pointer's image position (in false: outside).
	OnPointer func(x, y float64, in bool)
	// OnKey and OnRune receive the keys the view does not use itself.
	OnKey  func(*fyne.KeyEvent)
	OnRune func(rune)
	// OnView reports a change of zoom, pan or guides.
	OnView func()

	// Limits sets the minimum box side and pixel snapping; W and H are
	// taken from the image.
	Limits Bounds

	mu   sync.Mutex // guards what the raster generator reads
	pyr  *Pyramid
	w, h float64
	t    Transform
	fit  bool // the transform follows the window size until the user zooms

	items     []Item
	sel       int64
	message   string
	guides    bool
	showOther bool
	noNames   bool // class-name tags hidden to see crowded images

	ptr     fyne.Position
	ptrIn   bool
	gesture gesture
	shift   bool
	space   bool
	ctrl    bool
	focused bool

	r *viewRenderer
}

// NewView makes an empty view.
func NewView() *View {
	v := &View{fit: true, showOther: true, Limits: Bounds{MinSide: DefaultMinSide, Snap: true}}
	v.ExtendBaseWidget(v)
	return v
}

// SetImage shows the image held by p (nil: none) and fits it to the view.
func (v *View) SetImage(p *Pyramid) {
	v.mu.Lock()
	v.pyr, v.message, v.fit = p, "", true
	v.w, v.h = 0, 0
	if p != nil {
		w, h := p.Size()
		v.w, v.h = float64(w), float64(h)
	}
	v.mu.Unlock()
	v.gesture = gesture{}
	v.refit()
	v.Refresh()
}

// Image is the pyramid shown now.
func (v *View) Image() *Pyramid {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.pyr
}

// SetItems replaces the boxes; the selection is kept when its key is still
// there and editable.
func (v *View) SetItems(items []Item) {
	v.mu.Lock()
	v.items = append(v.items[:0:0], items...)
	v.mu.Unlock()
	if v.sel != 0 {
		if i := v.index(v.sel); i < 0 || v.items[i].ReadOnly {
			v.sel = 0
		}
	}
	v.Refresh()
}

// Items returns the boxes shown now.
func (v *View) Items() []Item { return append([]Item(nil), v.items...) }

// SetMessage clears the image and shows a line of text instead.
func (v *View) SetMessage(msg string) {
	v.mu.Lock()
	v.pyr, v.message, v.w, v.h = nil, msg, 0, 0
	v.items = nil
	v.mu.Unlock()
	v.sel = 0
	v.Refresh()
}

// Message returns the text shown instead of an image, if any.
func (v *View) Message() string { return v.message }

// Selected is the key of the selected box, 0 when none is.
func (v *View) Selected() int64 { return v.sel }

// Select selects the box with key (0: none) and reports it.
func (v *View) Select(key int64) {
	if key != 0 {
		if i := v.index(key); i < 0 || v.items[i].ReadOnly {
			key = 0
		}
	}
	if key == v.sel {
		return
	}
	v.sel = key
	if v.OnSelect != nil {
		v.OnSelect(key)
	}
	v.Refresh()
}

// SetGuides shows or hides the guide lines that follow the pointer.
func (v *View) SetGuides(on bool) {
	v.guides = on
	v.Refresh()
	v.viewChanged()
}

func (v *View) viewChanged() {
	if v.OnView != nil {
		v.OnView()
	}
}

// SetNames shows or hides the class-name tags of the boxes.
func (v *View) SetNames(on bool) {
	v.noNames = !on
	v.Refresh()
	v.viewChanged()
}

// Names says whether class-name tags are shown.
func (v *View) Names() bool { return !v.noNames }

// Guides says whether guide lines are shown.
func (v *View) Guides() bool { return v.guides }

// SetShowReadOnly shows or hides the read-only layer.
func (v *View) SetShowReadOnly(on bool) {
	v.mu.Lock()
	v.showOther = on
	v.mu.Unlock()
	v.Refresh()
}

// ShowReadOnly says whether the read-only layer is shown.
func (v *View) ShowReadOnly() bool { return v.showOther }

// Transform is the image⇄screen mapping now (screen in widget units).
func (v *View) Transform() Transform {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.t
}

// SetTransform sets the zoom and pan (clamped to the zoom limits and kept
// on the image); the view stops following the window size.
func (v *View) SetTransform(t Transform) {
	s := v.Size()
	t.Scale = ClampScale(t.Scale)
	v.mu.Lock()
	v.t, v.fit = t.Keep(v.w, v.h, float64(s.Width), float64(s.Height)), false
	v.mu.Unlock()
	v.Refresh()
	v.viewChanged()
}

// FitToWindow shows the whole image, and keeps doing so when the window
// is resized.
func (v *View) FitToWindow() {
	v.mu.Lock()
	v.fit = true
	v.mu.Unlock()
	v.refit()
	v.Refresh()
	v.viewChanged()
}

// ZoomBy zooms by factor around the screen point (sx, sy).
func (v *View) ZoomBy(factor float64, sx, sy float64) {
	v.SetTransform(v.Transform().ZoomAt(factor, sx, sy))
}

// ActualPixels shows one image pixel per screen pixel, keeping the image
// point under (sx, sy) in place.
func (v *View) ActualPixels(sx, sy float64) {
	scale := 1.0
	if c := fyne.CurrentApp().Driver().CanvasForObject(v); c != nil && c.Scale() > 0 {
		scale = 1 / float64(c.Scale()) // one device pixel per image pixel
	}
	v.SetTransform(v.Transform().ScaleAt(scale, sx, sy))
}

func (v *View) refit() {
	s := v.Size()
	v.mu.Lock()
	if v.fit {
		v.t = Fit(v.w, v.h, float64(s.Width), float64(s.Height))
	}
	v.mu.Unlock()
}

// Resize keeps a fitted image fitted.
func (v *View) Resize(s fyne.Size) {
	v.BaseWidget.Resize(s)
	v.mu.Lock()
	if !v.fit {
		v.t = v.t.Keep(v.w, v.h, float64(s.Width), float64(s.Height))
	}
	v.mu.Unlock()
	v.refit()
	v.Refresh()
}

func (v *View) index(key int64) int {
	for i, it := range v.items {
		if it.Key == key {
			return i
		}
	}
	return -1
}

func (v *View) bounds() Bounds {
	b := v.Limits
	b.W, b.H = v.w, v.h
	return b
}

// editable are the indices of the boxes a person may pick.
func (v *View) editableHits(x, y float64) []int64 {
	var boxes []project.Box
	var keys []int64
	for _, it := range v.items {
		if !it.ReadOnly {
			boxes, keys = append(boxes, it.Box), append(keys, it.Key)
		}
	}
	var out []int64
	for _, i := range HitTest(boxes, x, y) {
		out = append(out, keys[i])
	}
	return out
}

// CycleUnderPointer selects the next of the boxes under the pointer, for
// boxes stacked on one another.
func (v *View) CycleUnderPointer() {
	x, y := v.Transform().ToImage(float64(v.ptr.X), float64(v.ptr.Y))
	hits := v.editableHits(x, y)
	if len(hits) == 0 {
		return
	}
	next := hits[0]
	for i, k := range hits {
		if k == v.sel {
			next = hits[(i+1)%len(hits)]
		}
	}
	v.Select(next)
}

// CycleAll selects the next (d=1) or previous (d=-1) box in reading
// order: top to bottom, then left to right.
func (v *View) CycleAll(d int) {
	var order []Item
	for _, it := range v.items {
		if !it.ReadOnly {
			order = append(order, it)
		}
	}
	if len(order) == 0 {
		return
	}
	sort.SliceStable(order, func(a, b int) bool {
		if order[a].Box.Y0 != order[b].Box.Y0 {
			return order[a].Box.Y0 < order[b].Box.Y0
		}
		return order[a].Box.X0 < order[b].Box.X0
	})
	at := -1
	for i, it := range order {
		if it.Key == v.sel {
			at = i
		}
	}
	switch {
	case at < 0 && d < 0:
		at = len(order) - 1
	case at < 0:
		at = 0
	default:
		at = (at + d + len(order)) % len(order)
	}
	v.Select(order[at].Key)
}

// Nudge moves the selected box by (dx, dy) image pixels.
func (v *View) Nudge(dx, dy float64) {
	v.editSelected(func(bd Bounds, b project.Box) project.Box { return bd.Move(b, dx, dy) })
}

// Grow moves the selected box's right and bottom edges by (dw, dh).
func (v *View) Grow(dw, dh float64) {
	v.editSelected(func(bd Bounds, b project.Box) project.Box { return bd.Resize(b, HandleBottomRight, dw, dh) })
}

func (v *View) editSelected(f func(Bounds, project.Box) project.Box) {
	i := v.index(v.sel)
	if i < 0 {
		return
	}
	nb := f(v.bounds(), v.items[i].Box)
	if nb != v.items[i].Box && v.OnChange != nil {
		v.OnChange(v.sel, nb)
	}
}

// PanBy pans by (dx, dy) screen units.
func (v *View) PanBy(dx, dy float64) {
	v.SetTransform(v.Transform().Pan(dx, dy))
}

// ---- mouse ----

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
	if i := v.index(v.sel); i >= 0 {
		h := PickHandle(t.BoxToScreen(v.items[i].Box), float64(pos.X), float64(pos.Y), handleRadius)
		if h != HandleNone && h != HandleInside {
			v.gesture.kind, v.gesture.key, v.gesture.handle, v.gesture.orig = gestureResize, v.sel, h, v.items[i].Box
			return
		}
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
	if v.OnPointer != nil {
		v.OnPointer(0, 0, false)
	}
	if v.guides {
		v.Refresh()
	}
}

func (v *View) pointerAt(p fyne.Position) {
	v.ptr, v.ptrIn = p, true
	if v.OnPointer != nil {
		x, y := v.Transform().ToImage(float64(p.X), float64(p.Y))
		v.OnPointer(x, y, x >= 0 && y >= 0 && x < v.w && y < v.h)
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

// ---- keyboard ----

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

// MinSize keeps the view usable in a crowded window.
func (v *View) MinSize() fyne.Size { return fyne.NewSize(200, 150) }

// CreateRenderer is part of fyne.Widget.
func (v *View) CreateRenderer() fyne.WidgetRenderer {
	r := newViewRenderer(v)
	v.r = r
	return r
}

// draft is the box being drawn or edited now, if any.
func (v *View) draft() (project.Box, int64, bool) {
	g := v.gesture
	if g.dragged && g.valid && (g.kind == gestureDraw || g.kind == gestureMove || g.kind == gestureResize) {
		return g.preview, g.key, true
	}
	return project.Box{}, 0, false
}

var _ fyne.Draggable = (*View)(nil)
var _ desktop.Mouseable = (*View)(nil)
var _ desktop.Hoverable = (*View)(nil)
var _ desktop.Keyable = (*View)(nil)
var _ fyne.Scrollable = (*View)(nil)
var _ fyne.Tappable = (*View)(nil)
var _ desktop.Cursorable = (*View)(nil)

// ---- rendering ----

// maxCaptions bounds the caption objects: beyond it only the largest
// boxes on screen get one, so 2,000 boxes stay quick.
const maxCaptions = 300

var viewBackground = color.RGBA{0x2a, 0x2c, 0x30, 0xff}

type caption struct {
	tag  *fcanvas.Rectangle
	text *fcanvas.Text
}

type viewRenderer struct {
	v       *View
	raster  *fcanvas.Raster
	buf     *image.RGBA
	msg     *fcanvas.Text
	caps    []caption
	selHalo *fcanvas.Rectangle
	selBox  *fcanvas.Rectangle
	handles [8]*fcanvas.Rectangle
	guideX  *fcanvas.Line
	guideY  *fcanvas.Line
	objs    []fyne.CanvasObject

	captionItems []Item
	drawn        rasterState // what the raster shows, to skip needless redraws
}

// rasterState is everything the raster's pixels depend on.
type rasterState struct {
	pyr       *Pyramid
	t         Transform
	items     *Item
	n         int
	sel       int64
	editing   int64
	drafting  bool
	showOther bool
	size      fyne.Size
}

func (r *viewRenderer) state() rasterState {
	v := r.v
	s := rasterState{pyr: v.pyr, t: v.Transform(), n: len(v.items), sel: v.sel, showOther: v.showOther, size: v.Size()}
	if len(v.items) > 0 {
		s.items = &v.items[0]
	}
	_, s.editing, s.drafting = v.draft()
	return s
}

func newViewRenderer(v *View) *viewRenderer {
	r := &viewRenderer{v: v,
		msg:     fcanvas.NewText("", color.NRGBA{0xee, 0xee, 0xee, 0xff}),
		selHalo: &fcanvas.Rectangle{StrokeColor: color.Black, StrokeWidth: 4},
		selBox:  &fcanvas.Rectangle{StrokeWidth: 2},
		guideX:  fcanvas.NewLine(color.NRGBA{0xff, 0xff, 0xff, 0xb0}),
		guideY:  fcanvas.NewLine(color.NRGBA{0xff, 0xff, 0xff, 0xb0}),
	}
	r.raster = fcanvas.NewRaster(r.draw)
	r.raster.ScaleMode = fcanvas.ImageScalePixels
	r.msg.Alignment = fyne.TextAlignCenter
	for i := range r.handles {
		r.handles[i] = &fcanvas.Rectangle{FillColor: color.White, StrokeColor: color.Black, StrokeWidth: 1}
	}
	r.guideX.StrokeWidth, r.guideY.StrokeWidth = 1, 1
	r.rebuild()
	return r
}

// draw renders the image and the unselected boxes into a w×h device-pixel
// buffer: the image from the pyramid level that matches the zoom, so only
// screen-sized pixels are ever uploaded.
func (r *viewRenderer) draw(w, h int) image.Image {
	if w <= 0 || h <= 0 {
		return image.NewRGBA(image.Rect(0, 0, 1, 1))
	}
	if r.buf == nil || r.buf.Rect.Dx() != w || r.buf.Rect.Dy() != h {
		r.buf = image.NewRGBA(image.Rect(0, 0, w, h))
	}
	v := r.v
	v.mu.Lock()
	pyr, t, items, showOther := v.pyr, v.t, v.items, v.showOther
	v.mu.Unlock()
	size := v.Size()
	k := 1.0
	if size.Width > 0 {
		k = float64(w) / float64(size.Width)
	}
	dt := Transform{Scale: t.Scale * k, OffsetX: t.OffsetX * k, OffsetY: t.OffsetY * k}
	if pyr == nil {
		fillRGBA(r.buf, viewBackground)
		return r.buf
	}
	pyr.Render(r.buf, dt, viewBackground)
	sel := v.sel
	_, editing, drafting := v.draft()
	lw := int(math.Max(1, math.Round(2*k)))
	for _, it := range items {
		if it.Key == sel || (drafting && it.Key == editing) {
			continue // drawn as objects above the raster
		}
		sb := dt.BoxToScreen(it.Box)
		if it.Marked && (showOther || !it.ReadOnly) {
			markBox(r.buf, sb, lw)
		}
		if it.Suggestion {
			suggestionBox(r.buf, sb, lw, it.Color)
			continue
		}
		if it.ReadOnly {
			if showOther {
				dash := it.Dash
				if dash == 0 {
					dash = 6
				}
				strokeBox(r.buf, sb, lw, it.Color, dash)
			}
			continue
		}
		strokeBox(r.buf, sb, lw, it.Color, 0)
	}
	return r.buf
}

func (r *viewRenderer) rebuild() {
	v := r.v
	r.msg.Text = v.message
	shown := v.pyr != nil
	// Captions: editable boxes first, then the read-only layer; larger
	// boxes first when there are too many.
	type capItem struct {
		it   Item
		area float64
	}
	var want []capItem
	if shown && !v.noNames {
		for _, it := range v.items {
			if it.Caption == "" || (it.ReadOnly && !v.showOther) {
				continue
			}
			want = append(want, capItem{it, it.Box.Area()})
		}
		if len(want) > maxCaptions {
			sort.SliceStable(want, func(a, b int) bool {
				if want[a].it.Key == v.sel {
					return true
				}
				return want[a].area > want[b].area
			})
			want = want[:maxCaptions]
		}
	}
	for len(r.caps) < len(want) {
		r.caps = append(r.caps, caption{tag: fcanvas.NewRectangle(color.Black), text: fcanvas.NewText("", color.Black)})
	}
	r.caps = r.caps[:len(want)]
	for i, c := range want {
		cp := r.caps[i]
		cp.text.Text = c.it.Caption
		cp.text.TextSize = theme.CaptionTextSize()
		cp.text.TextStyle = fyne.TextStyle{Italic: c.it.ReadOnly || c.it.Suggestion, Bold: c.it.Suggestion}
		col := c.it.Color
		if c.it.ReadOnly {
			col.A = 0xc0
		}
		cp.tag.FillColor = col
		cp.text.Color = readableOn(c.it.Color)
	}
	r.objs = append(r.objs[:0], r.raster)
	for _, c := range r.caps {
		r.objs = append(r.objs, c.tag, c.text)
	}
	r.objs = append(r.objs, r.selHalo, r.selBox)
	for _, h := range r.handles {
		r.objs = append(r.objs, h)
	}
	r.objs = append(r.objs, r.guideX, r.guideY, r.msg)
	r.captionItems = r.captionItems[:0]
	for _, c := range want {
		r.captionItems = append(r.captionItems, c.it)
	}
}

// readableOn picks black or white text for a tag of colour c (relative
// luminance per ITU-R BT.709 weights; common practice).
func readableOn(c color.NRGBA) color.Color {
	if 0.2126*float64(c.R)+0.7152*float64(c.G)+0.0722*float64(c.B) > 140 {
		return color.Black
	}
	return color.White
}

func (r *viewRenderer) Layout(size fyne.Size) {
	v := r.v
	r.raster.Move(fyne.NewPos(0, 0))
	r.raster.Resize(size)
	r.msg.Move(fyne.NewPos(0, size.Height/2-r.msg.MinSize().Height/2))
	r.msg.Resize(fyne.NewSize(size.Width, r.msg.MinSize().Height))
	t := v.Transform()
	for i, c := range r.caps {
		it := r.captionItems[i]
		b := it.Box
		if db, key, ok := v.draft(); ok && key == it.Key {
			b = db
		}
		s := t.BoxToScreen(b)
		ts := c.text.MinSize()
		pad := float32(3)
		tagY := float32(s.Y0) - ts.Height
		if it.ReadOnly && it.Dash >= 0 {
			tagY = float32(s.Y1) // below the box, clear of the tag of a solid-lined box
		} else if tagY < 0 {
			tagY = float32(s.Y0) // no room above: put the tag inside the box
		}
		c.tag.Move(fyne.NewPos(float32(s.X0), tagY))
		c.tag.Resize(fyne.NewSize(ts.Width+2*pad, ts.Height))
		c.text.Move(fyne.NewPos(float32(s.X0)+pad, tagY))
		c.text.Resize(ts)
	}
	// The selection (or the box being drawn): a halo and the class colour,
	// with handles on a selected box.
	var sb project.Box
	col := color.NRGBA{0xff, 0xff, 0xff, 0xff}
	showSel, showHandles := false, false
	if db, key, ok := v.draft(); ok {
		sb, showSel, showHandles = db, true, key != 0
		if i := v.index(key); i >= 0 {
			col = v.items[i].Color
		}
	} else if i := v.index(v.sel); i >= 0 && v.pyr != nil {
		sb, showSel, showHandles, col = v.items[i].Box, true, true, v.items[i].Color
	}
	s := t.BoxToScreen(sb)
	place := func(o *fcanvas.Rectangle, grow float32) {
		o.Move(fyne.NewPos(float32(s.X0)-grow, float32(s.Y0)-grow))
		o.Resize(fyne.NewSize(float32(s.Width())+2*grow, float32(s.Height())+2*grow))
	}
	r.selBox.StrokeColor = col
	r.selBox.FillColor = color.NRGBA{col.R, col.G, col.B, 0x30}
	place(r.selHalo, 1)
	place(r.selBox, 0)
	r.selHalo.Hidden, r.selBox.Hidden = !showSel, !showSel
	for i, h := range r.handles {
		hx, hy := HandlePoint(s, Handles[i])
		h.Move(fyne.NewPos(float32(hx)-4, float32(hy)-4))
		h.Resize(fyne.NewSize(8, 8))
		h.Hidden = !showHandles
	}
	for _, c := range r.caps {
		c.tag.Hidden, c.text.Hidden = v.pyr == nil, v.pyr == nil
	}
	r.layoutGuides(size)
}

func (r *viewRenderer) layoutGuides(size fyne.Size) {
	v := r.v
	on := v.guides && v.ptrIn && v.pyr != nil
	r.guideX.Hidden, r.guideY.Hidden = !on, !on
	if !on {
		r.guideX.Refresh()
		r.guideY.Refresh()
		return
	}
	r.guideX.Position1 = fyne.NewPos(v.ptr.X, 0)
	r.guideX.Position2 = fyne.NewPos(v.ptr.X, size.Height)
	r.guideY.Position1 = fyne.NewPos(0, v.ptr.Y)
	r.guideY.Position2 = fyne.NewPos(size.Width, v.ptr.Y)
	r.guideX.Refresh()
	r.guideY.Refresh()
}

func (r *viewRenderer) MinSize() fyne.Size { return r.v.MinSize() }

func (r *viewRenderer) Refresh() {
	r.rebuild()
	r.Layout(r.v.Size())
	st := r.state()
	for _, o := range r.objs {
		if o == r.raster && st == r.drawn {
			continue // a raster refresh re-renders and re-uploads the image
		}
		o.Refresh()
	}
	r.drawn = st
}

func (r *viewRenderer) Objects() []fyne.CanvasObject { return r.objs }

func (r *viewRenderer) Destroy() {}
