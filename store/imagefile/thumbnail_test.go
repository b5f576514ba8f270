package imagefile

import (
	"image"
	"image/color"
	"testing"
)

func TestThumbnailSize(t *testing.T) {
	cases := []struct {
		w, h, max, tw, th int
	}{
		{1000, 500, 100, 100, 50},
		{500, 1000, 100, 50, 100},
		{1280, 960, 256, 256, 192},
		{333, 100, 100, 100, 30},
		{1, 1000, 10, 1, 10},
		{1000, 1, 10, 10, 1},
	}
	for _, c := range cases {
		got := Thumbnail(image.NewGray(image.Rect(0, 0, c.w, c.h)), c.max)
		if got.Bounds() != image.Rect(0, 0, c.tw, c.th) {
			t.Errorf("%d×%d into %d: %v, want %d×%d", c.w, c.h, c.max, got.Bounds(), c.tw, c.th)
		}
	}
}

func TestThumbnailNeverUpscales(t *testing.T) {
	m := pattern(50, 20)
	for _, max := range []int{50, 51, 1000, 0, -3} {
		if Thumbnail(m, max) != image.Image(m) {
			t.Errorf("maxSide %d: image was scaled", max)
		}
	}
}

// A scaling kernel whose weights sum to one keeps a flat colour flat
// (common practice).
func TestThumbnailKeepsFlatColour(t *testing.T) {
	c := color.RGBA{200, 100, 50, 255}
	m := image.NewRGBA(image.Rect(10, 10, 410, 310))
	for i := 0; i < len(m.Pix); i += 4 {
		copy(m.Pix[i:], []uint8{c.R, c.G, c.B, c.A})
	}
	got := Thumbnail(m, 40)
	if got.Bounds() != image.Rect(0, 0, 40, 30) {
		t.Fatalf("bounds %v", got.Bounds())
	}
	for y := 0; y < 30; y++ {
		for x := 0; x < 40; x++ {
			if g := got.At(x, y).(color.RGBA); g != c {
				t.Fatalf("pixel (%d,%d) = %v, want %v", x, y, g, c)
			}
		}
	}
}
