package gui

import (
	"image"
	"image/color"
	"image/draw"
	"math"

	"boxwright/canvas"
	"boxwright/project"
	"boxwright/store/imagefile"
)

// cropOf cuts the box with a margin out of the pyramid, at most side
// pixels along its longer edge, with the box outlined. The result owns
// its pixels, so a cached crop does not hold the whole image.
func cropOf(p *canvas.Pyramid, b project.Box, side int, col color.NRGBA) *image.RGBA {
	w, h := p.Size()
	r := cropRegion(b, float64(w), float64(h))
	scale := float64(side) / math.Max(r.Width(), r.Height())
	lvl := p.Level(p.LevelFor(scale))
	f := float64(lvl.Rect.Dx()) / float64(w)
	ir := image.Rect(int(math.Floor(r.X0*f)), int(math.Floor(r.Y0*f)), int(math.Ceil(r.X1*f)), int(math.Ceil(r.Y1*f))).Intersect(lvl.Rect)
	if ir.Empty() {
		return image.NewRGBA(image.Rect(0, 0, 1, 1))
	}
	t := imagefile.Thumbnail(lvl.SubImage(ir), side)
	out := image.NewRGBA(image.Rect(0, 0, t.Bounds().Dx(), t.Bounds().Dy()))
	draw.Draw(out, out.Rect, t, t.Bounds().Min, draw.Src)
	// The box in crop pixels: a dark line outside a coloured one, so it
	// shows on light and dark images alike.
	sx, sy := float64(out.Rect.Dx())/r.Width(), float64(out.Rect.Dy())/r.Height()
	bx := image.Rect(int((b.X0-r.X0)*sx), int((b.Y0-r.Y0)*sy), int(math.Ceil((b.X1-r.X0)*sx)), int(math.Ceil((b.Y1-r.Y0)*sy)))
	outline(out, bx.Inset(-1), color.NRGBA{0, 0, 0, 0xff})
	col.A = 0xff
	outline(out, bx, col)
	return out
}

// cropRegion is a square around the box, a fifth of its longer side
// larger on each side (at least 24 px), moved and cut to lie on the image.
func cropRegion(b project.Box, w, h float64) project.Box {
	n := math.Max(1.4*math.Max(b.Width(), b.Height()), 24)
	cx, cy := b.Center()
	axis := func(c, max float64) (float64, float64) {
		m := math.Min(n, max)
		a := math.Min(math.Max(c-m/2, 0), max-m)
		return a, a + m
	}
	x0, x1 := axis(cx, w)
	y0, y1 := axis(cy, h)
	return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
}

func outline(dst *image.RGBA, r image.Rectangle, c color.NRGBA) {
	r = r.Canon()
	for x := r.Min.X; x < r.Max.X; x++ {
		setIn(dst, x, r.Min.Y, c)
		setIn(dst, x, r.Max.Y-1, c)
	}
	for y := r.Min.Y; y < r.Max.Y; y++ {
		setIn(dst, r.Min.X, y, c)
		setIn(dst, r.Max.X-1, y, c)
	}
}

func setIn(dst *image.RGBA, x, y int, c color.NRGBA) {
	if (image.Point{x, y}).In(dst.Rect) {
		dst.Set(x, y, c)
	}
}
