// Package canvas is the image view of Boxwright: a Fyne widget that shows
// one image with its boxes. Its geometry (the image⇄screen transform) is
// plain Go, tested without a window.
package canvas

import (
	"math"

	"boxwright/project"
)

// Transform maps image coordinates (continuous pixels of the displayed
// image) to screen coordinates of the widget: screen = image*Scale + Offset.
type Transform struct {
	Scale            float64
	OffsetX, OffsetY float64
}

// Fit is the transform that shows a whole image of imgW×imgH centred in a
// view of viewW×viewH, as large as fits. A degenerate size gives Scale 0.
func Fit(imgW, imgH, viewW, viewH float64) Transform {
	if imgW <= 0 || imgH <= 0 || viewW <= 0 || viewH <= 0 {
		return Transform{}
	}
	s := math.Min(viewW/imgW, viewH/imgH)
	return Transform{Scale: s, OffsetX: (viewW - imgW*s) / 2, OffsetY: (viewH - imgH*s) / 2}
}

// ToScreen maps an image point to the screen.
func (t Transform) ToScreen(x, y float64) (float64, float64) {
	return x*t.Scale + t.OffsetX, y*t.Scale + t.OffsetY
}

// ToImage maps a screen point to the image; it is the inverse of ToScreen.
// With Scale 0 it returns (0,0).
func (t Transform) ToImage(sx, sy float64) (float64, float64) {
	if t.Scale == 0 {
		return 0, 0
	}
	return (sx - t.OffsetX) / t.Scale, (sy - t.OffsetY) / t.Scale
}

// BoxToScreen maps a box to the screen.
func (t Transform) BoxToScreen(b project.Box) project.Box {
	x0, y0 := t.ToScreen(b.X0, b.Y0)
	x1, y1 := t.ToScreen(b.X1, b.Y1)
	return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
}

// Zoom limits of the view: 5 % to 3200 %.
const (
	MinScale = 0.05
	MaxScale = 32.0
)

// ClampScale limits s to [MinScale, MaxScale].
func ClampScale(s float64) float64 { return math.Min(MaxScale, math.Max(MinScale, s)) }

// ZoomAt multiplies the scale by factor (clamped to the zoom limits) and
// keeps the image point under the screen point (sx, sy) where it is, so a
// wheel turn zooms around the pointer.
func (t Transform) ZoomAt(factor, sx, sy float64) Transform {
	return t.ScaleAt(t.Scale*factor, sx, sy)
}

// ScaleAt sets the scale (clamped) and keeps the image point under the
// screen point (sx, sy) fixed.
func (t Transform) ScaleAt(scale, sx, sy float64) Transform {
	if t.Scale == 0 {
		return t
	}
	x, y := t.ToImage(sx, sy)
	s := ClampScale(scale)
	return Transform{Scale: s, OffsetX: sx - x*s, OffsetY: sy - y*s}
}

// Pan moves the image by (dx, dy) screen units.
func (t Transform) Pan(dx, dy float64) Transform {
	t.OffsetX += dx
	t.OffsetY += dy
	return t
}

// Keep limits panning so the image cannot be lost: along an axis where it
// is smaller than the view it is centred, otherwise it covers the view
// (no empty margin on one side while image is hidden on the other).
func (t Transform) Keep(imgW, imgH, viewW, viewH float64) Transform {
	return t.keep(imgW, imgH, viewW, viewH, false, nil)
}

// KeepCentre limits panning less than Keep: the image only has to cover
// the middle of the view, so that any image point, one on an edge too,
// can be brought to the middle.
func (t Transform) KeepCentre(imgW, imgH, viewW, viewH float64) Transform {
	return t.keep(imgW, imgH, viewW, viewH, true, nil)
}

// keep applies Keep (centre false) or KeepCentre. With from set (a
// transform of the same scale that t was panned from), an axis on which
// from was already outside the limits may move towards them but not
// further away: after a zoom that kept the point under the pointer
// exactly, the next pan does not make the image jump.
func (t Transform) keep(imgW, imgH, viewW, viewH float64, centre bool, from *Transform) Transform {
	lox, hix := keepRange(imgW*t.Scale, viewW, centre)
	loy, hiy := keepRange(imgH*t.Scale, viewH, centre)
	if from != nil {
		lox, hix = math.Min(lox, from.OffsetX), math.Max(hix, from.OffsetX)
		loy, hiy = math.Min(loy, from.OffsetY), math.Max(hiy, from.OffsetY)
	}
	t.OffsetX = clampF(t.OffsetX, lox, hix)
	t.OffsetY = clampF(t.OffsetY, loy, hiy)
	return t
}

// keepRange is the interval of offsets allowed along one axis for an
// image size pixels long (on screen) in a view view pixels long.
func keepRange(size, view float64, centre bool) (lo, hi float64) {
	switch {
	case centre:
		return view/2 - size, view / 2
	case size <= view:
		return (view - size) / 2, (view - size) / 2
	}
	return view - size, 0
}

// Visible is the part of an imgW×imgH image that a viewW×viewH view
// shows, in image coordinates; it is empty when none is.
func (t Transform) Visible(imgW, imgH, viewW, viewH float64) project.Box {
	if t.Scale == 0 {
		return project.Box{}
	}
	x0, y0 := t.ToImage(0, 0)
	x1, y1 := t.ToImage(viewW, viewH)
	return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}.Intersect(project.Box{X1: imgW, Y1: imgH})
}
