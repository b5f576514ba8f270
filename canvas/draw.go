package canvas

import (
	"image"
	"image/color"
	"math"

	"boxwright/project"
)

func fillRGBA(dst *image.RGBA, c color.RGBA) {
	b := dst.Rect
	for y := b.Min.Y; y < b.Max.Y; y++ {
		row := dst.Pix[dst.PixOffset(b.Min.X, y):dst.PixOffset(b.Max.X, y)]
		for i := 0; i < len(row); i += 4 {
			row[i], row[i+1], row[i+2], row[i+3] = c.R, c.G, c.B, c.A
		}
	}
}

// blend paints c over the pixel at (x, y) of dst with c's alpha.
func blend(dst *image.RGBA, x, y int, c color.NRGBA) {
	if !(image.Point{x, y}.In(dst.Rect)) {
		return
	}
	i := dst.PixOffset(x, y)
	a := uint32(c.A)
	p := dst.Pix[i : i+4 : i+4]
	p[0] = uint8((uint32(c.R)*a + uint32(p[0])*(255-a)) / 255)
	p[1] = uint8((uint32(c.G)*a + uint32(p[1])*(255-a)) / 255)
	p[2] = uint8((uint32(c.B)*a + uint32(p[2])*(255-a)) / 255)
	p[3] = 0xff
}

// strokeBox draws the outline of the screen box b, lw pixels wide, inside
// a thin dark halo so it reads on light and dark images alike; dashed
// outlines (the read-only layer) have no halo and are drawn lighter.
func strokeBox(dst *image.RGBA, b project.Box, lw int, c color.NRGBA, dashed bool) {
	x0, y0 := int(math.Round(b.X0)), int(math.Round(b.Y0))
	x1, y1 := int(math.Round(b.X1)), int(math.Round(b.Y1))
	if x1 < dst.Rect.Min.X || y1 < dst.Rect.Min.Y || x0 >= dst.Rect.Max.X || y0 >= dst.Rect.Max.Y {
		return
	}
	if !dashed {
		ring(dst, x0-1, y0-1, x1+1, y1+1, lw+2, color.NRGBA{0, 0, 0, 0x90}, 0)
		ring(dst, x0, y0, x1, y1, lw, c, 0)
		return
	}
	c.A = 0xd0
	ring(dst, x0, y0, x1, y1, lw, c, 6)
}

// ring paints a rectangle outline of width lw inside [x0,x1)×[y0,y1),
// with dash > 0 painting dash pixels on, dash*2/3 off along each side.
func ring(dst *image.RGBA, x0, y0, x1, y1, lw int, c color.NRGBA, dash int) {
	if x1-x0 < 1 || y1-y0 < 1 {
		return
	}
	on := func(i int) bool { return dash == 0 || i%(dash+dash*2/3) < dash }
	// Clip the loops to the buffer so a box far off screen costs nothing.
	cx0, cx1 := max(x0, dst.Rect.Min.X), min(x1, dst.Rect.Max.X)
	cy0, cy1 := max(y0, dst.Rect.Min.Y), min(y1, dst.Rect.Max.Y)
	for k := 0; k < lw; k++ {
		for x := cx0; x < cx1; x++ {
			if on(x - x0) {
				blend(dst, x, y0+k, c)
				blend(dst, x, y1-1-k, c)
			}
		}
		for y := max(cy0, y0+lw); y < min(cy1, y1-lw); y++ {
			if on(y - y0) {
				blend(dst, x0+k, y, c)
				blend(dst, x1-1-k, y, c)
			}
		}
	}
}
