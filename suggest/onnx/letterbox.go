package onnx

import (
	"image"
	"image/color"
	"math"

	"golang.org/x/image/draw"

	"boxwright/project"
)

// Letterbox is where an image lands in the model's input: scaled to
// Width×Height pixels (each side on its own, so that the content's edges
// fall on whole input pixels and the mapping back is exact) at offset
// (Left, Top), the rest padding.
type Letterbox struct {
	ImageW, ImageH int // the image
	InputW, InputH int // the model's input
	Width, Height  int // the scaled image inside the input
	Left, Top      int // its offset
}

// FitLetterbox places an image of w×h pixels in an input of inW×inH:
// "letterbox" keeps the aspect ratio (the scale min(inW/w, inH/h), each
// scaled side rounded to whole pixels) and aligns "centre" or "top-left";
// "stretch" fills the input.
func FitLetterbox(w, h, inW, inH int, resize, align string) Letterbox {
	lb := Letterbox{ImageW: w, ImageH: h, InputW: inW, InputH: inH, Width: inW, Height: inH}
	if resize == "stretch" {
		return lb
	}
	r := min(float64(inW)/float64(w), float64(inH)/float64(h))
	lb.Width = max(1, min(inW, int(math.Round(float64(w)*r))))
	lb.Height = max(1, min(inH, int(math.Round(float64(h)*r))))
	if align == "centre" {
		lb.Left, lb.Top = (inW-lb.Width)/2, (inH-lb.Height)/2
	}
	return lb
}

// Scale is input pixels per image pixel on each axis.
func (lb Letterbox) Scale() (sx, sy float64) {
	return float64(lb.Width) / float64(lb.ImageW), float64(lb.Height) / float64(lb.ImageH)
}

// ToInput maps a box from image pixels to input pixels.
func (lb Letterbox) ToInput(b project.Box) project.Box {
	return project.Box{X0: lb.xIn(b.X0), Y0: lb.yIn(b.Y0), X1: lb.xIn(b.X1), Y1: lb.yIn(b.Y1)}
}

// ToImage maps a box from input pixels back to image pixels (not clamped).
func (lb Letterbox) ToImage(b project.Box) project.Box {
	return project.Box{X0: lb.xImg(b.X0), Y0: lb.yImg(b.Y0), X1: lb.xImg(b.X1), Y1: lb.yImg(b.Y1)}
}

// The mappings multiply by whole pixel counts and divide by whole pixel
// counts, in that order, so that the image's edges map to the content's
// edges exactly and back.
func (lb Letterbox) xIn(x float64) float64 {
	return x*float64(lb.Width)/float64(lb.ImageW) + float64(lb.Left)
}
func (lb Letterbox) yIn(y float64) float64 {
	return y*float64(lb.Height)/float64(lb.ImageH) + float64(lb.Top)
}
func (lb Letterbox) xImg(x float64) float64 {
	return (x - float64(lb.Left)) * float64(lb.ImageW) / float64(lb.Width)
}
func (lb Letterbox) yImg(y float64) float64 {
	return (y - float64(lb.Top)) * float64(lb.ImageH) / float64(lb.Height)
}

// Tensor renders img into the model's input as NCHW float32 planes:
// scaled into the letterbox (bilinear, the detector's own resampling),
// padded with the description's grey, channels in its order, each value
// (v·Scale − Mean[c]) / Std[c].
func (lb Letterbox) Tensor(img image.Image, in Input) []float32 {
	if src, ok := img.(*image.RGBA); ok && !src.Rect.Empty() {
		return lb.tensorRGBA(src, in)
	}
	dst := image.NewRGBA(image.Rect(0, 0, lb.InputW, lb.InputH))
	if p := uint8(math.Round(*in.Pad)); p != 0 {
		draw.Draw(dst, dst.Bounds(), image.NewUniform(color.RGBA{p, p, p, 255}), image.Point{}, draw.Src)
	}
	b := img.Bounds()
	draw.ApproxBiLinear.Scale(dst, image.Rect(lb.Left, lb.Top, lb.Left+lb.Width, lb.Top+lb.Height), img, b, draw.Src, nil)
	w, h := lb.InputW, lb.InputH
	out := make([]float32, 3*w*h)
	order, mul, add := in.normalisation()
	for y := 0; y < h; y++ {
		row := dst.Pix[y*dst.Stride:]
		for x := 0; x < w; x++ {
			p := row[4*x:]
			i := y*w + x
			for c := range 3 {
				out[c*w*h+i] = float32(p[order[c]])*mul[c] + add[c]
			}
		}
	}
	return out
}

// tensorRGBA is Tensor for an RGBA source (what libjpeg-turbo decodes to)
// in one pass: the samples, weights and 16-bit arithmetic of
// draw.ApproxBiLinear's RGBA path (golang.org/x/image/draw), so that the
// values are the same to the bit, without the intermediate image and
// with each column's weights worked out once.
func (lb Letterbox) tensorRGBA(src *image.RGBA, in Input) []float32 {
	w, h := lb.InputW, lb.InputH
	out := make([]float32, 3*w*h)
	order, mul, add := in.normalisation()
	p := float32(uint8(math.Round(*in.Pad)))
	for c := range 3 {
		v := p*mul[c] + add[c]
		plane := out[c*w*h : (c+1)*w*h]
		for y := range h {
			if y < lb.Top || y >= lb.Top+lb.Height {
				for x := range w {
					plane[y*w+x] = v
				}
				continue
			}
			for x := range lb.Left {
				plane[y*w+x] = v
			}
			for x := lb.Left + lb.Width; x < w; x++ {
				plane[y*w+x] = v
			}
		}
	}
	sr := src.Rect
	sw, sh := int32(sr.Dx()), int32(sr.Dy())
	yscale := float64(sh) / float64(lb.Height)
	xscale := float64(sw) / float64(lb.Width)
	x0s, x1s := make([]int, lb.Width), make([]int, lb.Width)
	f0s, f1s := make([]float64, lb.Width), make([]float64, lb.Width)
	for dx := range int32(lb.Width) {
		sx0, sx1, xFrac0, xFrac1 := tap(dx, xscale, sw)
		x0s[dx], x1s[dx], f0s[dx], f1s[dx] = 4*int(sx0), 4*int(sx1), xFrac0, xFrac1
	}
	for dy := range int32(lb.Height) {
		sy0, sy1, yFrac0, yFrac1 := tap(dy, yscale, sh)
		row0 := src.Pix[int(sy0)*src.Stride:]
		row1 := src.Pix[int(sy1)*src.Stride:]
		o := (lb.Top+int(dy))*w + lb.Left
		p0, p1, p2 := out[o:o+lb.Width], out[w*h+o:w*h+o+lb.Width], out[2*w*h+o:2*w*h+o+lb.Width]
		for dx := range lb.Width {
			a, b := x0s[dx], x1s[dx]
			xf0, xf1 := f0s[dx], f1s[dx]
			var v [3]float32
			for k := range 3 {
				s00 := float64(uint32(row0[a+k]) * 0x101)
				s10 := float64(uint32(row0[b+k]) * 0x101)
				s01 := float64(uint32(row1[a+k]) * 0x101)
				s11 := float64(uint32(row1[b+k]) * 0x101)
				top := float64(xf1*s00) + float64(xf0*s10)
				bottom := float64(xf1*s01) + float64(xf0*s11)
				v[k] = float32(uint8(uint32(float64(yFrac1*top)+float64(yFrac0*bottom)) >> 8))
			}
			p0[dx] = v[order[0]]*mul[0] + add[0]
			p1[dx] = v[order[1]]*mul[1] + add[1]
			p2[dx] = v[order[2]]*mul[2] + add[2]
		}
	}
	return out
}

// tap is ApproxBiLinear's sampling of destination pixel d along an axis
// of n source pixels at scale (source pixels per destination pixel): the
// two source pixels and their weights, clamped at the edges.
func tap(d int32, scale float64, n int32) (i0, i1 int32, f0, f1 float64) {
	s := float64((float64(d)+0.5)*scale) - 0.5
	i0 = int32(s)
	f0 = s - float64(i0)
	f1 = 1 - f0
	i1 = i0 + 1
	if s < 0 {
		return 0, 0, 0, 1
	}
	if i1 > n-1 {
		return n - 1, n - 1, 1, 0
	}
	return i0, i1, f0, f1
}

// normalisation is the input's channel order (the source channel of each
// plane) and each plane's v·mul + add.
func (in Input) normalisation() (order [3]int, mul, add [3]float32) {
	order = [3]int{0, 1, 2}
	if in.Channels == "bgr" {
		order = [3]int{2, 1, 0}
	}
	for c := range 3 {
		mul[c] = float32(in.Scale / in.Std[c])
		add[c] = float32(-in.Mean[c] / in.Std[c])
	}
	return order, mul, add
}
