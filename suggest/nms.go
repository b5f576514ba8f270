package suggest

import (
	"cmp"
	"slices"

	"boxwright/project"
)

// Filter holds the options for turning raw proposals into stored
// suggestions.
type Filter struct {
	MinScore float64 // proposals scoring below it are dropped
	NMS      float64 // IoU threshold of non-maximum suppression; 0 = off
}

// Apply drops proposals below MinScore (and those without a score, NaN)
// and, with NMS > 0, runs greedy non-maximum suppression per image and
// class: keep the highest score, drop every remaining box whose IoU with a
// kept one is > NMS (strictly greater, as torchvision does), ties in score
// broken by input order. Proposals of an unknown class (ClassID 0) are
// grouped by ClassName. It returns the kept proposals in input order and
// how many were dropped by each rule.
func (f Filter) Apply(ps []Proposal) (kept []Proposal, belowScore, suppressed int) {
	type group struct {
		image, class int64
		name         string
	}
	keep := make([]bool, len(ps))
	groups := map[group][]int{}
	var order []group // first-seen order, so the result does not depend on map order
	for i, p := range ps {
		if !(p.Score >= f.MinScore) {
			belowScore++
			continue
		}
		keep[i] = true
		if f.NMS <= 0 {
			continue
		}
		g := group{p.ImageID, p.ClassID, ""}
		if p.ClassID == 0 {
			g.name = p.ClassName
		}
		if _, ok := groups[g]; !ok {
			order = append(order, g)
		}
		groups[g] = append(groups[g], i)
	}
	var boxes []project.Box
	var scores []float64
	for _, g := range order {
		idx := groups[g]
		boxes, scores = boxes[:0], scores[:0]
		for _, i := range idx {
			boxes = append(boxes, ps[i].Box)
			scores = append(scores, ps[i].Score)
		}
		survivors := make([]bool, len(idx))
		for _, k := range NMS(boxes, scores, f.NMS) {
			survivors[k] = true
		}
		for k, i := range idx {
			if !survivors[k] {
				keep[i] = false
				suppressed++
			}
		}
	}
	kept = make([]Proposal, 0, len(ps)-belowScore-suppressed)
	for i, p := range ps {
		if keep[i] {
			kept = append(kept, p)
		}
	}
	return kept, belowScore, suppressed
}

// NMS returns the indices of the boxes kept by greedy non-maximum
// suppression (all one class), highest score first: each box in turn, by
// falling score with ties in input order, is kept unless its IoU with a box
// already kept is greater than iou. A NaN score ranks below every other.
// boxes and scores must have the same length.
func NMS(boxes []project.Box, scores []float64, iou float64) []int {
	if len(boxes) != len(scores) {
		panic("suggest.NMS: boxes and scores differ in length")
	}
	order := make([]int, len(boxes))
	for i := range order {
		order[i] = i
	}
	// cmp.Compare puts NaN below every number.
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(scores[b], scores[a]) })
	var kept []int
	for _, i := range order {
		ok := true
		for _, k := range kept {
			if boxes[i].IoU(boxes[k]) > iou {
				ok = false
				break
			}
		}
		if ok {
			kept = append(kept, i)
		}
	}
	return kept
}

// NMSByClass is NMS within each class: the indices of the boxes kept,
// class by class in ascending order, each class's best first. An iou of 0
// or less keeps every box, in input order within its class.
func NMSByClass(boxes []project.Box, scores []float64, classes []int, iou float64) []int {
	byClass := map[int][]int{}
	for i, c := range classes {
		byClass[c] = append(byClass[c], i)
	}
	order := make([]int, 0, len(byClass))
	for c := range byClass {
		order = append(order, c)
	}
	slices.Sort(order)
	var out []int
	for _, c := range order {
		idx := byClass[c]
		if iou <= 0 {
			out = append(out, idx...)
			continue
		}
		bs := make([]project.Box, len(idx))
		ss := make([]float64, len(idx))
		for k, i := range idx {
			bs[k], ss[k] = boxes[i], scores[i]
		}
		for _, k := range NMS(bs, ss, iou) {
			out = append(out, idx[k])
		}
	}
	return out
}
