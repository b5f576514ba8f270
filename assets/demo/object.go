package demo

import (
	"math"
	"math/rand/v2"

	"boxwright/project"
)

// kind indexes Classes.
type kind uint8

const (
	sailboat kind = iota
	motorboat
	buoy
	kayak
)

// rgb is a colour with channels in 0..255, kept as floats while mixing.
type rgb struct{ r, g, b float64 }

// object is one thing on the water, described in its own frame: u runs
// from stern to bow along the heading, v to starboard.
type object struct {
	kind          kind
	cx, cy        float64 // centre of the hull in image pixels
	cos, sin      float64 // of the heading (bow direction)
	length, width float64 // hull size; a buoy's diameter in both
	hull          rgb     // main colour (a motorboat's sides, a kayak, a buoy)
	deck          rgb     // deck or cabin roof
	trim          rgb     // cockpit, rub rail, a paddler's vest
	cover         rgb     // a sailboat's sail cover on the boom
	sail          *sailSet
	moving        bool // draws a wake
	paddler       bool // kayak with someone in it
	banded        bool // buoy with a white band
	box           project.Box
	ext           [4]float64 // u0, u1, v0, v1 of the drawn shape
}

// sailSet is a sailboat's raised mainsail and jib.
type sailSet struct {
	main, jib sail
}

// sail is a curved thin sheet seen from above: it starts at (ou, ov) in
// the hull frame and runs along (du, dv) for length pixels, bulging to
// one side.
type sail struct {
	ou, ov, du, dv, length, bulge, thick float64
}

// dist is an approximate signed distance from (u, v) to the sail outline.
func (s *sail) dist(u, v float64) float64 {
	pu, pv := u-s.ou, v-s.ov
	a := pu*s.du + pv*s.dv
	b := -pu*s.dv + pv*s.du
	t := a / s.length
	p := 4 * t * (1 - t)
	b -= s.bulge * p
	half := s.half(t, p)
	return max(math.Abs(b)-half, max(-a, a-s.length))
}

// half is the sail's half-thickness seen from above at t (0 at the luff,
// 1 at the leech), p = 4t(1-t): the belly shows, and the twisted upper
// sail fans out towards the leech.
func (s *sail) half(t, p float64) float64 {
	return 0.6 + s.thick*(0.5*p+0.6*t)
}

// outline samples the edge of the sail in the hull frame.
func (s *sail) outline(add func(u, v float64)) {
	for k := 0; k <= 12; k++ {
		t := float64(k) / 12
		p := 4 * t * (1 - t)
		a := t * s.length
		for _, side := range [2]float64{-1, 1} {
			b := s.bulge*p + side*s.half(t, p)
			add(s.ou+a*s.du-b*s.dv, s.ov+a*s.dv+b*s.du)
		}
	}
}

// hullDist returns an approximate signed distance in pixels from (u, v) to
// the hull outline (negative inside) and the hull's half-width at u.
func (o *object) hullDist(u, v float64) (f, hw float64) {
	h := o.length / 2
	hw0 := o.width / 2
	if o.kind == buoy {
		return math.Hypot(u, v) - hw0, hw0
	}
	t := u / h
	var dhw float64 // d hw / du, to turn the lateral gap into a distance
	switch o.kind {
	case sailboat:
		if t < -0.1 {
			s := (-0.1 - t) / 0.9
			hw, dhw = hw0*(1-0.3*s*s), hw0*0.6*s/(0.9*h)
		} else {
			s := (t + 0.1) / 1.1
			hw, dhw = hw0*(1-s*s), -hw0*2*s/(1.1*h)
		}
	case motorboat:
		if t < 0.1 {
			s := (0.1 - t) / 1.1
			hw, dhw = hw0*(1-0.08*s*s), hw0*0.16*s/(1.1*h)
		} else {
			s := (t - 0.1) / 0.9
			hw, dhw = hw0*(1-s*s), -hw0*2*s/(0.9*h)
		}
	default: // kayak: pointed at both ends
		hw, dhw = hw0*(1-t*t), -hw0*2*t/h
	}
	f = (math.Abs(v) - hw) / math.Sqrt(1+dhw*dhw)
	if o.kind != kayak {
		f = max(f, -u-h) // flat transom
	}
	return f, hw
}

// finish computes the object's extents and bounding box from its outline.
func (o *object) finish() {
	ext := [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	bx := [4]float64{math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)}
	add := func(u, v float64) {
		ext[0], ext[1] = min(ext[0], u), max(ext[1], u)
		ext[2], ext[3] = min(ext[2], v), max(ext[3], v)
		x, y := o.toImage(u, v)
		bx[0], bx[1] = min(bx[0], x), min(bx[1], y)
		bx[2], bx[3] = max(bx[2], x), max(bx[3], y)
	}
	h := o.length / 2
	if o.kind == buoy {
		add(-h, -h)
		add(h, h)
	} else {
		const n = 40 // t = -1 + k/20 hits each hull's widest point
		for k := 0; k <= n; k++ {
			u := -h + o.length*float64(k)/n
			_, hw := o.hullDist(u, 0)
			hw = max(hw, 0)
			add(u, -hw)
			add(u, hw)
		}
	}
	if o.sail != nil {
		o.sail.main.outline(add)
		o.sail.jib.outline(add)
	}
	o.ext = ext
	if o.kind == buoy {
		bx = [4]float64{o.cx - h, o.cy - h, o.cx + h, o.cy + h}
	}
	o.box = project.Box{X0: bx[0], Y0: bx[1], X1: bx[2], Y1: bx[3]}
}

// toImage maps a point of the object's frame to image pixels.
func (o *object) toImage(u, v float64) (x, y float64) {
	return o.cx + u*o.cos - v*o.sin, o.cy + u*o.sin + v*o.cos
}

// toLocal maps an image point to the object's frame.
func (o *object) toLocal(x, y float64) (u, v float64) {
	dx, dy := x-o.cx, y-o.cy
	return dx*o.cos + dy*o.sin, -dx*o.sin + dy*o.cos
}

var (
	motorHulls = []rgb{{240, 240, 236}, {236, 236, 230}, {30, 45, 92}, {168, 36, 34}, {32, 82, 58}, {128, 134, 140}, {226, 214, 184}, {88, 148, 198}, {36, 36, 40}}
	sailTrims  = []rgb{{215, 218, 220}, {205, 208, 212}, {28, 44, 90}, {30, 78, 60}, {120, 30, 36}}
	kayakHulls = []rgb{{242, 202, 30}, {246, 122, 22}, {212, 40, 40}, {140, 200, 42}, {30, 172, 202}, {200, 52, 142}, {40, 92, 212}}
	buoyHulls  = []rgb{{204, 40, 30}, {240, 112, 22}, {242, 206, 32}}
)

func pick(rng *rand.Rand, cs []rgb) rgb {
	c := cs[rng.IntN(len(cs))]
	k := uniform(rng, 0.94, 1.04)
	return rgb{min(255, c.r*k), min(255, c.g*k), min(255, c.b*k)}
}

// newObject makes an object of class k with random size and colours,
// heading along ang, centred at (x, y). Sails stay down unless sails is set.
func newObject(rng *rand.Rand, k kind, x, y, ang float64, sails bool) *object {
	o := &object{kind: k, cx: x, cy: y, cos: math.Cos(ang), sin: math.Sin(ang)}
	switch k {
	case sailboat:
		o.length = uniform(rng, 55, 130)
		o.width = o.length * uniform(rng, 0.3, 0.36)
		g := uniform(rng, 232, 246)
		o.deck = rgb{g, g - uniform(rng, 0, 4), g - uniform(rng, 0, 10)}
		o.hull = pick(rng, sailTrims)
		o.trim = []rgb{{150, 112, 72}, {138, 138, 132}, {168, 130, 88}}[rng.IntN(3)]
		o.cover = []rgb{{34, 52, 104}, {30, 96, 104}, {120, 36, 42}, {70, 74, 80}}[rng.IntN(4)]
		if sails {
			side := 1.0
			if rng.IntN(2) == 0 {
				side = -1
			}
			sa := side * uniform(rng, 0.12, 0.6)
			h := o.length / 2
			m := sail{ou: 0.3 * h, du: -math.Cos(sa), dv: math.Sin(sa), length: 0.55 * o.length}
			m.bulge, m.thick = side*0.08*m.length, 0.07*o.width+0.8
			j := sail{ou: 0.94 * h, du: -math.Cos(0.7 * sa), dv: math.Sin(0.7 * sa), length: 0.42 * o.length}
			j.bulge, j.thick = side*0.09*j.length, 0.05*o.width+0.6
			o.sail = &sailSet{main: m, jib: j}
		}
	case motorboat:
		o.length = uniform(rng, 32, 85)
		o.width = o.length * uniform(rng, 0.36, 0.44)
		o.hull = pick(rng, motorHulls)
		g := uniform(rng, 225, 245)
		o.deck = rgb{g, g, g - uniform(rng, 0, 14)}
		if rng.IntN(4) == 0 {
			o.deck = rgb{(o.hull.r + 2*g) / 3, (o.hull.g + 2*g) / 3, (o.hull.b + 2*g) / 3}
		}
		o.trim = rgb{44, 58, 72}
	case buoy:
		o.length = uniform(rng, 8, 20)
		o.width = o.length
		o.hull = pick(rng, buoyHulls)
		o.banded = rng.IntN(3) == 0
	case kayak:
		o.length = uniform(rng, 40, 80)
		o.width = max(5, o.length*uniform(rng, 0.11, 0.15))
		o.hull = pick(rng, kayakHulls)
		o.trim = []rgb{{222, 170, 120}, {40, 40, 46}, {230, 60, 40}, {250, 250, 250}}[rng.IntN(4)]
	}
	o.finish()
	return o
}
