package demo

import (
	"image"
	"math"
)

// Render draws frame i: water, quay, jetties, and every object of the
// frame's layout (including slivers too small to count as truth). The same
// scenario and index always give the same pixels. It returns nil when i is
// not a frame of s. It is safe to call from several goroutines at once.
func (s *Scenario) Render(i int) *image.RGBA {
	if s == nil || i < 0 || i >= len(s.scenes) || s.scenes[i] == nil {
		return nil
	}
	sc := s.scenes[i]
	w, h := int(sc.w), int(sc.h)
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	rng := newRand(sc.seed, streamRender, i)
	r := &renderer{c: canvas{pix: img.Pix, w: w, h: h, stride: img.Stride}, sc: sc, seed: rng.Uint64()}
	// Shadows fall mostly towards the lower right, as in a morning survey.
	sun := uniform(rng, 0.2, 1.4)
	if rng.Float64() < 0.25 {
		sun += math.Pi / 2
	}
	r.sunX, r.sunY = math.Cos(sun), math.Sin(sun)

	r.water(rng)
	r.sparkles(rng)
	for _, g := range sc.glints {
		r.glint(g)
	}
	for _, o := range sc.objects {
		if o.moving {
			r.wake(o)
		}
	}
	for _, j := range sc.jetties {
		r.jettyShadow(j)
	}
	for _, j := range sc.jetties {
		r.jetty(j)
	}
	for _, p := range sc.posts {
		r.postShadow(p)
	}
	for _, p := range sc.posts {
		r.post(p)
	}
	for _, o := range sc.objects {
		r.shadow(o)
	}
	for _, o := range sc.objects {
		r.body(o)
	}
	return img
}

// canvas is the RGBA pixel buffer being drawn.
type canvas struct {
	pix          []uint8
	w, h, stride int
}

// span clips the pixel rectangle covering [x0,x1)×[y0,y1) to the image.
func (c *canvas) span(x0, y0, x1, y1 float64) (ix0, iy0, ix1, iy1 int) {
	cl := func(v float64, hi int) int {
		if v < 0 || math.IsNaN(v) {
			return 0
		}
		if v > float64(hi) {
			return hi
		}
		return int(v)
	}
	return cl(math.Floor(x0), c.w), cl(math.Floor(y0), c.h), cl(math.Ceil(x1), c.w), cl(math.Ceil(y1), c.h)
}

func (c *canvas) at(o int) rgb {
	return rgb{float64(c.pix[o]), float64(c.pix[o+1]), float64(c.pix[o+2])}
}

func (c *canvas) put(o int, col rgb) {
	c.pix[o] = toByte(col.r)
	c.pix[o+1] = toByte(col.g)
	c.pix[o+2] = toByte(col.b)
	c.pix[o+3] = 255
}

func (c *canvas) blend(o int, col rgb, a float64) {
	if a <= 0 {
		return
	}
	if a >= 1 {
		c.put(o, col)
		return
	}
	c.put(o, mix(c.at(o), col, a))
}

func (c *canvas) darken(o int, a float64) {
	if a <= 0 {
		return
	}
	c.put(o, c.at(o).scale(1-a))
}

func toByte(v float64) uint8 {
	if v <= 0 {
		return 0
	}
	if v >= 255 {
		return 255
	}
	return uint8(v + 0.5)
}

func mix(a, b rgb, t float64) rgb {
	return rgb{a.r + (b.r-a.r)*t, a.g + (b.g-a.g)*t, a.b + (b.b-a.b)*t}
}

func (c rgb) scale(k float64) rgb { return rgb{c.r * k, c.g * k, c.b * k} }

func clamp01(v float64) float64 { return max(0, min(1, v)) }

// cov turns a signed distance in pixels into pixel coverage: a one-pixel
// ramp is all the anti-aliasing these shapes need.
func cov(f float64) float64 { return clamp01(0.5 - f) }

// rectDist is the signed distance (max-norm) to the rectangle
// [u0,u1]×[-vh,vh].
func rectDist(u, v, u0, u1, vh float64) float64 {
	return max(max(u0-u, u-u1), math.Abs(v)-vh)
}

func sq(v float64) float64 { return v * v }

// renderer holds what the drawing steps of one frame share.
type renderer struct {
	c          canvas
	sc         *scene
	seed       uint64
	sunX, sunY float64 // unit vector along which shadows fall
}
