package exemplar

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"runtime"
	"slices"
	"sync"

	"boxwright/project"
)

// Search tuning, not options: a person should not need to think about them.
const (
	// coarseMinSide is the shorter side, in pixels, below which a template
	// stops carrying enough structure for the coarse pass.
	coarseMinSide = 12
	// coarseMargin lowers the threshold on the coarse level: averaging
	// pixels blurs fine detail, so a true match scores lower there.
	coarseMargin = 0.2
	// coarseTopK local maxima per map are refined whatever their coarse
	// score, so a match the coarse level underrates is not lost.
	coarseTopK = 8
	// exemplarIoU: a match overlapping an exemplar by more is the
	// exemplar itself.
	exemplarIoU = 0.5
	// minExemplarSide is the least an exemplar box may hold inside its
	// image; scaled, its template must still reach MinTemplateSide.
	minExemplarSide = 3
	// maxClimb bounds the moves of a refinement window whose best position
	// lies on its edge.
	maxClimb = 8
)

// Match is one found object.
type Match struct {
	Box      project.Box // in the searched image's pixels
	Score    float64     // correlation, at most 1
	Scale    float64     // of the template that matched
	Rotation int         // degrees clockwise: 0, 90, 180 or 270
	// Exemplar is the index of the exemplar that matched; with mean voting
	// the lowest index of the exemplars that voted.
	Exemplar int
}

// Search finds objects like the exemplars (boxes on img, all of one class)
// in img, coarse to fine: it correlates on a pyramid level where the
// smallest template is still about 12 pixels across, refines the best
// coarse candidates at full resolution, keeps peaks at or above the
// threshold, suppresses overlapping ones and drops the exemplars
// themselves. Matches come best first.
func Search(ctx context.Context, img image.Image, exemplars []project.Box, opt Options) ([]Match, error) {
	return searchImage(ctx, img, exemplars, opt, -1)
}

// Exhaustive is Search done at full resolution over every position, the
// reference the coarse-to-fine search is measured against.
func Exhaustive(ctx context.Context, img image.Image, exemplars []project.Box, opt Options) ([]Match, error) {
	return searchImage(ctx, img, exemplars, opt, 0)
}

// searchImage searches the exemplars' own image; level < 0 picks the
// coarse level itself.
func searchImage(ctx context.Context, img image.Image, exemplars []project.Box, opt Options, level int) ([]Match, error) {
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	if img == nil {
		return nil, errors.New("exemplar search: no image")
	}
	planes := Planes(img, opt.Feature)
	set, err := newTemplateSet(ctx, planes, exemplars, opt, img.Bounds().Size())
	if err != nil {
		return nil, err
	}
	ms, err := set.search(ctx, planes, exemplars, level)
	if err != nil {
		return nil, err
	}
	return ms[:min(len(ms), opt.MaxResults)], nil
}

// coarseLevel is the deepest pyramid level at which the smallest template
// keeps coarseMinSide pixels and every template still fits the image.
func (s *templateSet) coarseLevel(iw, ih int) int {
	l := 0
	for s.minSide>>(l+1) >= coarseMinSide && iw>>(l+1) >= 2*coarseMinSide && ih>>(l+1) >= 2*coarseMinSide {
		l++
	}
	return l
}

// search correlates the set with the image planes and returns every match
// that survives suppression, best first, without the MaxResults cut;
// matches overlapping an exclude box by more than half are dropped. level < 0 chooses the coarse
// level, 0 searches exhaustively, above 0 forces that level (for tests).
func (s *templateSet) search(ctx context.Context, planes []Plane, exclude []project.Box, level int) ([]Match, error) {
	if len(planes) == 0 || planes[0].W == 0 || planes[0].H == 0 {
		return nil, nil
	}
	iw, ih := planes[0].W, planes[0].H
	if level < 0 {
		level = s.coarseLevel(iw, ih)
	}
	pyramid := [][]Plane{planes}
	for l := 1; l <= level; l++ {
		prev := pyramid[l-1]
		next := make([]Plane, len(prev))
		for c, p := range prev {
			next[c] = halve(p)
		}
		pyramid = append(pyramid, next)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	found := make([][]Match, len(s.templates))
	err := forEach(ctx, len(s.templates), func(i int) error {
		t := s.templates[i]
		if t.w > iw || t.h > ih {
			return nil
		}
		var err error
		if level == 0 {
			found[i], err = s.exhaustive(ctx, t, planes)
		} else {
			found[i], err = s.coarseToFine(ctx, t, pyramid, level)
		}
		return err
	})
	if err != nil {
		return nil, err
	}
	return s.suppress(ctx, slices.Concat(found...), exclude)
}

// exhaustive returns the local maxima of the full-resolution map at or
// above the threshold.
func (s *templateSet) exhaustive(ctx context.Context, t *template, planes []Plane) ([]Match, error) {
	m, err := t.score(ctx, planes, 0)
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		return nil, fmt.Errorf("exemplar search: correlating exemplar %d: %w", t.exemplar, err)
	}
	var out []Match
	for _, p := range peaks(m, float32(s.opt.Threshold)) {
		if p.v >= float32(s.opt.Threshold) {
			out = append(out, t.match(p.x, p.y, p.v))
		}
	}
	return out, nil
}

// coarseToFine correlates at the coarse level, then refines the candidates
// at full resolution.
func (s *templateSet) coarseToFine(ctx context.Context, t *template, pyramid [][]Plane, level int) ([]Match, error) {
	coarse := pyramid[level]
	ct := t.at(level)
	if ct[0][0].W < 1 || ct[0][0].H < 1 || ct[0][0].W > coarse[0].W || ct[0][0].H > coarse[0].H {
		return s.exhaustive(ctx, t, pyramid[0])
	}
	m, err := t.score(ctx, coarse, level)
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		return nil, fmt.Errorf("exemplar search: correlating exemplar %d: %w", t.exemplar, err)
	}
	cands := peaks(m, float32(max(0, s.opt.Threshold-2*coarseMargin)))
	slices.SortFunc(cands, func(a, b peak) int { return cmp.Compare(b.v, a.v) })
	keep := 0
	limit := float32(s.opt.Threshold - coarseMargin)
	for keep < len(cands) && (keep < coarseTopK || cands[keep].v >= limit) {
		keep++
	}
	// A busy image could hand thousands of weak candidates over; more than
	// a few times MaxResults are not refined, so the count of matches
	// beyond the cut (Result.Found) is then a lower bound.
	keep = min(keep, coarseTopK+4*s.opt.MaxResults)
	f := 1 << level
	full := pyramid[0]
	var out []Match
	for _, c := range cands[:keep] {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		x0, y0 := c.x*f-2*f, c.y*f-2*f
		p, err := t.refine(ctx, full, x0, y0, x0+5*f-1, y0+5*f-1)
		if err != nil {
			if ctx.Err() != nil {
				return nil, ctx.Err()
			}
			return nil, fmt.Errorf("exemplar search: refining exemplar %d: %w", t.exemplar, err)
		}
		if p.v >= float32(s.opt.Threshold) {
			out = append(out, t.match(p.x, p.y, p.v))
		}
	}
	return out, nil
}

// refine finds the best full-resolution position with its top-left corner
// in [x0,x1]×[y0,y1]. When the best lies on the window's edge (not the
// image's) the window moves there, so that what it returns is a local
// maximum of the full map, the same peak Exhaustive reports.
func (t *template) refine(ctx context.Context, planes []Plane, x0, y0, x1, y1 int) (peak, error) {
	mw, mh := planes[0].W-t.w, planes[0].H-t.h // last valid positions
	best := peak{v: float32(math.Inf(-1))}
	for range maxClimb {
		x0, y0 = max(0, x0), max(0, y0)
		x1, y1 = min(mw, x1), min(mh, y1)
		if x1 < x0 || y1 < y0 {
			return best, nil
		}
		r := image.Rect(x0, y0, x1+t.w, y1+t.h)
		win := make([]Plane, len(planes))
		for c, p := range planes {
			win[c] = Crop(p, r)
		}
		m, err := t.score(ctx, win, 0)
		if err != nil {
			return best, err
		}
		bx, by, bv := -1, -1, float32(math.Inf(-1))
		for y := 0; y < m.H; y++ {
			for x, v := range m.Pix[y*m.W : (y+1)*m.W] {
				if v > bv {
					bx, by, bv = x, y, v
				}
			}
		}
		if bx < 0 {
			return best, nil
		}
		best = peak{x0 + bx, y0 + by, bv}
		onEdge := (bx == 0 && x0 > 0) || (bx == m.W-1 && x1 < mw) ||
			(by == 0 && y0 > 0) || (by == m.H-1 && y1 < mh)
		if !onEdge {
			break
		}
		x0, x1, y0, y1 = best.x-2, best.x+2, best.y-2, best.y+2
	}
	return best, nil
}

// match is the box of the template placed with its top-left at (x, y).
func (t *template) match(x, y int, v float32) Match {
	return Match{
		Box:      project.Box{X0: float64(x), Y0: float64(y), X1: float64(x + t.w), Y1: float64(y + t.h)},
		Score:    float64(v),
		Scale:    t.scale,
		Rotation: 90 * t.turns,
		Exemplar: t.exemplar,
	}
}

// finish orders the matches, suppresses overlaps, drops the exemplars and
// keeps the best MaxResults: suppress, cut to MaxResults.
func (s *templateSet) finish(ctx context.Context, ms []Match, exclude []project.Box) ([]Match, error) {
	out, err := s.suppress(ctx, ms, exclude)
	if err != nil {
		return nil, err
	}
	return out[:min(len(out), s.opt.MaxResults)], nil
}

// suppress orders the matches best first, suppresses overlaps and drops the
// exemplars, keeping every match that survives (no cap, so that a caller
// can say how many a cap left out). The suppression is greedy NMS (as
// suggest.NMS) over the ordered matches; a grid of the boxes kept so far
// finds the few a match can overlap, so a busy map's many thousand peaks
// cost a handful of comparisons each. Exemplars still suppress what they
// overlap.
func (s *templateSet) suppress(ctx context.Context, ms []Match, exclude []project.Box) ([]Match, error) {
	// A total order, so that ties do not depend on goroutine timing.
	slices.SortFunc(ms, func(a, b Match) int {
		return cmp.Or(cmp.Compare(b.Score, a.Score), cmp.Compare(a.Box.Y0, b.Box.Y0), cmp.Compare(a.Box.X0, b.Box.X0),
			cmp.Compare(a.Scale, b.Scale), cmp.Compare(a.Rotation, b.Rotation), cmp.Compare(a.Exemplar, b.Exemplar))
	})
	side := 1.0
	for _, m := range ms {
		side = max(side, m.Box.Width(), m.Box.Height())
	}
	kept := newBoxGrid(side)
	var out []Match
	for i, m := range ms {
		if i%1024 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		if kept.overlaps(m.Box, s.opt.NMS) {
			continue
		}
		kept.add(m.Box)
		if !overlapsAny(m.Box, exclude, exemplarIoU) {
			out = append(out, m)
		}
	}
	return out, nil
}

// boxGrid holds boxes in square cells of a side at least as long as any
// box's, so that the boxes a box can overlap share one of its cells.
type boxGrid struct {
	side  float64
	cells map[[2]int][]project.Box
}

func newBoxGrid(side float64) *boxGrid {
	return &boxGrid{side: side, cells: map[[2]int][]project.Box{}}
}

// span is the range of cells b touches.
func (g *boxGrid) span(b project.Box) (x0, y0, x1, y1 int) {
	return int(math.Floor(b.X0 / g.side)), int(math.Floor(b.Y0 / g.side)), int(math.Floor(b.X1 / g.side)), int(math.Floor(b.Y1 / g.side))
}

// add files b in every cell it touches.
func (g *boxGrid) add(b project.Box) {
	x0, y0, x1, y1 := g.span(b)
	for y := y0; y <= y1; y++ {
		for x := x0; x <= x1; x++ {
			g.cells[[2]int{x, y}] = append(g.cells[[2]int{x, y}], b)
		}
	}
}

// overlaps reports whether b overlaps a box of the grid by more than iou.
func (g *boxGrid) overlaps(b project.Box, iou float64) bool {
	x0, y0, x1, y1 := g.span(b)
	for y := y0; y <= y1; y++ {
		for x := x0; x <= x1; x++ {
			if overlapsAny(b, g.cells[[2]int{x, y}], iou) {
				return true
			}
		}
	}
	return false
}

// overlapsAny reports whether b overlaps one of the boxes by more than iou.
func overlapsAny(b project.Box, boxes []project.Box, iou float64) bool {
	for _, o := range boxes {
		if b.IoU(o) > iou {
			return true
		}
	}
	return false
}

// peak is a position in a correlation map and its score.
type peak struct {
	x, y int
	v    float32
}

// peaks lists the local maxima of m at or above floor: positions no lower
// than any of their eight neighbours. NaN never is one.
func peaks(m Plane, floor float32) []peak {
	var out []peak
	for y := 0; y < m.H; y++ {
		for x := 0; x < m.W; x++ {
			v := m.Pix[y*m.W+x]
			if !(v >= floor) || v <= 0 {
				continue // also NaN, flat or anti-correlated: never a match
			}
			ok := true
			for dy := -1; dy <= 1 && ok; dy++ {
				yy := y + dy
				if yy < 0 || yy >= m.H {
					continue
				}
				for dx := -1; dx <= 1; dx++ {
					xx := x + dx
					if xx < 0 || xx >= m.W || (dx == 0 && dy == 0) {
						continue
					}
					if m.Pix[yy*m.W+xx] > v {
						ok = false
						break
					}
				}
			}
			if ok {
				out = append(out, peak{x, y, v})
			}
		}
	}
	return out
}

// halve averages 2×2 blocks; an odd last row or column is dropped, so
// pixel (x,y) of the result covers (2x,2y)..(2x+1,2y+1).
func halve(p Plane) Plane {
	w, h := p.W/2, p.H/2
	q := NewPlane(w, h)
	parallelRows(h, func(y0, y1 int) {
		for y := y0; y < y1; y++ {
			a := p.Pix[2*y*p.W:]
			b := p.Pix[(2*y+1)*p.W:]
			row := q.Pix[y*w : (y+1)*w]
			for x := range row {
				row[x] = 0.25 * (a[2*x] + a[2*x+1] + b[2*x] + b[2*x+1])
			}
		}
	})
	return q
}

// forEach runs do(0..n-1) on as many goroutines as there are CPUs and
// returns the first error; a cancelled ctx stops the remaining work.
func forEach(ctx context.Context, n int, do func(i int) error) error {
	workers := min(n, runtime.GOMAXPROCS(0))
	var (
		mu    sync.Mutex
		next  int
		first error
		wg    sync.WaitGroup
	)
	for range workers {
		wg.Go(func() {
			for {
				mu.Lock()
				if first != nil || next >= n {
					mu.Unlock()
					return
				}
				i := next
				next++
				mu.Unlock()
				err := ctx.Err()
				if err == nil {
					err = do(i)
				}
				if err != nil {
					mu.Lock()
					if first == nil {
						first = err
					}
					mu.Unlock()
					return
				}
			}
		})
	}
	wg.Wait()
	return first
}
