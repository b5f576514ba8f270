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
	"strconv"
	"strings"
	"sync"

	"boxwright/project"
	"boxwright/suggest"
)

// Options tune Search. Zero fields take the defaults given with each.
type Options struct {
	Threshold  float64   // peaks at or above it are matches; 0 means 0.6
	Scales     []float64 // template scales; nil means DefaultScales()
	Rotations  bool      // also the 90°, 180° and 270° turns of each exemplar
	Feature    Feature   // what is correlated: gray, gradient or colour planes
	Vote       string    // "max" (default, also "") or "mean" over exemplars
	NMS        float64   // IoU above which overlapping peaks are suppressed; 0 means 0.3
	MaxResults int       // matches kept per image; 0 means 200
}

// Defaults of Options.
const (
	DefaultThreshold  = 0.6
	DefaultNMS        = 0.3
	DefaultMaxResults = 200
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
	// minTemplateSide keeps templates large enough for a meaningful
	// correlation.
	minTemplateSide = 3
	// maxClimb bounds the moves of a refinement window whose best position
	// lies on its edge.
	maxClimb = 8
)

// DefaultScales are 0.8 to 1.25 in five geometric steps (…, 1, …): a copy a
// fifth smaller or a quarter larger than the exemplar is still found.
func DefaultScales() []float64 { return geometric(0.8, 1.25, 5) }

// geometric returns n steps from lo to hi with a constant ratio.
func geometric(lo, hi float64, n int) []float64 {
	if n == 1 {
		return []float64{lo}
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	out[0], out[n-1] = lo, hi
	return out
}

// ParseScales reads a list of scales: "lo:hi:n" (n geometric steps from lo
// to hi), a comma-separated list ("0.9,1,1.1") or a single number.
func ParseScales(s string) ([]float64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return nil, fmt.Errorf("scales %q: empty", s)
	}
	num := func(what, v string) (float64, error) {
		f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return 0, fmt.Errorf("scales %q: %s %q is not a number", s, what, v)
		}
		if f <= 0 {
			return 0, fmt.Errorf("scales %q: %s %g is not positive", s, what, f)
		}
		return f, nil
	}
	if parts := strings.Split(s, ":"); len(parts) > 1 {
		if len(parts) != 3 {
			return nil, fmt.Errorf("scales %q: want lo:hi:steps", s)
		}
		lo, err := num("lo", parts[0])
		if err != nil {
			return nil, err
		}
		hi, err := num("hi", parts[1])
		if err != nil {
			return nil, err
		}
		n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
		if err != nil || n < 1 || n > 100 {
			return nil, fmt.Errorf("scales %q: steps %q is not a whole number from 1 to 100", s, parts[2])
		}
		if hi < lo {
			return nil, fmt.Errorf("scales %q: lo %g is above hi %g", s, lo, hi)
		}
		if n == 1 && lo != hi {
			return nil, fmt.Errorf("scales %q: one step needs lo equal to hi", s)
		}
		return geometric(lo, hi, n), nil
	}
	var out []float64
	for i, v := range strings.Split(s, ",") {
		f, err := num(fmt.Sprintf("scale %d", i+1), v)
		if err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	return out, nil
}

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

// withDefaults fills zero options and checks the rest.
func (o Options) withDefaults() (Options, error) {
	if o.Threshold == 0 {
		o.Threshold = DefaultThreshold
	}
	if !(o.Threshold > 0 && o.Threshold <= 1) {
		return o, fmt.Errorf("exemplar search: threshold %g is not in (0,1]", o.Threshold)
	}
	if o.Scales == nil {
		o.Scales = DefaultScales()
	}
	if len(o.Scales) == 0 {
		return o, errors.New("exemplar search: no scales")
	}
	for _, s := range o.Scales {
		if !(s > 0) || math.IsInf(s, 0) {
			return o, fmt.Errorf("exemplar search: scale %g is not a positive number", s)
		}
	}
	switch o.Vote {
	case "":
		o.Vote = "max"
	case "max", "mean":
	default:
		return o, fmt.Errorf("exemplar search: vote %q is neither \"max\" nor \"mean\"", o.Vote)
	}
	if o.NMS == 0 {
		o.NMS = DefaultNMS
	}
	if !(o.NMS > 0 && o.NMS <= 1) {
		return o, fmt.Errorf("exemplar search: NMS IoU %g is not in (0,1]", o.NMS)
	}
	if o.MaxResults == 0 {
		o.MaxResults = DefaultMaxResults
	}
	if o.MaxResults < 0 {
		return o, fmt.Errorf("exemplar search: max results %d is negative", o.MaxResults)
	}
	return o, nil
}

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
func (t *template) score(ps []Plane, l int) (Plane, error) {
	var sum Plane
	for i, v := range t.at(l) {
		m, err := NCCPlanes(ps, v)
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
	templates []*template
	minSide   int // shortest side of any template
}

// newTemplateSet cuts the exemplars from an image's planes and builds every scale and
// turn. Options must have their defaults filled.
func newTemplateSet(planes []Plane, exemplars []project.Box, opt Options) (*templateSet, error) {
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
		if r.Dx() < minTemplateSide || r.Dy() < minTemplateSide {
			return nil, fmt.Errorf("exemplar %d: box %v has less than %d×%d pixels inside the %d×%d image", i, b, minTemplateSide, minTemplateSide, iw, ih)
		}
		crops[i] = make([]Plane, len(planes))
		for c, p := range planes {
			crops[i][c] = Crop(p, r)
		}
	}
	turns := []int{0}
	if opt.Rotations {
		turns = []int{0, 1, 2, 3}
	}
	set := &templateSet{opt: opt, minSide: math.MaxInt}
	for _, s := range opt.Scales {
		type size struct{ w, h int }
		groups := map[size]int{} // size → index into set.templates, for mean voting
		for e, chans := range crops {
			w := max(minTemplateSide, int(math.Round(float64(chans[0].W)*s)))
			h := max(minTemplateSide, int(math.Round(float64(chans[0].H)*s)))
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
	set, err := newTemplateSet(planes, exemplars, opt)
	if err != nil {
		return nil, err
	}
	return set.search(ctx, planes, exemplars, level)
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

// search correlates the set with the image planes; matches overlapping an
// exclude box by more than half are dropped. level < 0 chooses the coarse
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
			found[i], err = s.exhaustive(t, planes)
		} else {
			found[i], err = s.coarseToFine(ctx, t, pyramid, level)
		}
		return err
	})
	if err != nil {
		return nil, err
	}
	return s.finish(slices.Concat(found...), exclude), nil
}

// exhaustive returns the local maxima of the full-resolution map at or
// above the threshold.
func (s *templateSet) exhaustive(t *template, planes []Plane) ([]Match, error) {
	m, err := t.score(planes, 0)
	if err != nil {
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
		return s.exhaustive(t, pyramid[0])
	}
	m, err := t.score(coarse, level)
	if err != nil {
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
	// a few times MaxResults cannot survive suppression anyway.
	keep = min(keep, coarseTopK+4*s.opt.MaxResults)
	f := 1 << level
	full := pyramid[0]
	var out []Match
	for _, c := range cands[:keep] {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		x0, y0 := c.x*f-2*f, c.y*f-2*f
		p, err := t.refine(full, x0, y0, x0+5*f-1, y0+5*f-1)
		if err != nil {
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
func (t *template) refine(planes []Plane, x0, y0, x1, y1 int) (peak, error) {
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
		m, err := t.score(win, 0)
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
// keeps MaxResults.
func (s *templateSet) finish(ms []Match, exclude []project.Box) []Match {
	// A total order, so that ties do not depend on goroutine timing.
	slices.SortFunc(ms, func(a, b Match) int {
		return cmp.Or(cmp.Compare(b.Score, a.Score), cmp.Compare(a.Box.Y0, b.Box.Y0), cmp.Compare(a.Box.X0, b.Box.X0),
			cmp.Compare(a.Scale, b.Scale), cmp.Compare(a.Rotation, b.Rotation), cmp.Compare(a.Exemplar, b.Exemplar))
	})
	boxes := make([]project.Box, len(ms))
	scores := make([]float64, len(ms))
	for i, m := range ms {
		boxes[i], scores[i] = m.Box, m.Score
	}
	var out []Match
	for _, i := range suggest.NMS(boxes, scores, s.opt.NMS) {
		if overlapsAny(ms[i].Box, exclude, exemplarIoU) {
			continue
		}
		out = append(out, ms[i])
		if len(out) == s.opt.MaxResults {
			break
		}
	}
	return out
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
	for y := range h {
		a := p.Pix[2*y*p.W:]
		b := p.Pix[(2*y+1)*p.W:]
		row := q.Pix[y*w : (y+1)*w]
		for x := range row {
			row[x] = 0.25 * (a[2*x] + a[2*x+1] + b[2*x] + b[2*x+1])
		}
	}
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
