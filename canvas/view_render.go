package canvas

import (
	"image"
	"image/color"
	"math"
	"sync"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"

	"boxwright/project"
)

// MinSize keeps the view usable in a crowded window.
func (v *View) MinSize() fyne.Size { return fyne.NewSize(200, 150) }

// CreateRenderer is part of fyne.Widget.
func (v *View) CreateRenderer() fyne.WidgetRenderer {
	r := newViewRenderer(v)
	v.r = r
	return r
}

// maxCaptions bounds the tag objects: beyond it the boxes placed last
// (the smaller ones of each layer) get none, so 2,000 boxes stay quick.
const maxCaptions = 300

var viewBackground = color.RGBA{0x2a, 0x2c, 0x30, 0xff}

// caption is one tag: a rectangle in the box's colour with its text.
type caption struct {
	tag  *fcanvas.Rectangle
	text *fcanvas.Text
	key  int64 // the item it shows
	own  bool  // one of the person's own boxes
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

	tags  tagLayout
	drawn rasterState // what the raster shows, to skip needless redraws
	// layoutMu keeps two layouts apart: the toolkit lays out from its own
	// goroutine while a caller's SetItems refreshes (in tests, another
	// goroutine), and both rewrite the tag state.
	layoutMu sync.Mutex
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
	// Layers from the bottom: the others' boxes, covered suggestions,
	// suggestions, and the person's own boxes last, on top of them all.
	for layer := range 4 {
		for _, it := range items {
			if itemLayer(it) != layer || it.Key == sel || (drafting && it.Key == editing) {
				continue // the selection is drawn as objects above the raster
			}
			sb := dt.BoxToScreen(it.Box)
			if it.Marked && (showOther || !it.ReadOnly) {
				markBox(r.buf, sb, lw)
			}
			switch {
			case it.Suggestion && it.Covered:
				coveredBox(r.buf, sb, lw, it.Color)
			case it.Suggestion:
				suggestionBox(r.buf, sb, lw, it.Color)
			case it.ReadOnly:
				if showOther {
					dash := it.Dash
					if dash == 0 {
						dash = 6
					}
					strokeBox(r.buf, sb, lw, it.Color, dash)
				}
			default:
				strokeBox(r.buf, sb, lw, it.Color, 0)
			}
		}
	}
	return r.buf
}

// itemLayer is the drawing layer of an item, 0 the lowest: the others'
// boxes, covered suggestions, suggestions, the person's own boxes.
func itemLayer(it Item) int {
	switch {
	case it.ReadOnly:
		return 0
	case it.Suggestion && it.Covered:
		return 1
	case it.Suggestion:
		return 2
	}
	return 3
}

func (r *viewRenderer) rebuild() {
	r.msg.Text = r.v.message
	r.objs = append(r.objs[:0], r.raster)
	for _, c := range r.caps {
		if !c.own {
			r.objs = append(r.objs, c.tag, c.text)
		}
	}
	for _, c := range r.caps { // the person's own tags above the others'
		if c.own {
			r.objs = append(r.objs, c.tag, c.text)
		}
	}
	r.objs = append(r.objs, r.selHalo, r.selBox)
	for _, h := range r.handles {
		r.objs = append(r.objs, h)
	}
	r.objs = append(r.objs, r.guideX, r.guideY, r.msg)
}

// readableOn picks black or white text for a tag of colour c (relative
// luminance per ITU-R BT.709 weights; common practice).
func readableOn(c color.NRGBA) color.NRGBA {
	if 0.2126*float64(c.R)+0.7152*float64(c.G)+0.0722*float64(c.B) > 140 {
		return color.NRGBA{A: 0xff}
	}
	return color.NRGBA{0xff, 0xff, 0xff, 0xff}
}

// Layout is part of fyne.WidgetRenderer.
func (r *viewRenderer) Layout(size fyne.Size) { r.layout(size, true) }

// layout places everything over the raster; with refresh set it
// refreshes the tags it changed (Refresh refreshes all objects itself).
func (r *viewRenderer) layout(size fyne.Size, refresh bool) {
	r.layoutMu.Lock()
	defer r.layoutMu.Unlock()
	v := r.v
	r.raster.Move(fyne.NewPos(0, 0))
	r.raster.Resize(size)
	r.msg.Move(fyne.NewPos(0, size.Height/2-r.msg.MinSize().Height/2))
	r.msg.Resize(fyne.NewSize(size.Width, r.msg.MinSize().Height))
	t := v.Transform()
	r.layoutTags(size, t, refresh)
	r.rebuild()
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
	r.layout(r.v.Size(), false)
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
