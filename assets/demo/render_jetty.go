package demo

import "math"

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
