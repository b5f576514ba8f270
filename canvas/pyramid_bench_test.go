package canvas

import (
	"context"
	"image"
	"image/color"
	"sync"
	"testing"

	xdraw "golang.org/x/image/draw"
	"golang.org/x/image/math/f64"
)

// benchYCbCr is a 4000×3000 4:2:0 image, the layout image/jpeg decodes a
// 12-megapixel photo into, filled with smooth gradients.
var benchYCbCr = sync.OnceValue(func() *image.YCbCr {
	m := image.NewYCbCr(image.Rect(0, 0, 4000, 3000), image.YCbCrSubsampleRatio420)
	for y := range 3000 {
		for x := range 4000 {
			m.Y[y*m.YStride+x] = uint8(x/16 + y/12)
		}
	}
	for y := range 1500 {
		for x := range 2000 {
			m.Cb[y*m.CStride+x] = uint8(x / 8)
			m.Cr[y*m.CStride+x] = uint8(y / 6)
		}
	}
	return m
})

var benchPyramid = sync.OnceValue(func() *Pyramid {
	p, err := NewPyramid(context.Background(), benchYCbCr())
	if err != nil {
		panic(err)
	}
	return p
})

func BenchmarkPyramidNew(b *testing.B) {
	img := benchYCbCr()
	b.ResetTimer()
	for b.Loop() {
		if _, err := NewPyramid(context.Background(), img); err != nil {
			b.Fatal(err)
		}
	}
}

func benchRender(b *testing.B, t Transform) {
	p := benchPyramid()
	dst := image.NewRGBA(image.Rect(0, 0, 1920, 1080))
	bg := color.RGBA{40, 40, 40, 255}
	b.ResetTimer()
	for b.Loop() {
		p.Render(dst, t, bg)
	}
}

func BenchmarkPyramidRenderFit(b *testing.B) {
	benchRender(b, Fit(4000, 3000, 1920, 1080))
}

func BenchmarkPyramidRender1to1(b *testing.B) {
	benchRender(b, Transform{Scale: 1, OffsetX: -1040.5, OffsetY: -960.5})
}

func BenchmarkPyramidRender16x(b *testing.B) {
	benchRender(b, Transform{Scale: 16, OffsetX: -2000*16 + 960.25, OffsetY: -1500*16 + 540.25})
}

// Same 1:1 view with golang.org/x/image/draw.NearestNeighbor on level 0,
// for a ratio against BenchmarkPyramidRender1to1 in the same run.
func BenchmarkPyramidXDrawNN1to1(b *testing.B) {
	p := benchPyramid()
	dst := image.NewRGBA(image.Rect(0, 0, 1920, 1080))
	src := p.Level(0)
	b.ResetTimer()
	for b.Loop() {
		xdraw.NearestNeighbor.Transform(dst, f64.Aff3{1, 0, -1040.5, 0, 1, -960.5}, src, src.Bounds(), xdraw.Src, nil)
	}
}
