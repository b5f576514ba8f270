package canvas

import (
	"image/color"
	"sort"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

// Item is one box the view shows.
type Item struct {
	Key   int64 // the caller's identity of the box; never 0
	Box   project.Box
	Color color.NRGBA
	// Caption is the box's tag in full, shown when the box is selected,
	// under the pointer, or large enough on screen for it.
	Caption string
	// Short is the tag of a box too small on screen for its Caption (for
	// example only the class name, or only a suggestion's score); empty:
	// the Caption is short already. A box too small even for this gets
	// no tag until the pointer is over it. Tags are placed where they
	// cover no other tag and none of the person's own boxes, else left
	// out.
	Short string
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
	// nobody takes them for labels. A press inside a suggestion picks it
	// before one of the person's own boxes of about its size beneath it.
	// A hidden suggestion layer is simply not passed to SetItems: then
	// nothing of it is drawn or hit.
	Suggestion bool
	// Covered marks a suggestion that one of the person's own boxes
	// already covers: it is drawn faded (a thin, light dotted outline,
	// no fill, at most its Short tag) and stays selectable, but a press
	// on the own box beneath it picks the own box.
	Covered bool
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
	// PanPastEdges lets pans and SetTransform take the image past its
	// edges as far as it still covers the middle of the view (see
	// Transform.KeepCentre), so that a box at an edge can be shown in the
	// middle. Off: the image covers the view, or is centred where it is
	// smaller (Transform.Keep).
	PanPastEdges bool

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
	hover   int64 // key of the box under the pointer (its tag shows in full)
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
	v.hover = 0
	changed := v.refit()
	v.Refresh()
	if changed {
		v.transformChanged()
	}
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
	v.hover = 0
	if v.ptrIn {
		v.hover = v.keyUnder(v.Transform().ToImage(float64(v.ptr.X), float64(v.ptr.Y)))
	}
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

// transformChanged reports a new zoom or pan: OnView, and OnPointer with
// the image point now under a pointer that did not move.
func (v *View) transformChanged() {
	v.viewChanged()
	if v.ptrIn {
		v.pointerAt(v.ptr)
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
// on the image, see PanPastEdges); the view stops following the window
// size.
func (v *View) SetTransform(t Transform) {
	t.Scale = ClampScale(t.Scale)
	v.setTransform(v.kept(t, nil, v.Size()))
}

// setTransform shows t as it is and reports it.
func (v *View) setTransform(t Transform) {
	v.mu.Lock()
	v.t, v.fit = t, false
	v.mu.Unlock()
	v.Refresh()
	v.transformChanged()
}

// kept applies the pan limits for a view of size s. With from set (the
// transform t was panned from), an axis already outside them may only
// move towards them.
func (v *View) kept(t Transform, from *Transform, s fyne.Size) Transform {
	return t.keep(v.w, v.h, float64(s.Width), float64(s.Height), v.PanPastEdges, from)
}

// FitToWindow shows the whole image, and keeps doing so when the window
// is resized.
func (v *View) FitToWindow() {
	v.mu.Lock()
	v.fit = true
	v.mu.Unlock()
	v.refit()
	v.Refresh()
	v.transformChanged()
}

// ZoomBy zooms by factor around the screen point (sx, sy): the image
// point under it stays exactly where it is. A point beside the image
// zooms around the nearest point of the image, so that the image can
// never be zoomed out of sight.
func (v *View) ZoomBy(factor float64, sx, sy float64) {
	v.scaleAround(v.Transform().Scale*factor, sx, sy)
}

// ActualPixels shows one image pixel per screen pixel, keeping the image
// point under (sx, sy) in place.
func (v *View) ActualPixels(sx, sy float64) {
	scale := 1.0
	if c := fyne.CurrentApp().Driver().CanvasForObject(v); c != nil && c.Scale() > 0 {
		scale = 1 / float64(c.Scale()) // one device pixel per image pixel
	}
	v.scaleAround(scale, sx, sy)
}

// scaleAround sets the scale keeping the image point under (sx, sy), or
// the image point nearest to it, fixed. The pan limits are not applied:
// they would move that point (the first zoom step out of a fitted view
// would otherwise re-centre the short side); the next pan moves towards
// them (see kept).
func (v *View) scaleAround(scale, sx, sy float64) {
	t := v.Transform()
	if t.Scale == 0 || v.w == 0 || v.h == 0 {
		return
	}
	x0, y0 := t.ToScreen(0, 0)
	x1, y1 := t.ToScreen(v.w, v.h)
	v.setTransform(t.ScaleAt(scale, clampF(sx, x0, x1), clampF(sy, y0, y1)))
}

// refit fits the image to the view when the view follows the window
// size; it says whether the transform changed.
func (v *View) refit() bool {
	s := v.Size()
	v.mu.Lock()
	defer v.mu.Unlock()
	if !v.fit {
		return false
	}
	old := v.t
	v.t = Fit(v.w, v.h, float64(s.Width), float64(s.Height))
	return v.t != old
}

// Resize keeps a fitted image fitted, keeps a zoomed one on the image,
// and reports a changed transform (OnView, OnPointer) so that what shows
// the zoom is current.
func (v *View) Resize(s fyne.Size) {
	v.BaseWidget.Resize(s)
	v.mu.Lock()
	old := v.t
	if !v.fit {
		v.t = v.kept(v.t, &old, s)
	}
	v.mu.Unlock()
	v.refit()
	v.Refresh()
	if v.Transform() != old {
		v.transformChanged()
	}
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

// suggestionHitBias is how much larger than one of the person's own
// boxes a suggestion under the pointer may be and still win the press:
// a suggestion drawn over an own box of about its size is what the
// person sees and means. A covered one is drawn faded under the own box:
// it must be that much smaller to win.
const suggestionHitBias = 1.5

// editableHits are the keys of the boxes a person may pick at the image
// point (x, y), the one a press takes first: the smallest, where a
// suggestion counts as suggestionHitBias times smaller, a Covered one as
// that much larger (the own box drawn over it wins); on a tie the
// person's own box, then the one later in the list.
func (v *View) editableHits(x, y float64) []int64 {
	type hit struct {
		i    int
		area float64
		own  bool
	}
	var hits []hit
	for i, it := range v.items {
		if it.ReadOnly || !it.Box.Contains(x, y) {
			continue
		}
		h := hit{i: i, area: it.Box.Area(), own: !it.Suggestion}
		switch {
		case it.Suggestion && it.Covered:
			h.area *= suggestionHitBias
		case it.Suggestion:
			h.area /= suggestionHitBias
		}
		hits = append(hits, h)
	}
	sort.SliceStable(hits, func(a, b int) bool {
		ha, hb := hits[a], hits[b]
		switch {
		case ha.area != hb.area:
			return ha.area < hb.area
		case ha.own != hb.own:
			return ha.own
		}
		return ha.i > hb.i
	})
	out := make([]int64, len(hits))
	for k, h := range hits {
		out[k] = v.items[h.i].Key
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
	t := v.Transform()
	v.setTransform(v.kept(t.Pan(dx, dy), &t, v.Size()))
}

var _ fyne.Draggable = (*View)(nil)
var _ desktop.Mouseable = (*View)(nil)
var _ desktop.Hoverable = (*View)(nil)
var _ desktop.Keyable = (*View)(nil)
var _ fyne.Scrollable = (*View)(nil)
var _ fyne.Tappable = (*View)(nil)
var _ desktop.Cursorable = (*View)(nil)
