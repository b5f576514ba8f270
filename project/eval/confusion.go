package eval

import (
	"slices"
)

// Confusion counts which classes predictions took for which true classes.
// Rows are truth classes and columns predicted classes, in the order of
// Classes; row len(Classes) is "false alarm" (a prediction that matched no
// truth) and column len(Classes) is "missed" (a truth no prediction matched).
// The corner cell is always empty.
type Confusion struct {
	Classes []int64
	Counts  [][]int
	// Cells[r][c] lists the (truth Ref, prediction Ref) pairs behind
	// Counts[r][c], in matching order; the absent side is -1.
	Cells [][][][2]int64
}

// ConfusionMatrix matches predictions to truths on each image regardless of
// class: predictions by descending score (stable), each taking the free truth
// with the highest IoU at or above iou (equality counts), each truth used
// once; boxes that do not overlap never match, and iou ≤ 0 means 0.5.
// Truths and predictions of classes outside classes are left out;
// Difficult and Crowd flags are not used, since a confusion table asks what
// the detector saw, not how it is scored.
func ConfusionMatrix(truths []Truth, preds []Prediction, classes []int64, iou float64, plusOne bool) Confusion {
	if !(iou > 0) {
		iou = 0.5
	}
	n := len(classes)
	idx := make(map[int64]int, n)
	for i, c := range classes {
		if _, ok := idx[c]; !ok {
			idx[c] = i
		}
	}
	cf := Confusion{Classes: slices.Clone(classes), Counts: make([][]int, n+1), Cells: make([][][][2]int64, n+1)}
	for r := range cf.Counts {
		cf.Counts[r] = make([]int, n+1)
		cf.Cells[r] = make([][][2]int64, n+1)
	}
	add := func(r, c int, tref, pref int64) {
		cf.Counts[r][c]++
		cf.Cells[r][c] = append(cf.Cells[r][c], [2]int64{tref, pref})
	}

	type image struct{ truths, preds []int }
	images := make(map[int64]*image)
	var ids []int64
	get := func(id int64) *image {
		im := images[id]
		if im == nil {
			im = &image{}
			images[id] = im
			ids = append(ids, id)
		}
		return im
	}
	for i, t := range truths {
		if _, ok := idx[t.ClassID]; ok {
			get(t.ImageID).truths = append(get(t.ImageID).truths, i)
		}
	}
	for i, p := range preds {
		if _, ok := idx[p.ClassID]; ok {
			get(p.ImageID).preds = append(get(p.ImageID).preds, i)
		}
	}
	slices.Sort(ids)
	for _, id := range ids {
		im := images[id]
		slices.SortStableFunc(im.preds, func(a, b int) int {
			switch sa, sb := preds[a].Score, preds[b].Score; {
			case sa > sb:
				return -1
			case sa < sb:
				return 1
			}
			return 0
		})
		taken := make([]bool, len(im.truths))
		for _, p := range im.preds {
			best, bi := iou, -1
			for ti, t := range im.truths {
				if taken[ti] {
					continue
				}
				v := IoU(preds[p].Box, truths[t].Box, plusOne)
				if v < best || (bi >= 0 && v == best) {
					continue
				}
				best, bi = v, ti
			}
			pc := idx[preds[p].ClassID]
			if bi < 0 {
				add(n, pc, -1, preds[p].Ref)
				continue
			}
			taken[bi] = true
			t := truths[im.truths[bi]]
			add(idx[t.ClassID], pc, t.Ref, preds[p].Ref)
		}
		for ti, t := range im.truths {
			if !taken[ti] {
				add(idx[truths[t].ClassID], n, truths[t].Ref, -1)
			}
		}
	}
	return cf
}
