package exemplar

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"slices"
	"sync"

	"boxwright/project"
)

// template is one thing correlated with the image: the exemplars of one
// size at one scale and one turn. With max voting it holds one exemplar;
// with mean voting every exemplar of that size, whose maps are averaged.
type template struct {
	exemplar int       // lowest index among the voters
	scale    float64   //
	turns    int       // quarter turns clockwise
	w, h     int       // full-resolution size, after the turn
	voters   [][]Plane // per voter, one plane per channel
	coarse   map[int][][]Plane
	mu       sync.Mutex
}

// at returns the voters' planes at pyramid level l, halving the
// full-resolution template as the image is halved so both blur alike.
func (t *template) at(l int) [][]Plane {
	if l == 0 {
		return t.voters
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	if v, ok := t.coarse[l]; ok {
		return v
	}
	out := make([][]Plane, len(t.voters))
	for i, chans := range t.voters {
		out[i] = make([]Plane, len(chans))
		for c, p := range chans {
			for range l {
				p = halve(p)
			}
			out[i][c] = p
		}
	}
	if t.coarse == nil {
		t.coarse = map[int][][]Plane{}
	}
	t.coarse[l] = out
	return out
}

// score correlates the template at level l with the image planes ps and
// averages the voters' maps.
func (t *template) score(ctx context.Context, ps []Plane, l int) (Plane, error) {
	var sum Plane
	for i, v := range t.at(l) {
		m, err := nccPlanes(ctx, ps, v)
		if err != nil {
			return Plane{}, err
		}
		if i == 0 {
			sum = m
			continue
		}
		if i == 1 {
			sum = Plane{W: sum.W, H: sum.H, Pix: slices.Clone(sum.Pix)} // the first map may be shared
		}
		for k, x := range m.Pix {
			sum.Pix[k] += x
		}
	}
	if n := len(t.voters); n > 1 {
		inv := 1 / float32(n)
		for k := range sum.Pix {
			sum.Pix[k] *= inv
		}
	}
	return sum, nil
}

// templateSet is every template cut from one image's exemplars, made once
// and correlated with any number of images.
type templateSet struct {
	opt       Options
	plan      ScalePlan // the scales searched
	templates []*template
	minSide   int // shortest side of any template
}

// newTemplateSet cuts the exemplars from an image's planes and builds every
// scale and turn that PlanScales keeps for images of at most size largest;
// a template of an exemplar that is too small or too large at a kept scale
// is left out. Options must have their defaults filled. Resizing and
// turning hundreds of large templates takes a while, so a cancelled ctx
// stops it between scales.
func newTemplateSet(ctx context.Context, planes []Plane, exemplars []project.Box, opt Options, largest image.Point) (*templateSet, error) {
	if len(exemplars) == 0 {
		return nil, errors.New("exemplar search: no exemplars")
	}
	if len(planes) == 0 || planes[0].Empty() {
		return nil, errors.New("exemplar search: the exemplar image has no pixels")
	}
	iw, ih := planes[0].W, planes[0].H
	crops := make([][]Plane, len(exemplars))
	for i, b := range exemplars {
		if !b.Valid() {
			return nil, fmt.Errorf("exemplar %d: box %v is not a valid box", i, b)
		}
		r := image.Rect(int(math.Round(b.X0)), int(math.Round(b.Y0)), int(math.Round(b.X1)), int(math.Round(b.Y1))).Intersect(image.Rect(0, 0, iw, ih))
		if r.Dx() < minExemplarSide || r.Dy() < minExemplarSide {
			return nil, fmt.Errorf("exemplar %d: box %v has less than %d×%d pixels inside the %d×%d image", i, b, minExemplarSide, minExemplarSide, iw, ih)
		}
		crops[i] = make([]Plane, len(planes))
		for c, p := range planes {
			crops[i][c] = Crop(p, r)
		}
	}
	plan, err := PlanScales(opt, exemplars, image.Pt(iw, ih), largest)
	if err != nil {
		return nil, err
	}
	largest = image.Pt(max(largest.X, iw), max(largest.Y, ih))
	turns := []int{0}
	if opt.Rotations {
		turns = []int{0, 1, 2, 3}
	}
	set := &templateSet{opt: opt, plan: plan, minSide: math.MaxInt}
	for _, s := range plan.Searched {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		type size struct{ w, h int }
		groups := map[size]int{} // size → index into set.templates, for mean voting
		for e, chans := range crops {
			ts := templateSize(image.Pt(chans[0].W, chans[0].H), s)
			if templateFits(ts, largest, opt.Rotations) != "" {
				continue // another exemplar makes this scale worth searching
			}
			w, h := ts.X, ts.Y
			scaled := make([]Plane, len(chans))
			for c, p := range chans {
				if w == p.W && h == p.H {
					scaled[c] = p
				} else {
					scaled[c] = Resize(p, w, h)
				}
			}
			// Mean voting needs maps of one size; exemplars of other sizes
			// get their own templates and vote by max.
			gi, join := groups[size{w, h}]
			if opt.Vote == "mean" && !join {
				groups[size{w, h}] = len(set.templates)
			}
			for ti, k := range turns {
				rot := scaled
				if k != 0 {
					rot = make([]Plane, len(scaled))
					for c, p := range scaled {
						rot[c] = Rotate90(p, k)
					}
				}
				if join {
					t := set.templates[gi+ti]
					t.voters = append(t.voters, rot)
					continue
				}
				set.templates = append(set.templates, &template{
					exemplar: e, scale: s, turns: k,
					w: rot[0].W, h: rot[0].H, voters: [][]Plane{rot},
				})
				set.minSide = min(set.minSide, w, h)
			}
		}
	}
	return set, nil
}
