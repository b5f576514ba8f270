package demo

import (
	"image"
	"math"
	"math/rand/v2"
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

// water fills the image with fractal noise in blue-green tones crossed by
// two sets of ripples. The noise is evaluated on a 4-pixel grid and
// interpolated, which keeps a full frame cheap.
func (r *renderer) water(rng *rand.Rand) {
	deep := rgb{uniform(rng, 14, 26), uniform(rng, 52, 66), uniform(rng, 72, 88)}
	shallow := rgb{uniform(rng, 34, 48), uniform(rng, 98, 116), uniform(rng, 104, 120)}
	green := rgb{uniform(rng, 36, 48), uniform(rng, 88, 100), uniform(rng, 72, 84)}
	a1 := uniform(rng, 0, 2*math.Pi)
	k1 := 2 * math.Pi / uniform(rng, 9, 15)
	a2 := a1 + uniform(rng, 0.6, 1.2)
	k2 := 2 * math.Pi / uniform(rng, 4.5, 7)
	k1x, k1y := k1*math.Cos(a1), k1*math.Sin(a1)
	k2x, k2y := k2*math.Cos(a2), k2*math.Sin(a2)
	s1, s2 := rng.Uint64(), rng.Uint64()

	const step = 4
	gw, gh := r.c.w/step+2, r.c.h/step+2
	n1 := make([]float64, gw*gh)
	n2 := make([]float64, gw*gh)
	for gy := range gh {
		for gx := range gw {
			x, y := float64(gx*step), float64(gy*step)
			n1[gy*gw+gx] = fbm(x/260, y/260, s1, 4)
			n2[gy*gw+gx] = fbm(x/170+17.3, y/170+5.1, s2, 3)
		}
	}
	for py := range r.c.h {
		gy, ty := py/step, float64(py%step)/step
		row := r.c.stride * py
		for px := range r.c.w {
			gx, tx := px/step, float64(px%step)/step
			k := gy*gw + gx
			n := lerp2(n1[k], n1[k+1], n1[k+gw], n1[k+gw+1], tx, ty)
			m := lerp2(n2[k], n2[k+1], n2[k+gw], n2[k+gw+1], tx, ty)
			x, y := float64(px), float64(py)
			t := clamp01((n - 0.28) / 0.44)
			col := mix(mix(deep, shallow, t*t*(3-2*t)), green, 0.3*m)
			crest := max(0, wave(x*k1x+y*k1y+m*12)-0.55) / 0.45
			light := 20 * crest * crest * (0.2 + 0.8*n) * (0.4 + 0.9*m)
			light += 9 * wave(x*k2x+y*k2y+n*9) * max(0, m-0.45) * 2
			light += (unit(hash2(int64(px), int64(py), r.seed)) - 0.5) * 4
			r.c.put(row+px*4, rgb{col.r + 0.8*light, col.g + light, col.b + 0.95*light})
		}
	}
}

func lerp2(a, b, c, d, tx, ty float64) float64 {
	top := a + (b-a)*tx
	bot := c + (d-c)*tx
	return top + (bot-top)*ty
}

// sparkles scatters single bright pixels of sun on the ripples.
func (r *renderer) sparkles(rng *rand.Rand) {
	n := r.c.w * r.c.h / 5000
	white := rgb{250, 252, 246}
	for range n {
		px, py := rng.IntN(r.c.w), rng.IntN(r.c.h)
		a := uniform(rng, 0.25, 0.7)
		r.c.blend(py*r.c.stride+px*4, white, a)
		for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
			x, y := px+d[0], py+d[1]
			if x >= 0 && y >= 0 && x < r.c.w && y < r.c.h {
				r.c.blend(y*r.c.stride+x*4, white, a*0.3)
			}
		}
	}
}

// glint draws a larger patch of reflected sun, elongated along the swell.
func (r *renderer) glint(g glint) {
	e := g.length + 2
	ix0, iy0, ix1, iy1 := r.c.span(g.x-e, g.y-e, g.x+e, g.y+e)
	white := rgb{252, 252, 246}
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			dx, dy := float64(px)+0.5-g.x, float64(py)+0.5-g.y
			a := dx*g.cos + dy*g.sin
			b := -dx*g.sin + dy*g.cos
			k := g.bright * math.Exp(-1.5*(sq(a/g.length)+sq(b/g.width)))
			r.c.blend(py*r.c.stride+px*4, white, min(1, 1.2*k))
		}
	}
}

// wake draws the foam a moving boat leaves: the two arms of the bow wave
// and the churned trail behind the stern.
func (r *renderer) wake(o *object) {
	h := o.length / 2
	strength := 1.0
	if o.kind == kayak {
		strength = 0.4
	}
	back := 2.2 * o.length
	vMax := 0.354*(o.length+back) + o.width
	x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, c := range [4][2]float64{{-h - back, -vMax}, {-h - back, vMax}, {h + 2, -vMax}, {h + 2, vMax}} {
		x, y := o.toImage(c[0], c[1])
		x0, y0, x1, y1 = min(x0, x), min(y0, y), max(x1, x), max(y1, y)
	}
	ix0, iy0, ix1, iy1 := r.c.span(x0, y0, x1, y1)
	foamCol := rgb{214, 230, 228}
	seed := r.seed ^ hash2(int64(o.cx), int64(o.cy), 11)
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			u, v := o.toLocal(float64(px)+0.5, float64(py)+0.5)
			d := h - u // distance behind the bow
			if d <= 0 || d > o.length+back {
				continue
			}
			av := math.Abs(v)
			spread := 0.354*d + 0.25*o.width // the Kelvin angle, about 19.5°
			aw := 1 + 0.05*d
			if av > spread+3*aw {
				continue
			}
			foam := 0.6 * math.Exp(-sq((av-spread)/aw)-d/(1.2*o.length))
			if ds := -u - h; ds > 0 {
				tw := 0.4*o.width + 0.1*ds
				foam += 0.85 * math.Exp(-sq(v/tw)-ds/(1.1*o.length))
			}
			foam *= strength
			if foam < 0.01 {
				continue
			}
			foam *= 0.45 + 0.9*valueNoise(u*0.3, v*0.4, seed)
			r.c.blend(py*r.c.stride+px*4, foamCol, min(0.85, foam))
		}
	}
}

// jettyShadow darkens the water beside a jetty or the quay.
func (r *renderer) jettyShadow(j jetty) {
	off := 5.0
	if j.quay {
		off = 7
	}
	const soft = 3.0
	dx, dy := r.sunX*off, r.sunY*off
	ix0, iy0, ix1, iy1 := r.c.span(j.x0+dx-soft, j.y0+dy-soft, j.x1+dx+soft, j.y1+dy+soft)
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			x, y := float64(px)+0.5-dx, float64(py)+0.5-dy
			f := max(max(j.x0-x, x-j.x1), max(j.y0-y, y-j.y1))
			r.c.darken(py*r.c.stride+px*4, 0.45*clamp01((soft/2-f)/soft))
		}
	}
}

// overlap is the length of [a0,a1] ∩ [b0,b1].
func overlap(a0, a1, b0, b1 float64) float64 {
	return max(0, min(a1, b1)-max(a0, b0))
}

// jetty draws planks (or the quay's concrete) with area coverage at the
// rectangle's edges.
func (r *renderer) jetty(j jetty) {
	ix0, iy0, ix1, iy1 := r.c.span(j.x0, j.y0, j.x1, j.y1)
	for py := iy0; py < iy1; py++ {
		fy0 := float64(py)
		ay := overlap(fy0, fy0+1, j.y0, j.y1)
		for px := ix0; px < ix1; px++ {
			fx0 := float64(px)
			a := ay * overlap(fx0, fx0+1, j.x0, j.x1)
			x, y := fx0+0.5, fy0+0.5
			var col rgb
			if j.quay {
				col = r.concrete(j, x, y)
			} else {
				col = planks(j, x, y)
			}
			r.c.blend(py*r.c.stride+px*4, col, a)
		}
	}
}

// planks colours one point of a jetty: boards across the walkway, each a
// shade of its own, with grain, dark gaps, and a beam along each side.
func planks(j jetty, x, y float64) rgb {
	along, across, width := y-j.y0, x-j.x0, j.x1-j.x0
	if !j.vertical {
		along, across, width = x-j.x0, y-j.y0, j.y1-j.y0
	}
	k := math.Floor(along / j.pitch)
	fr := along - k*j.pitch
	ki := int64(k)
	tone := 0.84 + 0.28*unit(hash2(ki, 7, j.seed))
	grain := 0.93 + 0.14*valueNoise(across/5+float64(ki%97)*13.7, fr*0.6, j.seed)
	weather := 0.9 + 0.18*valueNoise(x/40, y/40, j.seed+3)
	col := j.wood.scale(tone * grain * weather)
	if across < 2 || across > width-2 {
		col = j.wood.scale(0.68 * weather)
	}
	return mix(col, rgb{34, 38, 38}, 0.85*clamp01(1-fr))
}

// concrete colours one point of the quay: stained slabs, expansion joints,
// and a kerb with a dark lip along the water.
func (r *renderer) concrete(j jetty, x, y float64) rgb {
	k := 0.8 + 0.32*fbm(x/50, y/50, j.seed, 3)
	k += (unit(hash2(int64(x), int64(y), j.seed^r.seed)) - 0.5) * 0.06
	s, dw := x, 0.0
	switch j.water {
	case 0:
		dw = y - j.y0
	case 2:
		dw = j.y1 - y
	case 1:
		s, dw = y, j.x1-x
	default:
		s, dw = y, x-j.x0
	}
	if math.Mod(s, j.pitch) < 1.2 {
		k *= 0.78
	}
	switch {
	case dw < 1.3:
		k *= 0.55
	case dw < 5:
		k *= 1.08
	}
	return j.wood.scale(k)
}

func (r *renderer) postShadow(p post) {
	dx, dy := r.sunX*p.r*1.6, r.sunY*p.r*1.6
	e := p.r + 2
	ix0, iy0, ix1, iy1 := r.c.span(p.x+dx-e, p.y+dy-e, p.x+dx+e, p.y+dy+e)
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			d := math.Hypot(float64(px)+0.5-p.x-dx, float64(py)+0.5-p.y-dy)
			r.c.darken(py*r.c.stride+px*4, 0.45*clamp01((p.r+0.6-d)/1.2))
		}
	}
}

// post draws a round post top, lit from the side the sun is on.
func (r *renderer) post(p post) {
	col := rgb{84, 70, 56}
	if p.iron {
		col = rgb{48, 50, 54}
	}
	e := p.r + 1
	ix0, iy0, ix1, iy1 := r.c.span(p.x-e, p.y-e, p.x+e, p.y+e)
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			dx, dy := float64(px)+0.5-p.x, float64(py)+0.5-p.y
			lit := 0.8 + 0.45*clamp01(0.5-(dx*r.sunX+dy*r.sunY)/(2*p.r))
			r.c.blend(py*r.c.stride+px*4, col.scale(lit), cov(math.Hypot(dx, dy)-p.r))
		}
	}
}

// shadowHeight is how far above the water an object's shadow-casting edge
// sits, in pixels.
func shadowHeight(o *object) float64 {
	switch o.kind {
	case buoy:
		return 0.35 * o.length
	case kayak:
		return 1 + 0.2*o.width
	case motorboat:
		return 1.5 + 0.3*o.width
	}
	return 1.5 + 0.25*o.width
}

// shadow darkens what lies under an object's soft shadow: the hull, and
// for a sailboat the mast and any raised sail.
func (r *renderer) shadow(o *object) {
	hs := shadowHeight(o)
	dx, dy := r.sunX*hs, r.sunY*hs
	soft := 1.2 + 0.1*o.width
	b := o.box
	x0, y0 := min(b.X0, b.X0+dx)-soft, min(b.Y0, b.Y0+dy)-soft
	x1, y1 := max(b.X1, b.X1+dx)+soft, max(b.Y1, b.Y1+dy)+soft

	var mast, mastEnd [2]float64
	var tris [][3][2]float64
	if o.kind == sailboat {
		mast[0], mast[1] = o.toImage(0.15*o.length, 0)
		top := 1.0 * o.length // mast height
		mastEnd = [2]float64{mast[0] + r.sunX*top, mast[1] + r.sunY*top}
		x0, y0 = min(x0, mastEnd[0]-1), min(y0, mastEnd[1]-1)
		x1, y1 = max(x1, mastEnd[0]+1), max(y1, mastEnd[1]+1)
		if s := o.sail; s != nil {
			// A raised sail's shadow runs from its foot to the shadow of
			// the masthead.
			for _, sl := range []*sail{&s.main, &s.jib} {
				ax, ay := o.toImage(sl.ou, sl.ov)
				bx, by := o.toImage(sl.ou+sl.du*sl.length, sl.ov+sl.dv*sl.length)
				tris = append(tris, [3][2]float64{{ax, ay}, {bx, by}, mastEnd})
			}
		}
	}
	ix0, iy0, ix1, iy1 := r.c.span(x0, y0, x1, y1)
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			x, y := float64(px)+0.5, float64(py)+0.5
			u, v := o.toLocal(x-dx, y-dy)
			f, _ := o.hullDist(u, v)
			a := 0.42 * clamp01((soft/2-f)/soft)
			if o.kind == sailboat {
				d, t := segDist(x, y, mast, mastEnd)
				a = max(a, 0.32*(1-0.5*t)*clamp01(0.9-d))
				for _, tr := range tris {
					a = max(a, 0.13*clamp01((1.5-triDist(x, y, tr))/3))
				}
			}
			r.c.darken(py*r.c.stride+px*4, a)
		}
	}
}

// segDist is the distance from (x, y) to the segment p–q, and how far
// along the segment (0..1) the nearest point lies.
func segDist(x, y float64, p, q [2]float64) (d, t float64) {
	ux, uy := q[0]-p[0], q[1]-p[1]
	l2 := ux*ux + uy*uy
	if l2 > 0 {
		t = clamp01(((x-p[0])*ux + (y-p[1])*uy) / l2)
	}
	return math.Hypot(x-p[0]-t*ux, y-p[1]-t*uy), t
}

// triDist is an approximate signed distance to a triangle: the largest
// signed distance to its three edge lines.
func triDist(x, y float64, t [3][2]float64) float64 {
	area := (t[1][0]-t[0][0])*(t[2][1]-t[0][1]) - (t[1][1]-t[0][1])*(t[2][0]-t[0][0])
	sign := 1.0
	if area < 0 {
		sign = -1
	}
	f := math.Inf(-1)
	for i := range 3 {
		p, q := t[i], t[(i+1)%3]
		ex, ey := q[0]-p[0], q[1]-p[1]
		l := math.Hypot(ex, ey)
		if l == 0 {
			continue
		}
		// Outward normal is the edge turned away from the interior.
		f = max(f, sign*((x-p[0])*ey-(y-p[1])*ex)/l)
	}
	return f
}

// body draws the object itself, pixel by pixel in its own frame.
func (r *renderer) body(o *object) {
	b := o.box
	ix0, iy0, ix1, iy1 := r.c.span(b.X0-1.5, b.Y0-1.5, b.X1+1.5, b.Y1+1.5)
	// The sun's direction in the object's frame, for cabin shadows and
	// highlights.
	su, sv := r.sunX*o.cos+r.sunY*o.sin, -r.sunX*o.sin+r.sunY*o.cos
	for py := iy0; py < iy1; py++ {
		for px := ix0; px < ix1; px++ {
			u, v := o.toLocal(float64(px)+0.5, float64(py)+0.5)
			off := py*r.c.stride + px*4
			f, hw := o.hullDist(u, v)
			a := cov(f)
			if a > 0 {
				var col rgb
				switch o.kind {
				case sailboat:
					col = sailboatDeck(o, u, v, f, hw, su, sv)
				case motorboat:
					col = motorboatDeck(o, u, v, f, hw, su, sv)
				case kayak:
					col = kayakDeck(o, u, v, f, hw)
				default:
					col = buoyTop(o, u, v, su, sv)
				}
				r.c.blend(off, col, a)
			}
			if o.sail != nil {
				for _, sl := range [2]*sail{&o.sail.main, &o.sail.jib} {
					d := sl.dist(u, v)
					if d < 0.5 {
						col := mix(rgb{250, 250, 247}, rgb{150, 156, 164}, clamp01(d+1.3))
						r.c.blend(off, col, cov(d))
					}
				}
			}
		}
	}
}

// camber shades a deck slightly darker towards the sides, which reads as
// a rounded surface.
func camber(c rgb, v, hw, depth float64) rgb {
	if hw <= 0 {
		return c
	}
	q := clamp01(math.Abs(v) / hw)
	return c.scale(1 - depth*q*q)
}

func sailboatDeck(o *object, u, v, f, hw, su, sv float64) rgb {
	h, hw0 := o.length/2, o.width/2
	c := camber(o.deck, v, hw, 0.1)
	c = mix(c, o.hull, cov(-f-max(1, 0.06*o.width))) // stripe along the gunwale
	c = mix(c, o.trim, cov(rectDist(u, v, -0.9*h, -0.42*h, 0.56*hw0)))
	c = mix(c, o.deck.scale(0.85), cov(rectDist(u, v, 0.42*h, 0.56*h, 0.22*hw0)))
	ch := 0.12 * o.width // cabin height, for its shadow on the deck
	c = c.scale(1 - 0.25*cov(rectDist(u-su*ch, v-sv*ch, -0.4*h, 0.28*h, 0.6*hw0)))
	cabin := rectDist(u, v, -0.4*h, 0.28*h, 0.6*hw0)
	c = mix(c, o.deck.scale(0.96-0.08*cov(cabin+1.2)), cov(cabin))
	if o.width >= 16 { // windows along the cabin sides
		c = mix(c, rgb{48, 58, 70}, cov(max(rectDist(u, v, -0.3*h, 0.15*h, 0.56*hw0), 0.44*hw0-math.Abs(v))))
	}
	if o.sail == nil {
		boom, _ := segDist(u, v, [2]float64{0.3 * h, 0}, [2]float64{-0.78 * h, 0})
		c = mix(c, o.cover, cov(boom-max(0.8, 0.1*o.width)))
	}
	c = mix(c, rgb{70, 70, 76}, cov(math.Hypot(u-0.3*h, v)-max(0.9, 0.05*o.width)))
	return c
}

func motorboatDeck(o *object, u, v, f, hw, su, sv float64) rgb {
	h, hw0 := o.length/2, o.width/2
	c := camber(o.deck, v, hw, 0.1)
	c = mix(c, o.hull, cov(-f-max(1.2, 0.12*o.width))) // topsides
	c = mix(c, o.hull.scale(0.6), 0.6*cov(-f-0.8))     // rub rail
	c = mix(c, o.deck.scale(0.82), cov(rectDist(u, v, 0.55*h, 0.7*h, 0.18*hw0)))
	ch := 0.22 * o.width
	c = c.scale(1 - 0.3*cov(rectDist(u-su*ch, v-sv*ch, -0.42*h, 0.2*h, 0.66*hw0)))
	c = mix(c, rgb{42, 58, 74}, cov(rectDist(u, v, 0.2*h, 0.34*h, 0.62*hw0))) // windscreen
	cabin := rectDist(u, v, -0.42*h, 0.2*h, 0.66*hw0)
	c = mix(c, o.deck.scale(0.97-0.1*cov(cabin+1.2)), cov(cabin))
	c = mix(c, rgb{48, 50, 54}, cov(rectDist(u, v, -h, -0.86*h, 0.22*hw0))) // engine
	return c
}

func kayakDeck(o *object, u, v, f, hw float64) rgb {
	h, hw0 := o.length/2, o.width/2
	c := camber(o.hull, v, hw, 0.25)
	c = mix(c, rgb{255, 255, 255}, 0.2*clamp01(1-math.Abs(v)/(0.3*hw0))) // ridge
	c = mix(c, c.scale(0.65), cov(-f-0.7))
	au, av := 0.2*h, 0.62*hw0
	du := u + 0.05*h
	ring := (math.Hypot(du/au, v/av) - 1) * min(au, av)
	c = mix(c, rgb{64, 64, 68}, cov(ring-0.6))
	c = mix(c, rgb{26, 26, 30}, cov(ring))
	if o.paddler {
		c = mix(c, o.trim, cov((math.Hypot(du/(0.08*h), v/(0.7*hw0))-1)*min(0.08*h, 0.7*hw0)))
		c = mix(c, rgb{70, 52, 40}, cov(math.Hypot(du-0.03*h, v)-0.3*hw0))
	}
	return c
}

func buoyTop(o *object, u, v, su, sv float64) rgb {
	r := o.length / 2
	d := math.Hypot(u, v) / r
	c := o.hull
	if o.banded {
		c = mix(c, rgb{236, 236, 230}, cov((math.Abs(v)-0.22*r)*2))
	}
	c = c.scale(1 - 0.35*d*d)
	// Highlight on the side facing the sun.
	hl := math.Exp(-(sq(u+0.4*r*su) + sq(v+0.4*r*sv)) / sq(0.3*r))
	c = mix(c, rgb{255, 255, 250}, 0.6*hl)
	if r > 6 {
		c = mix(c, rgb{60, 60, 60}, cov(math.Hypot(u, v)-0.15*r))
	}
	return c
}
