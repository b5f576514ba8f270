package imagefile

import (
	"image"

	"golang.org/x/image/draw"
)

// Thumbnail returns img scaled down so that its longer side is maxSide
// pixels, keeping its aspect ratio; an image that already fits, or a
// maxSide below 1, returns img itself. The result's bounds start at (0, 0).
func Thumbnail(img image.Image, maxSide int) image.Image {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	if maxSide < 1 || (w <= maxSide && h <= maxSide) {
		return img
	}
	tw, th := maxSide, maxSide
	if w >= h {
		th = max(1, int((int64(h)*int64(maxSide)+int64(w)/2)/int64(w)))
	} else {
		tw = max(1, int((int64(w)*int64(maxSide)+int64(h)/2)/int64(h)))
	}
	dst := image.NewRGBA(image.Rect(0, 0, tw, th))
	// Catmull-Rom widens its kernel when shrinking, so it averages rather
	// than skips pixels and small thumbnails do not alias.
	draw.CatmullRom.Scale(dst, dst.Rect, img, b, draw.Src, nil)
	return dst
}
