package exemplar

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"runtime"
	"strings"
	"sync"
)

// Plane is one channel of float32 samples, row-major.
type Plane struct {
	W, H int
	Pix  []float32
}

// NewPlane returns a zeroed plane of w×h samples.
func NewPlane(w, h int) Plane {
	if w < 0 || h < 0 {
		w, h = 0, 0
	}
	return Plane{W: w, H: h, Pix: make([]float32, w*h)}
}

// At returns the sample at column x, row y.
func (p Plane) At(x, y int) float32 { return p.Pix[y*p.W+x] }

// Empty reports whether the plane holds no samples.
func (p Plane) Empty() bool { return p.W <= 0 || p.H <= 0 }

// valid reports whether the plane's size matches its samples.
func (p Plane) valid() bool { return p.W >= 0 && p.H >= 0 && len(p.Pix) == p.W*p.H }

// Feature says what is correlated.
type Feature int

// The features a match can correlate.
const (
	// FeatureGray correlates luma.
	FeatureGray Feature = iota
	// FeatureGradient correlates the Sobel gradient magnitude of luma, which
	// ignores flat colour and follows edges.
	FeatureGradient
	// FeatureColor correlates R, G and B separately and averages the scores.
	FeatureColor
)

// String returns the name ParseFeature accepts.
func (f Feature) String() string {
	switch f {
	case FeatureGray:
		return "gray"
	case FeatureGradient:
		return "gradient"
	case FeatureColor:
		return "color"
	}
	return fmt.Sprintf("Feature(%d)", int(f))
}

// ScoreName is the name of the score a search with f computes: "NCC" for
// gray (zero-mean normalised cross-correlation of luma), "gradient NCC"
// (the same of the Sobel gradient magnitude), "colour NCC" (the mean of the
// NCC of the R, G and B planes; see NCCPlanes).
func (f Feature) ScoreName() string {
	switch f {
	case FeatureGradient:
		return "gradient NCC"
	case FeatureColor:
		return "colour NCC"
	}
	return "NCC"
}

// ParseFeature reads a feature name: "gray", "gradient" or "color".
func ParseFeature(s string) (Feature, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "gray", "grey":
		return FeatureGray, nil
	case "gradient":
		return FeatureGradient, nil
	case "color", "colour":
		return FeatureColor, nil
	}
	return 0, fmt.Errorf("exemplar: unknown feature %q (want gray, gradient or color)", s)
}

// BT.601 luma weights (ITU-R Recommendation BT.601, section 2.5.1: E'Y =
// 0.299 E'R + 0.587 E'G + 0.114 E'B).
const (
	lumaR = 0.299
	lumaG = 0.587
	lumaB = 0.114
)

// Planes turns an image into the planes a feature correlates: one gray plane
// (ITU-R BT.601 luma 0.299 R + 0.587 G + 0.114 B, values 0..255), one
// gradient-magnitude plane (Sobel on luma, sqrt(gx²+gy²), borders
// replicated), or three colour planes (R, G, B). Transparent pixels count as
// composited on black, as image.Image's premultiplied colours give them.
func Planes(img image.Image, f Feature) []Plane {
	if m, ok := img.(*image.Gray); ok && f != FeatureColor {
		// One plane, not three equal ones: the same luma, a third of the
		// work on a 12 MP image.
		// Luma of the 256 gray levels, as luma computes it.
		var lut [256]float32
		for c := range lut {
			v := float64(float32(c))
			lut[c] = float32(lumaR*v + lumaG*v + lumaB*v)
		}
		bd := m.Bounds()
		p := NewPlane(bd.Dx(), bd.Dy())
		parallelRows(p.H, func(y0, y1 int) {
			for y := y0; y < y1; y++ {
				row := m.Pix[y*m.Stride : y*m.Stride+p.W]
				dst := p.Pix[y*p.W : (y+1)*p.W]
				dst = dst[:len(row)]
				for x, c := range row {
					dst[x] = lut[c]
				}
			}
		})
		if f == FeatureGradient {
			return []Plane{Sobel(p)}
		}
		return []Plane{p}
	}
	r, g, b := rgbPlanes(img)
	switch f {
	case FeatureColor:
		return []Plane{r, g, b}
	case FeatureGradient:
		return []Plane{Sobel(luma(r, g, b))}
	default:
		return []Plane{luma(r, g, b)}
	}
}

// rgbPlanes splits an image into R, G, B planes scaled 0..255.
func rgbPlanes(img image.Image) (Plane, Plane, Plane) {
	bd := img.Bounds()
	w, h := bd.Dx(), bd.Dy()
	r, g, b := NewPlane(w, h), NewPlane(w, h), NewPlane(w, h)
	switch m := img.(type) {
	case *image.RGBA:
		for y := 0; y < h; y++ {
			row := m.Pix[(y)*m.Stride:]
			for x := 0; x < w; x++ {
				i := y*w + x
				r.Pix[i], g.Pix[i], b.Pix[i] = float32(row[4*x]), float32(row[4*x+1]), float32(row[4*x+2])
			}
		}
	case *image.Gray:
		for y := 0; y < h; y++ {
			row := m.Pix[y*m.Stride:]
			for x := 0; x < w; x++ {
				v := float32(row[x])
				i := y*w + x
				r.Pix[i], g.Pix[i], b.Pix[i] = v, v, v
			}
		}
	default:
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				cr, cg, cb, _ := img.At(bd.Min.X+x, bd.Min.Y+y).RGBA()
				i := y*w + x
				r.Pix[i], g.Pix[i], b.Pix[i] = float32(cr)/257, float32(cg)/257, float32(cb)/257
			}
		}
	}
	return r, g, b
}

// luma combines R, G, B planes with the BT.601 weights.
func luma(r, g, b Plane) Plane {
	out := NewPlane(r.W, r.H)
	for i := range out.Pix {
		out.Pix[i] = float32(lumaR*float64(r.Pix[i]) + lumaG*float64(g.Pix[i]) + lumaB*float64(b.Pix[i]))
	}
	return out
}

// Luma returns the BT.601 luma of one colour, 0..255.
func Luma(c color.Color) float32 {
	cr, cg, cb, _ := c.RGBA()
	return float32(lumaR*float64(cr)/257 + lumaG*float64(cg)/257 + lumaB*float64(cb)/257)
}

// Sobel returns the gradient magnitude sqrt(gx²+gy²) of p with the 3×3
// Sobel kernels, replicating the border samples.
func Sobel(p Plane) Plane {
	out := NewPlane(p.W, p.H)
	if p.Empty() {
		return out
	}
	clamp := func(v, n int) int {
		if v < 0 {
			return 0
		}
		if v >= n {
			return n - 1
		}
		return v
	}
	for y := 0; y < p.H; y++ {
		up := p.Pix[clamp(y-1, p.H)*p.W:]
		mid := p.Pix[y*p.W:]
		dn := p.Pix[clamp(y+1, p.H)*p.W:]
		for x := 0; x < p.W; x++ {
			l, r := clamp(x-1, p.W), clamp(x+1, p.W)
			gx := float64(up[r]-up[l]) + 2*float64(mid[r]-mid[l]) + float64(dn[r]-dn[l])
			gy := float64(dn[l]-up[l]) + 2*float64(dn[x]-up[x]) + float64(dn[r]-up[r])
			out.Pix[y*p.W+x] = float32(math.Sqrt(gx*gx + gy*gy))
		}
	}
	return out
}

// Crop copies the rectangle r (clamped to the plane) out of p.
func Crop(p Plane, r image.Rectangle) Plane {
	r = r.Intersect(image.Rect(0, 0, p.W, p.H))
	out := NewPlane(r.Dx(), r.Dy())
	for y := 0; y < out.H; y++ {
		copy(out.Pix[y*out.W:(y+1)*out.W], p.Pix[(r.Min.Y+y)*p.W+r.Min.X:])
	}
	return out
}

// Resize scales p to w×h samples: an area average along an axis that
// shrinks (every source sample counts, so no aliasing), bilinear
// interpolation with pixel centres aligned along an axis that grows.
func Resize(p Plane, w, h int) Plane {
	if w <= 0 || h <= 0 || p.Empty() {
		return NewPlane(max(w, 0), max(h, 0))
	}
	// Separable: rows first into a w×p.H buffer, then columns.
	xw := axisWeights(p.W, w)
	yw := axisWeights(p.H, h)
	tmp := make([]float64, w*p.H)
	for y := 0; y < p.H; y++ {
		src := p.Pix[y*p.W : (y+1)*p.W]
		dst := tmp[y*w : (y+1)*w]
		for x, ws := range xw {
			var s float64
			for _, t := range ws {
				s += t.w * float64(src[t.i])
			}
			dst[x] = s
		}
	}
	out := NewPlane(w, h)
	acc := make([]float64, w)
	for y, ws := range yw {
		clear(acc)
		for _, t := range ws {
			row := tmp[t.i*w : (t.i+1)*w]
			for x := range acc {
				acc[x] += t.w * row[x]
			}
		}
		dst := out.Pix[y*w : (y+1)*w]
		for x, v := range acc {
			dst[x] = float32(v)
		}
	}
	return out
}

// resizeTap is one source index and its weight.
type resizeTap struct {
	i int
	w float64
}

// axisWeights gives, for each of m output positions, the source taps of an
// axis of n samples.
func axisWeights(n, m int) [][]resizeTap {
	out := make([][]resizeTap, m)
	scale := float64(n) / float64(m)
	switch {
	case m == n:
		for i := range out {
			out[i] = []resizeTap{{i, 1}}
		}
	case m < n: // area: output i covers [i·scale, (i+1)·scale)
		for i := range out {
			a, b := float64(i)*scale, float64(i+1)*scale
			for j := int(math.Floor(a)); j < n && float64(j) < b; j++ {
				lo, hi := math.Max(a, float64(j)), math.Min(b, float64(j+1))
				if hi > lo {
					out[i] = append(out[i], resizeTap{j, (hi - lo) / scale})
				}
			}
		}
	default: // bilinear with centres aligned
		for i := range out {
			s := (float64(i)+0.5)*scale - 0.5
			if s < 0 {
				s = 0
			}
			j := int(math.Floor(s))
			if j >= n-1 {
				out[i] = []resizeTap{{n - 1, 1}}
				continue
			}
			f := s - float64(j)
			out[i] = []resizeTap{{j, 1 - f}, {j + 1, f}}
		}
	}
	return out
}

// Rotate90 rotates a plane by k quarter turns clockwise; negative k turns
// anticlockwise.
func Rotate90(p Plane, k int) Plane {
	k = ((k % 4) + 4) % 4
	var out Plane
	switch k {
	case 0:
		out = NewPlane(p.W, p.H)
		copy(out.Pix, p.Pix)
	case 1:
		out = NewPlane(p.H, p.W)
		for y := 0; y < out.H; y++ {
			for x := 0; x < out.W; x++ {
				out.Pix[y*out.W+x] = p.Pix[(p.H-1-x)*p.W+y]
			}
		}
	case 2:
		out = NewPlane(p.W, p.H)
		n := len(p.Pix)
		for i, v := range p.Pix {
			out.Pix[n-1-i] = v
		}
	case 3:
		out = NewPlane(p.H, p.W)
		for y := 0; y < out.H; y++ {
			for x := 0; x < out.W; x++ {
				out.Pix[y*out.W+x] = p.Pix[x*p.W+(p.W-1-y)]
			}
		}
	}
	return out
}

// parallelRows splits rows [0,h) into one band per CPU and runs f on each
// band in its own goroutine.
func parallelRows(h int, f func(y0, y1 int)) {
	w := max(1, min(h/64, runtime.GOMAXPROCS(0)))
	var wg sync.WaitGroup
	for i := range w {
		wg.Go(func() { f(i*h/w, (i+1)*h/w) })
	}
	wg.Wait()
}
