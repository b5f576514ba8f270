package demo

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"

	"boxwright/project"
)

// fitBox puts b inside a w×h image with sides of at least a pixel (or the
// whole image where it is smaller), rounded like the truth.
func fitBox(b project.Box, w, h float64) project.Box {
	x0, x1 := fitSpan(b.X0, b.X1, w)
	y0, y1 := fitSpan(b.Y0, b.Y1, h)
	return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
}

func fitSpan(a, b, limit float64) (float64, float64) {
	if b < a {
		a, b = b, a
	}
	a = round2(min(max(a, 0), limit))
	b = round2(min(max(b, 0), limit))
	if minLen := min(1, limit); b-a < minLen {
		a = max(0, min((a+b)/2-minLen/2, limit-minLen))
		b = a + minLen
		a, b = round2(a), min(round2(b), limit)
	}
	return a, b
}

// jitter moves each edge of b by a normal deviate with the given standard
// deviations, each deviate limited to ±cut.
func jitter(rng *rand.Rand, b project.Box, sx, sy, cut float64) project.Box {
	d := func(s float64) float64 { return max(-cut, min(cut, rng.NormFloat64()*s)) }
	return project.Box{X0: b.X0 + d(sx), Y0: b.Y0 + d(sy), X1: b.X1 + d(sx), Y1: b.Y1 + d(sy)}
}

// carefulLabels: every object, each edge within a pixel of the truth.
func carefulLabels(rng *rand.Rand, truth []Object, w, h float64) []Object {
	out := make([]Object, 0, len(truth))
	for _, t := range truth {
		out = append(out, Object{Class: t.Class, Box: fitBox(jitter(rng, t.Box, 0.35, 0.35, 1), w, h)})
	}
	return out
}

// hastyLabels: loose edges, kayaks and sailboats mixed up now and then,
// small buoys often missed, and the odd box on nothing.
func hastyLabels(rng *rand.Rand, sc *scene, truth []Object, w, h float64) []Object {
	out := make([]Object, 0, len(truth)+1)
	for _, t := range truth {
		miss := 0.05
		if t.Class == "buoy" && max(t.Box.Width(), t.Box.Height()) < 14 {
			miss = 0.4
		}
		if rng.Float64() < miss {
			continue
		}
		c := t.Class
		switch r := rng.Float64(); {
		case c == "kayak" && r < 0.15:
			c = "sailboat"
		case c == "sailboat" && r < 0.05:
			c = "kayak"
		}
		sx := max(1, 0.03*t.Box.Width())
		sy := max(1, 0.03*t.Box.Height())
		out = append(out, Object{Class: c, Box: fitBox(jitter(rng, t.Box, sx, sy, 4*max(sx, sy)), w, h)})
	}
	if rng.Float64() < 0.2 {
		out = append(out, spurious(rng, sc, w, h))
	}
	return out
}

// spurious is a box on something that is not an object: mostly a glint or
// a post taken for a buoy.
func spurious(rng *rand.Rand, sc *scene, w, h float64) Object {
	if rng.Float64() < 0.6 {
		if x, y, ok := distractor(rng, sc); ok {
			s := uniform(rng, 8, 14)
			return Object{Class: "buoy", Box: fitBox(project.Box{X0: x - s/2, Y0: y - s/2, X1: x + s/2, Y1: y + s/2}, w, h)}
		}
	}
	k := kind(rng.IntN(len(Classes)))
	bw, bh := uniform(rng, 30, 90), uniform(rng, 14, 40)
	switch k {
	case buoy:
		bw = uniform(rng, 9, 16)
		bh = bw
	case kayak:
		bw, bh = uniform(rng, 40, 70), uniform(rng, 7, 12)
	}
	if rng.IntN(2) == 0 {
		bw, bh = bh, bw
	}
	x, y := uniform(rng, 0, w), uniform(rng, 0, h)
	return Object{Class: Classes[k], Box: fitBox(project.Box{X0: x - bw/2, Y0: y - bh/2, X1: x + bw/2, Y1: y + bh/2}, w, h)}
}

// distractor picks a glint or a post that lies in the picture.
func distractor(rng *rand.Rand, sc *scene) (x, y float64, ok bool) {
	n := len(sc.glints) + len(sc.posts)
	if n == 0 {
		return 0, 0, false
	}
	if i := rng.IntN(n); i < len(sc.glints) {
		return sc.glints[i].x, sc.glints[i].y, true
	} else {
		p := sc.posts[i-len(sc.glints)]
		return p.x, p.y, true
	}
}

// suggestions: what the invented detector proposes. It finds most objects,
// is surer of large ones, sometimes names the wrong class, and fires on
// glints and posts with low scores.
func suggestions(rng *rand.Rand, sc *scene, truth []Object, w, h float64) []Scored {
	var out []Scored
	for _, t := range truth {
		if rng.Float64() >= 0.9 {
			continue
		}
		b := t.Box
		b = fitBox(jitter(rng, b, max(0.7, 0.05*b.Width()), max(0.7, 0.05*b.Height()), math.Inf(1)), w, h)
		size := math.Sqrt(t.Box.Area())
		score := 0.52 + 0.42*min(1, max(0, (size-8)/70)) + rng.NormFloat64()*0.07
		c := t.Class
		if rng.Float64() < 0.03 {
			c = Classes[(slices.Index(Classes, c)+1+rng.IntN(len(Classes)-1))%len(Classes)]
			score *= 0.8
		}
		out = append(out, Scored{Object{c, b}, roundScore(score, 0.3, 0.99)})
	}
	for range countFor(rng, 2+rng.IntN(2), min(1, w*h/(DefaultWidth*DefaultHeight))) {
		x, y, ok := distractor(rng, sc)
		if !ok {
			x, y = uniform(rng, 0, w), uniform(rng, 0, h)
		}
		c := "buoy"
		bw := uniform(rng, 8, 16)
		bh := bw * uniform(rng, 0.8, 1.25)
		if rng.Float64() < 0.3 {
			c = "kayak"
			bw, bh = uniform(rng, 36, 60), uniform(rng, 6, 10)
			if rng.IntN(2) == 0 {
				bw, bh = bh, bw
			}
		}
		score := 0.05 + 0.55*math.Pow(rng.Float64(), 1.7)
		if rng.Float64() < 0.08 {
			score += 0.15 // a convincing one now and then
		}
		out = append(out, Scored{Object{c, fitBox(project.Box{X0: x - bw/2, Y0: y - bh/2, X1: x + bw/2, Y1: y + bh/2}, w, h)}, roundScore(score, 0.01, 0.99)})
	}
	// A detector hands its proposals over best first.
	slices.SortStableFunc(out, func(a, b Scored) int { return cmp.Compare(b.Score, a.Score) })
	return out
}

func roundScore(s, lo, hi float64) float64 {
	return math.Round(min(hi, max(lo, s))*1000) / 1000
}
