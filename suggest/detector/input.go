package detector

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"

	"golang.org/x/image/draw"

	"boxwright/project"
)

// Stride is the output stride of the heat maps: one cell per 4×4 input
// pixels, as in "Objects as Points".
const Stride = 4

// pad is the multiple the input sides are rounded up to, so that each of
// the network's stride-2 stages halves them exactly.
const pad = 32

// Frame is the input canvas for images whose long side is scaled to long:
// the scaled size rounded up to a multiple of 32.
func Frame(w, h, long int) (fw, fh int, scale float64) {
	scale = float64(long) / float64(max(w, h))
	sw, sh := int(math.Round(float64(w)*scale)), int(math.Round(float64(h)*scale))
	return roundUp(sw, pad), roundUp(sh, pad), scale
}

func roundUp(a, m int) int { return (a + m - 1) / m * m }

// Augment says which random changes training may make to an image.
type Augment struct {
	// FlipH mirrors left–right half the time; FlipV top–bottom.
	FlipH, FlipV bool
	// QuarterTurns turns by a random multiple of 90° (square frames only
	// keep their size, so the frame becomes square).
	QuarterTurns bool
	// Scale jitters the size by a factor in [1/Scale, Scale] and crops or
	// pads to the frame (1 or less: none).
	Scale float64
	// Brightness and Contrast change the pixel values by up to ± these
	// shares.
	Brightness, Contrast float64
	// Crop trains on a random Crop×Crop window of the scaled image (a
	// multiple of 32; 0: the whole frame). The network is fully
	// convolutional, so it still sees whole frames at inference, while a
	// step costs a fraction of a frame and many more steps fit a budget.
	Crop int
}

// DefaultAugment suits top-down imagery: flips both ways, mild scale
// and light changes (our choice; the quarter turns are the user's).
var DefaultAugment = Augment{FlipH: true, FlipV: true, Scale: 1.25, Brightness: 0.15, Contrast: 0.2, Crop: 256}

// Sample is one image prepared for the network: planes of float32 in CHW
// order, normalised, and the boxes in input pixels.
type Sample struct {
	W, H    int
	Pixels  []float32 // 3·H·W
	Boxes   []project.Box
	Classes []int
}

// mean and spread normalise 0..1 pixel values to about zero mean and unit
// spread (common practice; fixed so that no statistics need storing).
const mean, spread = 0.45, 0.25

// PrepareImage scales img so that its long side is long and places it at the
// top left of its frame, moving the boxes with it, with no random change:
// the input of inference and validation. scale is input pixels per image
// pixel.
func PrepareImage(img image.Image, boxes []project.Box, classes []int, long int) (Sample, float64) {
	b := img.Bounds()
	fw, fh, scale := Frame(b.Dx(), b.Dy(), long)
	dst := image.NewRGBA(image.Rect(0, 0, fw, fh))
	sw, sh := int(math.Round(float64(b.Dx())*scale)), int(math.Round(float64(b.Dy())*scale))
	draw.ApproxBiLinear.Scale(dst, image.Rect(0, 0, sw, sh), img, b, draw.Src, nil)
	s := Sample{W: fw, H: fh, Pixels: planes(dst, 1, 0)}
	for i, bx := range boxes {
		s.Boxes = append(s.Boxes, project.Box{X0: bx.X0 * scale, Y0: bx.Y0 * scale, X1: bx.X1 * scale, Y1: bx.Y1 * scale})
		s.Classes = append(s.Classes, classes[i])
	}
	return s, scale
}

// AugmentImage is PrepareImage with the random changes of a: the image is
// scaled by the frame's scale times a jitter, placed at a random offset
// (cropping or padding), flipped, turned and relit. Boxes cut by the crop
// keep their visible part when at least 2 pixels of each side and a third
// of their area remain.
func AugmentImage(img image.Image, boxes []project.Box, classes []int, long int, a Augment, r *rand.Rand) Sample {
	b := img.Bounds()
	fw, fh, scale := Frame(b.Dx(), b.Dy(), long)
	if a.Crop > 0 {
		fw, fh = min(fw, roundUp(a.Crop, pad)), min(fh, roundUp(a.Crop, pad))
	}
	if a.QuarterTurns {
		fw, fh = max(fw, fh), max(fw, fh)
	}
	if a.Scale > 1 {
		scale *= math.Exp((2*r.Float64() - 1) * math.Log(a.Scale))
	}
	sw, sh := max(1, int(math.Round(float64(b.Dx())*scale))), max(1, int(math.Round(float64(b.Dy())*scale)))
	ox, oy := offset(r, fw, sw), offset(r, fh, sh)
	dst := image.NewRGBA(image.Rect(0, 0, fw, fh))
	draw.Draw(dst, dst.Bounds(), image.NewUniform(color.RGBA{115, 115, 115, 255}), image.Point{}, draw.Src)
	draw.ApproxBiLinear.Scale(dst, image.Rect(ox, oy, ox+sw, oy+sh), img, b, draw.Src, nil)
	contrast := 1 + (2*r.Float64()-1)*a.Contrast
	bright := (2*r.Float64() - 1) * a.Brightness
	s := Sample{W: fw, H: fh}
	frame := project.Box{X0: 0, Y0: 0, X1: float64(fw), Y1: float64(fh)}
	for i, bx := range boxes {
		m := project.Box{X0: bx.X0*scale + float64(ox), Y0: bx.Y0*scale + float64(oy), X1: bx.X1*scale + float64(ox), Y1: bx.Y1*scale + float64(oy)}
		in := m.Intersect(frame)
		if in.Empty() || in.Width() < 2 || in.Height() < 2 || in.Area() < m.Area()/3 {
			continue
		}
		s.Boxes = append(s.Boxes, in)
		s.Classes = append(s.Classes, classes[i])
	}
	flipH, flipV := a.FlipH && r.IntN(2) == 1, a.FlipV && r.IntN(2) == 1
	turns := 0
	if a.QuarterTurns {
		turns = r.IntN(4)
	}
	s.Pixels = planes(dst, contrast, bright)
	s.transform(flipH, flipV, turns)
	return s
}

// offset places a scaled side of n pixels in a frame side of f: a random
// crop when larger, a random position when smaller.
func offset(r *rand.Rand, f, n int) int {
	if n == f {
		return 0
	}
	if n > f {
		return -r.IntN(n - f + 1)
	}
	return r.IntN(f - n + 1)
}

// planes turns an image into normalised CHW float32 planes, with contrast
// and brightness applied to the 0..1 values first.
func planes(img *image.RGBA, contrast, bright float64) []float32 {
	w, h := img.Rect.Dx(), img.Rect.Dy()
	out := make([]float32, 3*w*h)
	c, off := float32(contrast/255/spread), float32((bright+(1-contrast)*mean-mean)/spread)
	for y := 0; y < h; y++ {
		row := img.Pix[y*img.Stride:]
		for x := 0; x < w; x++ {
			p := row[4*x:]
			i := y*w + x
			out[i] = float32(p[0])*c + off
			out[w*h+i] = float32(p[1])*c + off
			out[2*w*h+i] = float32(p[2])*c + off
		}
	}
	return out
}

// transform flips and then turns the sample by quarter turns clockwise
// (square frames only when turning).
func (s *Sample) transform(flipH, flipV bool, turns int) {
	w, h := s.W, s.H
	if flipH || flipV {
		for c := 0; c < 3; c++ {
			p := s.Pixels[c*w*h : (c+1)*w*h]
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					sx, sy := x, y
					if flipH {
						sx = w - 1 - x
					}
					if flipV {
						sy = h - 1 - y
					}
					if sy*w+sx > y*w+x { // swap each pair once
						p[y*w+x], p[sy*w+sx] = p[sy*w+sx], p[y*w+x]
					}
				}
			}
		}
		for i, b := range s.Boxes {
			if flipH {
				b.X0, b.X1 = float64(w)-b.X1, float64(w)-b.X0
			}
			if flipV {
				b.Y0, b.Y1 = float64(h)-b.Y1, float64(h)-b.Y0
			}
			s.Boxes[i] = b
		}
	}
	for t := 0; t < turns%4; t++ {
		n := w // square
		next := make([]float32, len(s.Pixels))
		for c := 0; c < 3; c++ {
			src, dst := s.Pixels[c*n*n:(c+1)*n*n], next[c*n*n:(c+1)*n*n]
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					// Clockwise: (x, y) goes to (n-1-y, x).
					dst[x*n+(n-1-y)] = src[y*n+x]
				}
			}
		}
		s.Pixels = next
		for i, b := range s.Boxes {
			s.Boxes[i] = project.Box{X0: float64(n) - b.Y1, Y0: b.X0, X1: float64(n) - b.Y0, Y1: b.X1}
		}
	}
}
