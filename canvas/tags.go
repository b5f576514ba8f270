package canvas

import (
	"math"

	"boxwright/project"
)

// tagForm is how much of a box's tag is shown.
type tagForm int

const (
	tagNone  tagForm = iota
	tagShort         // Item.Short (or the caption when it has none)
	tagFull          // Item.Caption
)

// Tag sizing: a box gets its full caption when its longer side on screen
// is at least tagFullRatio of the caption's width, its short form when
// at least tagShortRatio of that one's width, else no tag (a buoy of 8
// screen pixels under a 130-pixel tag is hidden by it). The pointer over
// a box, or the selection, shows the full caption whatever the size.
const (
	tagFullRatio  = 0.75
	tagShortRatio = 0.5
)

// chooseTagForm picks the tag form for a box of on-screen size bw×bh
// whose full and short tags are fullW and shortW wide. A forced tag
// (selected or under the pointer) is full; a covered suggestion's is at
// most short, and only where the box is as wide as it.
func chooseTagForm(bw, bh, fullW, shortW float64, force, covered bool) tagForm {
	side := math.Max(bw, bh)
	switch {
	case force:
		return tagFull
	case covered:
		if side >= shortW {
			return tagShort
		}
		return tagNone
	case side >= tagFullRatio*fullW:
		return tagFull
	case side >= tagShortRatio*shortW:
		return tagShort
	}
	return tagNone
}

// tagCell is the side of the cells of the placer's grid, in screen
// units: about a tag's height times four, so a query looks at few cells.
const tagCell = 64

// ownBand is how far inside a box's outline a tag placed in it stays
// (the outline and its halo stay visible).
const ownBand = 3

// tagPlacer places tags greedily on screen: each where it overlaps no tag
// placed before it and none of the person's own boxes, inside the view.
// A grid of tagCell cells holds what is placed, so each query costs a
// few cells whatever the number of boxes.
type tagPlacer struct {
	view       project.Box
	cols, rows int
	cells      [][]int32
	rects      []placed
}

type placed struct {
	r   project.Box
	own bool  // an own box (else a tag)
	key int64 // the own box's item key
}

// reset empties the placer for a view of w×h screen units.
func (p *tagPlacer) reset(w, h float64) {
	p.view = project.Box{X1: w, Y1: h}
	cols, rows := max(1, int(math.Ceil(w/tagCell))), max(1, int(math.Ceil(h/tagCell)))
	if cols*rows > len(p.cells) {
		p.cells = make([][]int32, cols*rows)
	}
	p.cols, p.rows = cols, rows
	for i := range p.cells[:cols*rows] {
		p.cells[i] = p.cells[i][:0]
	}
	p.rects = p.rects[:0]
}

// span is the range of grid cells r touches, clipped to the grid; ok is
// false when r misses the view.
func (p *tagPlacer) span(r project.Box) (c0, r0, c1, r1 int, ok bool) {
	if r.X1 <= 0 || r.Y1 <= 0 || r.X0 >= p.view.X1 || r.Y0 >= p.view.Y1 {
		return 0, 0, 0, 0, false
	}
	cl := func(v float64, n int) int { return min(n-1, max(0, int(v/tagCell))) }
	return cl(r.X0, p.cols), cl(r.Y0, p.rows), cl(r.X1, p.cols), cl(r.Y1, p.rows), true
}

func (p *tagPlacer) add(r project.Box, own bool, key int64) {
	c0, r0, c1, r1, ok := p.span(r)
	if !ok {
		return
	}
	i := int32(len(p.rects))
	p.rects = append(p.rects, placed{r: r, own: own, key: key})
	for y := r0; y <= r1; y++ {
		for x := c0; x <= c1; x++ {
			p.cells[y*p.cols+x] = append(p.cells[y*p.cols+x], i)
		}
	}
}

// addOwn records one of the person's own boxes (screen coordinates).
func (p *tagPlacer) addOwn(b project.Box, key int64) {
	p.add(project.Box{X0: b.X0 - 1, Y0: b.Y0 - 1, X1: b.X1 + 1, Y1: b.Y1 + 1}, true, key)
}

func overlaps(a, b project.Box) bool {
	return a.X0 < b.X1 && b.X0 < a.X1 && a.Y0 < b.Y1 && b.Y0 < a.Y1
}

func within(inner, outer project.Box) bool {
	return inner.X0 >= outer.X0 && inner.Y0 >= outer.Y0 && inner.X1 <= outer.X1 && inner.Y1 <= outer.Y1
}

// free says whether a tag at r for item key lies in the view and clear
// of the tags placed (unless tagsToo is false) and of the person's own
// boxes other than the item itself: a tag never hides what the person
// has drawn, not even inside a larger own box.
func (p *tagPlacer) free(r project.Box, key int64, tagsToo bool) bool {
	if !within(r, p.view) {
		return false
	}
	c0, r0, c1, r1, _ := p.span(r)
	for y := r0; y <= r1; y++ {
		for x := c0; x <= c1; x++ {
			for _, i := range p.cells[y*p.cols+x] {
				q := p.rects[i]
				if !overlaps(q.r, r) {
					continue
				}
				if !q.own {
					if tagsToo {
						return false
					}
					continue
				}
				if q.key != key { // a box's own tag may lie on its own box
					return false
				}
			}
		}
	}
	return true
}

// candidates are the places tried for a w×h tag of the screen box b, in
// order: above its top-left corner, below its bottom-left one, inside
// its top-left corner (only where the box has room for it), right of
// it, left of it, then above and below its right end.
func tagCandidates(b project.Box, w, h float64) [7]project.Box {
	at := func(x, y float64) project.Box { return project.Box{X0: x, Y0: y, X1: x + w, Y1: y + h} }
	inside := at(math.Inf(-1), math.Inf(-1)) // never in the view
	if w <= b.Width()-2*ownBand-2 && 3*h <= b.Height() {
		inside = at(b.X0+ownBand+1, b.Y0+ownBand+1)
	}
	return [7]project.Box{
		at(b.X0, b.Y0-h),
		at(b.X0, b.Y1),
		inside,
		at(b.X1+2, b.Y0),
		at(b.X0-w-2, b.Y0),
		at(b.X1-w, b.Y0-h),
		at(b.X1-w, b.Y1),
	}
}

// place finds a place for a w×h tag of the screen box b of item key and
// records it. A forced tag (selected, under the pointer) that finds no
// free place goes to the first place clear of own boxes, else the first
// candidate moved into the view. ok is false when the tag is skipped.
func (p *tagPlacer) place(b project.Box, key int64, w, h float64, force bool) (project.Box, bool) {
	cands := tagCandidates(b, w, h)
	for _, r := range cands {
		if p.free(r, key, true) {
			p.add(r, false, 0)
			return r, true
		}
	}
	if !force {
		return project.Box{}, false
	}
	r := cands[0]
	for _, c := range cands {
		if p.free(c, key, false) {
			r = c
			break
		}
	}
	if !within(r, p.view) {
		dx := math.Max(0, -r.X0) - math.Max(0, r.X1-p.view.X1)
		dy := math.Max(0, -r.Y0) - math.Max(0, r.Y1-p.view.Y1)
		r = project.Box{X0: r.X0 + dx, Y0: r.Y0 + dy, X1: r.X1 + dx, Y1: r.Y1 + dy}
	}
	p.add(r, false, 0)
	return r, true
}
