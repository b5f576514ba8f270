package demo

import "math"

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
