package demo

import (
	"math"
	"math/rand/v2"
)

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
