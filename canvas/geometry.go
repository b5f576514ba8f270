package canvas

import (
	"math"
	"sort"

	"boxwright/project"
)

// Handle is a part of a box that a drag can take hold of.
type Handle int

// The eight resize handles, clockwise from the top-left corner, and the
// inside of the box (a move).
const (
	HandleNone Handle = iota
	HandleTopLeft
	HandleTop
	HandleTopRight
	HandleRight
	HandleBottomRight
	HandleBottom
	HandleBottomLeft
	HandleLeft
	HandleInside
)

// Handles are the eight resize handles in drawing order.
var Handles = [8]Handle{HandleTopLeft, HandleTop, HandleTopRight, HandleRight, HandleBottomRight, HandleBottom, HandleBottomLeft, HandleLeft}

// edges says which edges a handle moves: -1 the low edge (X0 or Y0), +1
// the high edge, 0 neither.
func (h Handle) edges() (ex, ey int) {
	switch h {
	case HandleTopLeft:
		return -1, -1
	case HandleTop:
		return 0, -1
	case HandleTopRight:
		return 1, -1
	case HandleRight:
		return 1, 0
	case HandleBottomRight:
		return 1, 1
	case HandleBottom:
		return 0, 1
	case HandleBottomLeft:
		return -1, 1
	case HandleLeft:
		return -1, 0
	}
	return 0, 0
}

// HandlePoint is where handle h of box b sits (in b's coordinates).
func HandlePoint(b project.Box, h Handle) (x, y float64) {
	ex, ey := h.edges()
	pick := func(e int, lo, hi float64) float64 {
		switch e {
		case -1:
			return lo
		case 1:
			return hi
		}
		return (lo + hi) / 2
	}
	return pick(ex, b.X0, b.X1), pick(ey, b.Y0, b.Y1)
}

// PickHandle says which part of a box on screen the point (sx, sy) takes
// hold of: a handle when it is within radius of one (corners win over edge
// middles when they overlap on a small box), the inside when it is in the
// box, HandleNone otherwise.
func PickHandle(screen project.Box, sx, sy, radius float64) Handle {
	best, bestD := HandleNone, math.Inf(1)
	for _, h := range Handles {
		hx, hy := HandlePoint(screen, h)
		d := math.Max(math.Abs(sx-hx), math.Abs(sy-hy))
		corner := h == HandleTopLeft || h == HandleTopRight || h == HandleBottomLeft || h == HandleBottomRight
		if corner {
			d -= 1e-9 // ties go to corners
		}
		if d <= radius && d < bestD {
			best, bestD = h, d
		}
	}
	if best != HandleNone {
		return best
	}
	if screen.Contains(sx, sy) {
		return HandleInside
	}
	return HandleNone
}

// HitTest lists the indices of the boxes that contain the image point
// (x, y), smallest area first (ties: later boxes, drawn on top, first), so
// a click on nested boxes picks the innermost.
func HitTest(boxes []project.Box, x, y float64) []int {
	var hits []int
	for i, b := range boxes {
		if b.Contains(x, y) {
			hits = append(hits, i)
		}
	}
	sort.SliceStable(hits, func(a, b int) bool {
		aa, ab := boxes[hits[a]].Area(), boxes[hits[b]].Area()
		if aa != ab {
			return aa < ab
		}
		return hits[a] > hits[b]
	})
	return hits
}

// Bounds are the limits an edited box must respect: the image size and
// the smallest width and height a box may have.
type Bounds struct {
	W, H    float64 // image size as displayed
	MinSide float64 // smallest width and height, in image pixels
	Snap    bool    // round edges to whole image pixels
}

// DefaultMinSide is the smallest box a drag creates: a click that moves
// the mouse by a pixel does not leave a speck behind. Common practice.
const DefaultMinSide = 2

func (bd Bounds) snap(v float64) float64 {
	if bd.Snap {
		return math.Round(v)
	}
	return v
}

func clampF(v, lo, hi float64) float64 { return math.Min(hi, math.Max(lo, v)) }

// Span is the box with corners at the two image points (in any order),
// snapped and clamped to the image. ok is false when it is smaller than
// MinSide in either direction: a click, not a drag.
func (bd Bounds) Span(ax, ay, bx, by float64) (b project.Box, ok bool) {
	x0, x1 := math.Min(ax, bx), math.Max(ax, bx)
	y0, y1 := math.Min(ay, by), math.Max(ay, by)
	b = project.Box{
		X0: bd.snap(clampF(x0, 0, bd.W)), Y0: bd.snap(clampF(y0, 0, bd.H)),
		X1: bd.snap(clampF(x1, 0, bd.W)), Y1: bd.snap(clampF(y1, 0, bd.H)),
	}
	return b, !b.Empty() && b.Width() >= bd.MinSide && b.Height() >= bd.MinSide
}

// Move shifts b by (dx, dy) image pixels, stopping at the image edges so
// the box keeps its size.
func (bd Bounds) Move(b project.Box, dx, dy float64) project.Box {
	w, h := math.Min(b.Width(), bd.W), math.Min(b.Height(), bd.H)
	// Snap first, clamp last: a box of fractional size snapped at the far
	// edge must not poke past it.
	x0 := clampF(bd.snap(b.X0+dx), 0, math.Max(0, bd.W-w))
	y0 := clampF(bd.snap(b.Y0+dy), 0, math.Max(0, bd.H-h))
	return project.Box{X0: x0, Y0: y0, X1: x0 + w, Y1: y0 + h}
}

// Resize moves the edges that handle h holds by (dx, dy) image pixels. An
// edge stops at the image border and at MinSide from the opposite edge,
// so a box never flips inside out or shrinks to nothing.
func (bd Bounds) Resize(b project.Box, h Handle, dx, dy float64) project.Box {
	min := math.Max(bd.MinSide, 0)
	ex, ey := h.edges()
	// Snap first, clamp last, as in Move: the limits always hold.
	switch ex {
	case -1:
		b.X0 = clampF(bd.snap(b.X0+dx), 0, b.X1-min)
	case 1:
		b.X1 = clampF(bd.snap(b.X1+dx), b.X0+min, bd.W)
	}
	switch ey {
	case -1:
		b.Y0 = clampF(bd.snap(b.Y0+dy), 0, b.Y1-min)
	case 1:
		b.Y1 = clampF(bd.snap(b.Y1+dy), b.Y0+min, bd.H)
	}
	return b
}

// Fit clamps a box to the image and to MinSide (moving it back inside
// when it is partly outside); used for pasted and duplicated boxes.
func (bd Bounds) Fit(b project.Box) project.Box {
	w := clampF(b.Width(), math.Min(bd.MinSide, bd.W), bd.W)
	h := clampF(b.Height(), math.Min(bd.MinSide, bd.H), bd.H)
	x0 := clampF(b.X0, 0, bd.W-w)
	y0 := clampF(b.Y0, 0, bd.H-h)
	return project.Box{X0: x0, Y0: y0, X1: x0 + w, Y1: y0 + h}
}
