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
