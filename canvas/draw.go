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

// paintSpan paints c over the pixels x in [x0, x1) of row y (clipped to dst),
// skipping the off parts of a dash pattern measured from phase.
func paintSpan(dst *image.RGBA, x0, x1, y int, c color.NRGBA, dash, phase int) {
	if y < dst.Rect.Min.Y || y >= dst.Rect.Max.Y {
		return
	}
	x0, x1 = max(x0, dst.Rect.Min.X), min(x1, dst.Rect.Max.X)
	if x0 >= x1 {
		return
	}
	row := dst.Pix[dst.PixOffset(x0, y):dst.PixOffset(x1, y)]
	a := uint32(c.A)
	for i, x := 0, x0; i < len(row); i, x = i+4, x+1 {
		if dash > 0 && (x-phase)%(dash+dash*2/3) >= dash {
			continue
		}
		p := row[i : i+4 : i+4]
		if a == 0xff {
			p[0], p[1], p[2], p[3] = c.R, c.G, c.B, 0xff
			continue
		}
		p[0] = uint8((uint32(c.R)*a + uint32(p[0])*(255-a)) / 255)
		p[1] = uint8((uint32(c.G)*a + uint32(p[1])*(255-a)) / 255)
		p[2] = uint8((uint32(c.B)*a + uint32(p[2])*(255-a)) / 255)
		p[3] = 0xff
	}
}

// strokeBox draws the outline of the screen box b, lw pixels wide, inside
// a thin dark halo so it reads on light and dark images alike. A dashed
// outline (dash > 0: the read-only layer) has no halo and is drawn
// lighter; dash < 0 is a thin solid line of that layer.
func strokeBox(dst *image.RGBA, b project.Box, lw int, c color.NRGBA, dash int) {
	x0, y0, x1, y1, ok := screenRect(dst, b, 0)
	if !ok {
		return
	}
	if dash == 0 {
		ring(dst, x0-1, y0-1, x1+1, y1+1, lw+2, color.NRGBA{0, 0, 0, 0x90}, 0)
		ring(dst, x0, y0, x1, y1, lw, c, 0)
		return
	}
	c.A = 0xd0
	if dash < 0 {
		ring(dst, x0, y0, x1, y1, max(1, lw/2), c, 0)
		return
	}
	ring(dst, x0, y0, x1, y1, lw, c, dash)
}

// markBox draws a white dashed ring just outside b, on a dark halo.
func markBox(dst *image.RGBA, b project.Box, lw int) {
	x0, y0, x1, y1, ok := screenRect(dst, b, 3+lw)
	if !ok {
		return
	}
	ring(dst, x0-1, y0-1, x1+1, y1+1, lw+2, color.NRGBA{0, 0, 0, 0xa0}, 0)
	ring(dst, x0, y0, x1, y1, lw, color.NRGBA{0xff, 0xff, 0xff, 0xff}, 4)
}

// screenRect rounds a screen box grown by grow pixels; ok is false when
// it misses dst entirely.
func screenRect(dst *image.RGBA, b project.Box, grow int) (x0, y0, x1, y1 int, ok bool) {
	x0, y0 = int(math.Round(b.X0))-grow, int(math.Round(b.Y0))-grow
	x1, y1 = int(math.Round(b.X1))+grow, int(math.Round(b.Y1))+grow
	ok = !(x1 < dst.Rect.Min.X || y1 < dst.Rect.Min.Y || x0 >= dst.Rect.Max.X || y0 >= dst.Rect.Max.Y)
	return
}

// ring paints a rectangle outline of width lw inside [x0,x1)×[y0,y1),
// with dash > 0 painting dash pixels on, dash*2/3 off along each side.
func ring(dst *image.RGBA, x0, y0, x1, y1, lw int, c color.NRGBA, dash int) {
	if x1-x0 < 1 || y1-y0 < 1 {
		return
	}
	lw = min(lw, (x1-x0+1)/2, (y1-y0+1)/2)
	for k := 0; k < lw; k++ {
		paintSpan(dst, x0, x1, y0+k, c, dash, x0)
		if y1-1-k != y0+k {
			paintSpan(dst, x0, x1, y1-1-k, c, dash, x0)
		}
	}
	// The sides, clipped to the buffer's rows so a tall box off screen
	// costs nothing.
	for y := max(y0+lw, dst.Rect.Min.Y); y < min(y1-lw, dst.Rect.Max.Y); y++ {
		if dash > 0 && (y-y0)%(dash+dash*2/3) >= dash {
			continue
		}
		paintSpan(dst, x0, x0+lw, y, c, 0, 0)
		paintSpan(dst, max(x1-lw, x0+lw), x1, y, c, 0, 0)
	}
}

// suggestionBox draws a model's proposal: a dotted outline on a dark
// halo over a faint tint of its class colour, unlike any label's line.
func suggestionBox(dst *image.RGBA, b project.Box, lw int, c color.NRGBA) {
	x0, y0, x1, y1, ok := screenRect(dst, b, 0)
	if !ok {
		return
	}
	tint := color.NRGBA{c.R, c.G, c.B, 0x28}
	for y := max(y0, dst.Rect.Min.Y); y < min(y1, dst.Rect.Max.Y); y++ {
		paintSpan(dst, x0, x1, y, tint, 0, 0)
	}
	ring(dst, x0-1, y0-1, x1+1, y1+1, lw+2, color.NRGBA{0, 0, 0, 0x70}, 0)
	ring(dst, x0, y0, x1, y1, lw, c, 2)
}

// coveredBox draws a suggestion that one of the person's own boxes
// already covers: a thin, faint dotted outline without fill or halo, so
// that it does not compete with the own box.
func coveredBox(dst *image.RGBA, b project.Box, lw int, c color.NRGBA) {
	x0, y0, x1, y1, ok := screenRect(dst, b, 0)
	if !ok {
		return
	}
	c.A = 0x70
	ring(dst, x0, y0, x1, y1, max(1, lw/2), c, 2)
}
