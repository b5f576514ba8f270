package agree

import "boxwright/project"

// Pair is a matched pair of boxes: indices into A's and B's boxes and their
// IoU.
type Pair struct {
	A, B int
	IoU  float64
}

// ImageMatch is how two annotators' boxes on one image correspond. Pairs are
// sorted by A; OnlyA and OnlyB, the indices of boxes left unmatched, are
// ascending.
type ImageMatch struct {
	Pairs        []Pair
	OnlyA, OnlyB []int
}

// MatchBoxes matches boxes one-to-one maximising total IoU among pairs with
// IoU >= threshold; with classAware only boxes of the same class may pair.
//
// Boxes that do not overlap never pair, whatever the threshold, and an empty
// box pairs with nothing (its IoU is 0). The class slices run parallel to the
// boxes and may be nil when classAware is false; with classAware a box
// without a class entry pairs with nothing.
func MatchBoxes(a, b []project.Box, aClass, bClass []int64, threshold float64, classAware bool) ImageMatch {
	var m matcher
	return m.match(a, b, aClass, bClass, threshold, classAware)
}

// matcher is MatchBoxes' working memory, kept from one image to the next;
// the answers it gives are its own (carved from larger arrays when chunk
// is set) and stay valid.
type matcher struct {
	w        []float64
	inA, inB []bool
	as       assigner
	pairs    arena[Pair]
	indices  arena[int]
}

// arena hands out slices of larger arrays, each capped at its length so
// that appending to one never overwrites another.
type arena[T any] struct {
	buf   []T
	chunk int // the size of a new array; 0: exactly what is asked
}

func (a *arena[T]) take(n int) []T {
	if n == 0 {
		return nil
	}
	if cap(a.buf)-len(a.buf) < n {
		a.buf = make([]T, 0, max(n, a.chunk))
	}
	l := len(a.buf)
	a.buf = a.buf[:l+n]
	return a.buf[l : l+n : l+n]
}

func bools(s []bool, n int) []bool {
	if cap(s) < n {
		return make([]bool, n)
	}
	s = s[:n]
	clear(s)
	return s
}

func (m *matcher) match(a, b []project.Box, aClass, bClass []int64, threshold float64, classAware bool) ImageMatch {
	w := floats(m.w, len(a)*len(b))
	m.w = w
	for i, ba := range a {
		row := w[i*len(b) : (i+1)*len(b)]
		for j := range b {
			bb := &b[j]
			if ba.X1 <= bb.X0 || bb.X1 <= ba.X0 || ba.Y1 <= bb.Y0 || bb.Y1 <= ba.Y0 {
				continue // overlapIoU's early answer, 0: not a pair
			}
			if classAware && !sameClass(aClass, i, bClass, j) {
				continue
			}
			if iou := overlapIoU(ba, *bb); usable(iou, threshold) {
				row[j] = iou
			}
		}
	}
	var out ImageMatch
	inA, inB := bools(m.inA, len(a)), bools(m.inB, len(b))
	m.inA, m.inB = inA, inB
	pairs := m.as.assign(w, len(a), len(b))
	out.Pairs = m.pairs.take(len(pairs))
	for k, p := range pairs {
		out.Pairs[k] = Pair{A: p[0], B: p[1], IoU: w[p[0]*len(b)+p[1]]}
		inA[p[0]], inB[p[1]] = true, true
	}
	out.OnlyA = m.indices.take(len(a) - len(pairs))
	k := 0
	for i, ok := range inA {
		if !ok {
			out.OnlyA[k] = i
			k++
		}
	}
	out.OnlyB = m.indices.take(len(b) - len(pairs))
	k = 0
	for j, ok := range inB {
		if !ok {
			out.OnlyB[k] = j
			k++
		}
	}
	return out
}

// sameClass reports whether box i of one side and box j of the other both
// have a class and it is the same.
func sameClass(ac []int64, i int, bc []int64, j int) bool {
	return i < len(ac) && j < len(bc) && ac[i] == bc[j]
}

// overlapIoU is a.IoU(b), with a cheap early answer for boxes that cannot
// overlap; most pairs on a busy image are such pairs.
func overlapIoU(a, b project.Box) float64 {
	if a.X1 <= b.X0 || b.X1 <= a.X0 || a.Y1 <= b.Y0 || b.Y1 <= a.Y0 {
		return 0
	}
	// a.IoU(b) written out, with the built-in max and min: the same as
	// math.Max and math.Min, NaN and signed zeros included (Go
	// specification, "Min and max"), without the calls.
	in := project.Box{X0: max(a.X0, b.X0), Y0: max(a.Y0, b.Y0), X1: min(a.X1, b.X1), Y1: min(a.Y1, b.Y1)}
	if in.Empty() {
		return 0
	}
	inter := area(in)
	if inter == 0 {
		return 0
	}
	return inter / (area(a) + area(b) - inter)
}

// area is b.Area() with the built-in max.
func area(b project.Box) float64 { return max(0, b.X1-b.X0) * max(0, b.Y1-b.Y0) }
