package canvas

import (
	"image"
	"image/color"
	"math"
	"sort"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"

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
	r.captionItems = r.captionItems[:0]
	for _, c := range want {
		r.captionItems = append(r.captionItems, c.it)
	}
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
		if i >= len(r.captionItems) {
			break // a rebuild is under way; it lays out again
		}
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
