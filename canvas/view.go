package canvas

import (
	"image"
	"image/color"
	"sync"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

// Overlay is one box drawn over the image.
type Overlay struct {
	Box     project.Box // image coordinates
	Color   color.NRGBA
	Caption string // shown in a tag at the box's top-left corner
}

// View shows one image scaled to fit, with boxes drawn over it in their
// colours. Set its content from the Fyne goroutine.
type View struct {
	widget.BaseWidget

	mu       sync.Mutex
	img      image.Image // possibly a downscaled copy of the image
	w, h     float64     // size of the image as displayed, in image pixels
	overlays []Overlay
	message  string
}

// NewView makes an empty view.
func NewView() *View {
	v := &View{}
	v.ExtendBaseWidget(v)
	return v
}

// SetImage shows img as an image of width×height displayed pixels; img may
// be smaller (a downscaled copy), boxes are always in displayed pixels.
func (v *View) SetImage(img image.Image, width, height int) {
	v.mu.Lock()
	v.img, v.w, v.h, v.message = img, float64(width), float64(height), ""
	v.mu.Unlock()
	v.Refresh()
}

// SetOverlays replaces the boxes drawn over the image.
func (v *View) SetOverlays(o []Overlay) {
	v.mu.Lock()
	v.overlays = append([]Overlay(nil), o...)
	v.mu.Unlock()
	v.Refresh()
}

// Overlays returns the boxes drawn now.
func (v *View) Overlays() []Overlay {
	v.mu.Lock()
	defer v.mu.Unlock()
	return append([]Overlay(nil), v.overlays...)
}

// SetMessage clears the image and shows a line of text instead ("Loading…",
// or why the image cannot be shown).
func (v *View) SetMessage(msg string) {
	v.mu.Lock()
	v.img, v.message = nil, msg
	v.mu.Unlock()
	v.Refresh()
}

// Message returns the text shown instead of an image, if any.
func (v *View) Message() string {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.message
}

// Transform is the image⇄screen mapping for the view's current size.
func (v *View) Transform() Transform {
	v.mu.Lock()
	defer v.mu.Unlock()
	s := v.Size()
	return Fit(v.w, v.h, float64(s.Width), float64(s.Height))
}

// MinSize keeps the view usable in a crowded window.
func (v *View) MinSize() fyne.Size { return fyne.NewSize(200, 150) }

// CreateRenderer is part of fyne.Widget.
func (v *View) CreateRenderer() fyne.WidgetRenderer {
	r := &viewRenderer{v: v, bg: fcanvas.NewRectangle(color.NRGBA{0x20, 0x22, 0x26, 0xff}),
		raster: &fcanvas.Image{FillMode: fcanvas.ImageFillStretch, ScaleMode: fcanvas.ImageScaleSmooth},
		msg:    fcanvas.NewText("", color.NRGBA{0xee, 0xee, 0xee, 0xff})}
	r.msg.Alignment = fyne.TextAlignCenter
	r.rebuild()
	return r
}

type boxObjects struct {
	frame, tag *fcanvas.Rectangle
	text       *fcanvas.Text
}

type viewRenderer struct {
	v      *View
	bg     *fcanvas.Rectangle
	raster *fcanvas.Image
	msg    *fcanvas.Text
	boxes  []boxObjects
	shown  image.Image
	objs   []fyne.CanvasObject
}

func (r *viewRenderer) rebuild() {
	r.v.mu.Lock()
	img, overlays, message := r.v.img, r.v.overlays, r.v.message
	r.v.mu.Unlock()
	if img != r.shown {
		r.raster.Image, r.shown = img, img
		r.raster.Refresh()
	}
	r.raster.Hidden = img == nil
	r.msg.Text = message
	for len(r.boxes) < len(overlays) {
		r.boxes = append(r.boxes, boxObjects{frame: fcanvas.NewRectangle(color.Transparent), tag: fcanvas.NewRectangle(color.Black),
			text: fcanvas.NewText("", color.Black)})
	}
	r.boxes = r.boxes[:len(overlays)]
	for i, o := range overlays {
		b := r.boxes[i]
		b.frame.FillColor = color.Transparent
		b.frame.StrokeColor = o.Color
		b.frame.StrokeWidth = 2
		b.tag.FillColor = o.Color
		b.text.Text = o.Caption
		b.text.Color = readableOn(o.Color)
		b.text.TextSize = theme.CaptionTextSize()
		hidden := img == nil
		b.frame.Hidden, b.tag.Hidden, b.text.Hidden = hidden, hidden || o.Caption == "", hidden || o.Caption == ""
	}
	r.objs = append(r.objs[:0], r.bg, r.raster)
	for _, b := range r.boxes {
		r.objs = append(r.objs, b.frame, b.tag, b.text)
	}
	r.objs = append(r.objs, r.msg)
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
	r.bg.Resize(size)
	r.bg.Move(fyne.NewPos(0, 0))
	r.msg.Move(fyne.NewPos(0, size.Height/2-r.msg.MinSize().Height/2))
	r.msg.Resize(fyne.NewSize(size.Width, r.msg.MinSize().Height))
	r.v.mu.Lock()
	w, h, overlays := r.v.w, r.v.h, r.v.overlays
	r.v.mu.Unlock()
	t := Fit(w, h, float64(size.Width), float64(size.Height))
	r.raster.Move(fyne.NewPos(float32(t.OffsetX), float32(t.OffsetY)))
	r.raster.Resize(fyne.NewSize(float32(w*t.Scale), float32(h*t.Scale)))
	for i, b := range r.boxes {
		if i >= len(overlays) {
			break
		}
		s := t.BoxToScreen(overlays[i].Box)
		b.frame.Move(fyne.NewPos(float32(s.X0), float32(s.Y0)))
		b.frame.Resize(fyne.NewSize(float32(s.Width()), float32(s.Height())))
		ts := b.text.MinSize()
		pad := float32(3)
		tagY := float32(s.Y0) - ts.Height
		if tagY < 0 {
			tagY = float32(s.Y0) // no room above: put the tag inside the box
		}
		b.tag.Move(fyne.NewPos(float32(s.X0), tagY))
		b.tag.Resize(fyne.NewSize(ts.Width+2*pad, ts.Height))
		b.text.Move(fyne.NewPos(float32(s.X0)+pad, tagY))
		b.text.Resize(ts)
	}
}

func (r *viewRenderer) MinSize() fyne.Size { return r.v.MinSize() }

func (r *viewRenderer) Refresh() {
	r.rebuild()
	r.Layout(r.v.Size())
	for _, o := range r.objs {
		if o != r.raster { // a raster refresh re-uploads the texture; rebuild does it when needed
			o.Refresh()
		}
	}
}

func (r *viewRenderer) Objects() []fyne.CanvasObject { return r.objs }

func (r *viewRenderer) Destroy() {}
