package demo

import (
	"math"
	"math/rand/v2"

	"boxwright/project"
)

// obb is an oriented rectangle for keeping things apart while laying out.
type obb struct {
	cx, cy, ax, ay, hu, hv float64 // centre, unit u axis, half extents
}

func (o *object) obb() obb {
	mu, mv := (o.ext[0]+o.ext[1])/2, (o.ext[2]+o.ext[3])/2
	x, y := o.toImage(mu, mv)
	return obb{x, y, o.cos, o.sin, (o.ext[1] - o.ext[0]) / 2, (o.ext[3] - o.ext[2]) / 2}
}

func rectOBB(x0, y0, x1, y1 float64) obb {
	return obb{(x0 + x1) / 2, (y0 + y1) / 2, 1, 0, (x1 - x0) / 2, (y1 - y0) / 2}
}

// overlaps reports whether the rectangles come closer than margin
// (separating-axis test).
func (a obb) overlaps(b obb, margin float64) bool {
	dx, dy := b.cx-a.cx, b.cy-a.cy
	for _, ax := range [4][2]float64{{a.ax, a.ay}, {-a.ay, a.ax}, {b.ax, b.ay}, {-b.ay, b.ax}} {
		ra := a.hu*math.Abs(ax[0]*a.ax+ax[1]*a.ay) + a.hv*math.Abs(-ax[0]*a.ay+ax[1]*a.ax)
		rb := b.hu*math.Abs(ax[0]*b.ax+ax[1]*b.ay) + b.hv*math.Abs(-ax[0]*b.ay+ax[1]*b.ax)
		if math.Abs(dx*ax[0]+dy*ax[1]) > ra+rb+margin {
			return false
		}
	}
	return true
}

// jetty is a plank walkway or, with quay set, the concrete quay strip.
type jetty struct {
	x0, y0, x1, y1 float64
	vertical       bool // long axis along y (planks run across it)
	quay           bool
	wood           rgb
	pitch          float64 // plank pitch in pixels
	seed           uint64  // texture
	water          int     // quay only: the side facing the water (0 top, 1 right, 2 bottom, 3 left)
}

// post is a jetty post or a quay bollard.
type post struct {
	x, y, r float64
	iron    bool // bollard
}

// glint is a bright patch of sun on the water, which a detector may take
// for a buoy or a kayak.
type glint struct {
	x, y, length, width, cos, sin, bright float64
}

// scene is everything Render draws for one frame.
type scene struct {
	objects []*object
	jetties []jetty // the quay, if any, first
	posts   []post
	glints  []glint
	w, h    float64 // image size
	seed    int64   // Config.Seed, for the render stream
}

func uniform(rng *rand.Rand, a, b float64) float64 { return a + (b-a)*rng.Float64() }

// countFor scales a count meant for a 1280×960 image to the image area,
// rounding at random so that small images still get something now and then.
func countFor(rng *rand.Rand, n int, area float64) int {
	return int(float64(n)*area + rng.Float64())
}

// layout builds the scene of one frame.
func layout(rng *rand.Rand, w, h float64) *scene {
	sc := &scene{w: w, h: h}
	area := w * h / (DefaultWidth * DefaultHeight)
	short := min(w, h)

	// The quay: a concrete strip along one edge.
	quaySide := -1
	quayT := 0.0
	if rng.Float64() < 0.55 {
		quaySide = rng.IntN(4)
		quayT = min(uniform(rng, 40, 90), 0.12*short)
		q := jetty{quay: true, water: (quaySide + 2) % 4, seed: rng.Uint64(), pitch: uniform(rng, 60, 100)}
		switch quaySide {
		case 0:
			q.x0, q.y0, q.x1, q.y1 = 0, 0, w, quayT
		case 1:
			q.x0, q.y0, q.x1, q.y1 = w-quayT, 0, w, h
			q.vertical = true
		case 2:
			q.x0, q.y0, q.x1, q.y1 = 0, h-quayT, w, h
		case 3:
			q.x0, q.y0, q.x1, q.y1 = 0, 0, quayT, h
			q.vertical = true
		}
		g := uniform(rng, 138, 160)
		q.wood = rgb{g, g - 2, g - uniform(rng, 4, 12)}
		sc.jetties = append(sc.jetties, q)
	}

	// Jetties run from an edge (or the quay) into the water.
	nj := rng.IntN(3) + 1
	if rng.Float64() < 0.1 {
		nj = 0
	}
	for range nj {
		for range 12 {
			side := rng.IntN(4)
			if quaySide >= 0 && rng.Float64() < 0.7 {
				side = quaySide
			}
			base := -3.0
			if side == quaySide {
				base = quayT - 2
			}
			along, across := w, h // extent along the edge, and into the picture
			if side == 1 || side == 3 {
				along, across = h, w
			}
			jw := max(4, min(uniform(rng, 14, 24), along/10))
			jl := uniform(rng, 0.25, 0.6) * across
			p := uniform(rng, 0.08, 0.92) * along
			j := jetty{seed: rng.Uint64(), pitch: uniform(rng, 3.2, 4.6)}
			g := uniform(rng, 112, 140)
			j.wood = rgb{g, g * uniform(rng, 0.86, 0.92), g * uniform(rng, 0.72, 0.8)}
			switch side {
			case 0:
				j.x0, j.x1, j.y0, j.y1 = p-jw/2, p+jw/2, base, base+jl
				j.vertical = true
			case 2:
				j.x0, j.x1, j.y0, j.y1 = p-jw/2, p+jw/2, h-base-jl, h-base
				j.vertical = true
			case 1:
				j.y0, j.y1, j.x0, j.x1 = p-jw/2, p+jw/2, w-base-jl, w-base
			case 3:
				j.y0, j.y1, j.x0, j.x1 = p-jw/2, p+jw/2, base, base+jl
			}
			if !sc.jettyFits(j, min(150, 0.18*short)) {
				continue
			}
			sc.jetties = append(sc.jetties, j)
			sc.addPosts(rng, j)
			break
		}
	}
	if len(sc.jetties) > 0 && sc.jetties[0].quay {
		sc.addBollards(rng, sc.jetties[0])
	}

	// Boats moored side by side along the jetties and the quay.
	for _, j := range sc.jetties {
		for _, e := range j.edges(w, h) {
			if rng.Float64() < 0.6 {
				sc.mooredRow(rng, e, w, h)
			}
		}
	}

	// Boats, kayaks and buoys out on the water.
	for range countFor(rng, 1+rng.IntN(3), area) {
		sc.placeFree(rng, sailboat, w, h)
	}
	for range countFor(rng, 1+rng.IntN(4), area) {
		sc.placeFree(rng, motorboat, w, h)
	}
	for range countFor(rng, 1+rng.IntN(2), area) {
		sc.kayakGroup(rng, w, h)
	}
	for range countFor(rng, 3+rng.IntN(7), area) {
		sc.placeFree(rng, buoy, w, h)
	}
	if rng.Float64() < 0.4*min(1, area) {
		sc.buoyLine(rng, w, h)
	}

	// Glints come last so that they fall on open water.
	for range countFor(rng, 5+rng.IntN(8), area) {
		for range 10 {
			a := uniform(rng, 0, 2*math.Pi)
			g := glint{x: uniform(rng, 4, w-4), y: uniform(rng, 4, h-4), length: uniform(rng, 2, 6), width: uniform(rng, 0.9, 1.7),
				cos: math.Cos(a), sin: math.Sin(a), bright: uniform(rng, 0.6, 1)}
			if !sc.free(obb{g.x, g.y, 1, 0, 8, 8}, 2) {
				continue
			}
			sc.glints = append(sc.glints, g)
			break
		}
	}
	return sc
}

// jettyFits reports whether j keeps its distance from the other jetties and
// stays off the quay (except where it starts from it).
func (sc *scene) jettyFits(j jetty, gap float64) bool {
	if j.x1-j.x0 < 2 || j.y1-j.y0 < 2 {
		return false
	}
	for _, o := range sc.jetties {
		if o.quay {
			if rectOBB(o.x0, o.y0, o.x1, o.y1).overlaps(rectOBB(j.x0+3, j.y0+3, j.x1-3, j.y1-3), 0) {
				return false
			}
			continue
		}
		if rectOBB(o.x0, o.y0, o.x1, o.y1).overlaps(rectOBB(j.x0, j.y0, j.x1, j.y1), gap) {
			return false
		}
	}
	return true
}

// addPosts puts posts along both long sides of a jetty and at its tip.
func (sc *scene) addPosts(rng *rand.Rand, j jetty) {
	step := uniform(rng, 40, 64)
	r := uniform(rng, 2.4, 3.4)
	if j.vertical {
		for y := j.y0 + step/2; y < j.y1-r; y += step {
			sc.posts = append(sc.posts, post{x: j.x0 + r*0.9, y: y, r: r}, post{x: j.x1 - r*0.9, y: y, r: r})
		}
	} else {
		for x := j.x0 + step/2; x < j.x1-r; x += step {
			sc.posts = append(sc.posts, post{x: x, y: j.y0 + r*0.9, r: r}, post{x: x, y: j.y1 - r*0.9, r: r})
		}
	}
}

// addBollards puts iron bollards along the quay's water edge.
func (sc *scene) addBollards(rng *rand.Rand, q jetty) {
	step := uniform(rng, 70, 110)
	r := uniform(rng, 3, 4.2)
	in := 7.0
	switch q.water {
	case 0, 2:
		y := q.y0 + in
		if q.water == 2 {
			y = q.y1 - in
		}
		for x := step / 2; x < q.x1; x += step {
			sc.posts = append(sc.posts, post{x: x, y: y, r: r, iron: true})
		}
	default:
		x := q.x0 + in
		if q.water == 1 {
			x = q.x1 - in
		}
		for y := step / 2; y < q.y1; y += step {
			sc.posts = append(sc.posts, post{x: x, y: y, r: r, iron: true})
		}
	}
}

// edge is a straight side of a jetty or quay that boats can tie up to:
// it starts at (x, y), runs along (ax, ay) for length pixels, and (nx, ny)
// points out into the water.
type edge struct {
	x, y, ax, ay, nx, ny, length float64
}

// edges lists the sides of j facing water.
func (j jetty) edges(w, h float64) []edge {
	if j.quay {
		switch j.water {
		case 0:
			return []edge{{-60, j.y0, 1, 0, 0, -1, w + 120}}
		case 2:
			return []edge{{-60, j.y1, 1, 0, 0, 1, w + 120}}
		case 1:
			return []edge{{j.x1, -60, 0, 1, 1, 0, h + 120}}
		default:
			return []edge{{j.x0, -60, 0, 1, -1, 0, h + 120}}
		}
	}
	if j.vertical {
		return []edge{{j.x0, j.y0, 0, 1, -1, 0, j.y1 - j.y0}, {j.x1, j.y0, 0, 1, 1, 0, j.y1 - j.y0}}
	}
	return []edge{{j.x0, j.y0, 1, 0, 0, -1, j.x1 - j.x0}, {j.x0, j.y1, 1, 0, 0, 1, j.x1 - j.x0}}
}

// free reports whether b keeps margin pixels from every jetty and object.
func (sc *scene) free(b obb, margin float64) bool {
	for _, j := range sc.jetties {
		if rectOBB(j.x0, j.y0, j.x1, j.y1).overlaps(b, margin) {
			return false
		}
	}
	for _, o := range sc.objects {
		if o.obb().overlaps(b, margin) {
			return false
		}
	}
	return true
}

// mooredRow ties boats up side by side along e, bow out (or, less often,
// end to end alongside it).
func (sc *scene) mooredRow(rng *rand.Rand, e edge, w, h float64) {
	alongside := rng.Float64() < 0.25
	out := math.Atan2(e.ny, e.nx)
	cursor := uniform(rng, 3, 24)
	for cursor < e.length {
		var k kind
		switch r := rng.Float64(); {
		case r < 0.45:
			k = motorboat
		case r < 0.85:
			k = sailboat
		default:
			k = kayak
		}
		gap := uniform(rng, 1.5, 5)
		var o *object
		if alongside {
			ang := math.Atan2(e.ay, e.ax)
			if rng.IntN(2) == 0 {
				ang += math.Pi
			}
			o = newObject(rng, k, 0, 0, ang, false)
			s := cursor + o.length/2
			o.cx, o.cy = e.x+e.ax*s+e.nx*(gap+o.width/2), e.y+e.ay*s+e.ny*(gap+o.width/2)
			cursor += o.length + uniform(rng, 4, 18)
		} else {
			ang := out + rng.NormFloat64()*0.05
			if rng.Float64() < 0.3 {
				ang += math.Pi
			}
			o = newObject(rng, k, 0, 0, ang, false)
			s := cursor + o.width/2
			o.cx, o.cy = e.x+e.ax*s+e.nx*(gap+o.length/2), e.y+e.ay*s+e.ny*(gap+o.length/2)
			cursor += o.width + uniform(rng, 1.5, 7)
		}
		if cursor > e.length {
			break
		}
		if rng.Float64() < 0.18 {
			cursor += uniform(rng, 15, 60) // an empty berth
		}
		o.finish()
		if !onPicture(o.box, w, h) || !sc.free(o.obb(), 1) {
			continue
		}
		sc.objects = append(sc.objects, o)
	}
}

// onPicture reports whether some of b lies in the image.
func onPicture(b project.Box, w, h float64) bool {
	return !b.Clamp(w, h).Empty()
}

// position picks a centre anywhere, now and then straddling an edge so
// that the object is cut by the frame.
func position(rng *rand.Rand, size, w, h float64) (x, y float64) {
	x, y = uniform(rng, 0, w), uniform(rng, 0, h)
	if rng.Float64() < 0.15 {
		d := uniform(rng, -0.35, 0.35) * size
		switch rng.IntN(4) {
		case 0:
			y = d
		case 1:
			x = w + d
		case 2:
			y = h + d
		default:
			x = d
		}
	}
	return x, y
}

// placeFree tries to put one object of class k on open water.
func (sc *scene) placeFree(rng *rand.Rand, k kind, w, h float64) {
	for range 25 {
		o := newObject(rng, k, 0, 0, uniform(rng, 0, 2*math.Pi), k == sailboat && rng.Float64() < 0.65)
		o.cx, o.cy = position(rng, o.length, w, h)
		o.moving = k == motorboat && rng.Float64() < 0.5
		o.finish()
		if onPicture(o.box, w, h) && sc.free(o.obb(), 4) {
			sc.objects = append(sc.objects, o)
			return
		}
	}
}

// kayakGroup puts one to four kayaks out together, roughly parallel.
func (sc *scene) kayakGroup(rng *rand.Rand, w, h float64) {
	n := 1 + rng.IntN(4)
	ang := uniform(rng, 0, 2*math.Pi)
	x, y := position(rng, 80, w, h)
	moving := rng.Float64() < 0.5
	lateral := 0.0
	for range n {
		a := ang + rng.NormFloat64()*0.08
		o := newObject(rng, kayak, 0, 0, a, false)
		lateral += o.width/2 + uniform(rng, 3, 12)
		stagger := uniform(rng, -0.2, 0.2) * o.length
		o.cx = x + stagger*math.Cos(ang) - lateral*math.Sin(ang)
		o.cy = y + stagger*math.Sin(ang) + lateral*math.Cos(ang)
		lateral += o.width / 2
		o.moving = moving
		o.paddler = moving || rng.Float64() < 0.4
		o.finish()
		if onPicture(o.box, w, h) && sc.free(o.obb(), 2) {
			sc.objects = append(sc.objects, o)
		}
	}
}

// buoyLine lays a row of buoys, as marks a channel or a line of moorings.
func (sc *scene) buoyLine(rng *rand.Rand, w, h float64) {
	n := 3 + rng.IntN(4)
	ang := uniform(rng, 0, 2*math.Pi)
	step := uniform(rng, 25, 50)
	x, y := uniform(rng, 0, w), uniform(rng, 0, h)
	for range n {
		o := newObject(rng, buoy, x, y, uniform(rng, 0, 2*math.Pi), false)
		if onPicture(o.box, w, h) && sc.free(o.obb(), 3) {
			sc.objects = append(sc.objects, o)
		}
		x += step * math.Cos(ang)
		y += step * math.Sin(ang)
	}
}
