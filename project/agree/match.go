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
	w := make([]float64, len(a)*len(b))
	for i, ba := range a {
		for j, bb := range b {
			if classAware && !sameClass(aClass, i, bClass, j) {
				continue
			}
			if iou := overlapIoU(ba, bb); usable(iou, threshold) {
				w[i*len(b)+j] = iou
			}
		}
	}
	var m ImageMatch
	inA := make([]bool, len(a))
	inB := make([]bool, len(b))
	for _, p := range assignWeights(w, len(a), len(b)) {
		m.Pairs = append(m.Pairs, Pair{A: p[0], B: p[1], IoU: w[p[0]*len(b)+p[1]]})
		inA[p[0]], inB[p[1]] = true, true
	}
	for i, ok := range inA {
		if !ok {
			m.OnlyA = append(m.OnlyA, i)
		}
	}
	for j, ok := range inB {
		if !ok {
			m.OnlyB = append(m.OnlyB, j)
		}
	}
	return m
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
	return a.IoU(b)
}
