package imagefile

import (
	"image"
	"image/draw"
)

// Orient returns img as it is meant to be displayed under the EXIF
// orientation (1..8), as CIPA DC-008-2019 (Exif 2.32, tag Orientation)
// defines it: 1 as stored, 2 mirrored horizontally, 3 rotated 180°, 4
// mirrored vertically, 5 mirrored horizontally then rotated 270° clockwise
// (transposed), 6 rotated 90° clockwise, 7 mirrored horizontally then
// rotated 90° clockwise (transversed), 8 rotated 270° clockwise. Other
// values return img unchanged. The result's bounds start at (0, 0).
func Orient(img image.Image, orientation int) image.Image {
	if orientation < 2 || orientation > 8 || img.Bounds().Empty() {
		return img
	}
	src, pix, stride, bpp := pixels(img)
	b := src.Bounds()
	w, h := b.Dx(), b.Dy()
	ow, oh := w, h
	if orientation >= 5 {
		ow, oh = h, w
	}
	dst, dpix, dstride := newLike(src, ow, oh)
	// Output pixel (x, y) reads stored pixel (sx, sy) = start + x*dx + y*dy,
	// expressed as byte offsets into the stored pixels.
	col, row := int(bpp), stride
	lastCol, lastRow := (w-1)*col, (h-1)*row
	var start, dx, dy int
	switch orientation {
	case 2: // (w-1-x, y)
		start, dx, dy = lastCol, -col, row
	case 3: // (w-1-x, h-1-y)
		start, dx, dy = lastCol+lastRow, -col, -row
	case 4: // (x, h-1-y)
		start, dx, dy = lastRow, col, -row
	case 5: // (y, x)
		start, dx, dy = 0, row, col
	case 6: // (y, h-1-x)
		start, dx, dy = lastRow, -row, col
	case 7: // (w-1-y, h-1-x)
		start, dx, dy = lastCol+lastRow, -row, -col
	case 8: // (w-1-y, x)
		start, dx, dy = lastCol, row, -col
	}
	for y := 0; y < oh; y++ {
		s := start + y*dy
		d := y * dstride
		for x := 0; x < ow; x++ {
			copy(dpix[d:d+bpp], pix[s:s+bpp])
			s += dx
			d += bpp
		}
	}
	return dst
}

// pixels returns an image with a plain pixel buffer holding img: img itself
// when it is of a common type, else a copy as RGBA. The buffer starts at the
// image's top-left pixel.
func pixels(img image.Image) (image.Image, []byte, int, int) {
	switch m := img.(type) {
	case *image.RGBA:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 4
	case *image.NRGBA:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 4
	case *image.Gray:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 1
	case *image.Gray16:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 2
	case *image.RGBA64:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 8
	case *image.NRGBA64:
		return m, m.Pix[m.PixOffset(m.Rect.Min.X, m.Rect.Min.Y):], m.Stride, 8
	}
	b := img.Bounds()
	m := image.NewRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	draw.Draw(m, m.Rect, img, b.Min, draw.Src)
	return m, m.Pix, m.Stride, 4
}

// newLike makes an image of the same type as src, w×h, at the origin.
func newLike(src image.Image, w, h int) (image.Image, []byte, int) {
	r := image.Rect(0, 0, w, h)
	switch src.(type) {
	case *image.NRGBA:
		m := image.NewNRGBA(r)
		return m, m.Pix, m.Stride
	case *image.Gray:
		m := image.NewGray(r)
		return m, m.Pix, m.Stride
	case *image.Gray16:
		m := image.NewGray16(r)
		return m, m.Pix, m.Stride
	case *image.RGBA64:
		m := image.NewRGBA64(r)
		return m, m.Pix, m.Stride
	case *image.NRGBA64:
		m := image.NewNRGBA64(r)
		return m, m.Pix, m.Stride
	}
	m := image.NewRGBA(r)
	return m, m.Pix, m.Stride
}
