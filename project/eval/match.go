package eval

import (
	"runtime"
	"sync"

	"boxwright/project"
)

// Prediction outcomes at one threshold.
const (
	outFP      int8 = iota // counted, not matched
	outTP                  // counted, matched
	outIgnored             // not counted
)

// cocoMaxIoU caps a COCO threshold: the COCO evaluation tool matches at
// min(t, 1−1e-10), so a threshold of 1 accepts IoU that rounding left just
// below 1.
const cocoMaxIoU = 1 - 1e-10

// group is the truths and predictions of one class on one image: ranges
// of the group-ordered truths (COCO: not-ignored truths first, each part in
// input order) and predictions (in rank order, cut at the COCO cap).
type group struct {
	t0, t1, p0, p1 int32
}

// Three orders of the predictions serve the stages, each read in sequence
// where it is used: rank order (R, all predictions by score), class order
// (C, class after class, each in rank order) and group order (G, group
// after group). Data moves between them by scattering (reading one order
// in sequence, writing the other at random), which costs far less than
// reading the 64-byte predictions at random.

// groupByImageClass gives every class a dense index (in ascending ID
// order), lays the predictions out in class and group order and the truths
// in group order, with stable counting sorts, and finds the groups. Under
// COCO it drops the predictions beyond the cap of their group.
func (e *evaluation) groupByImageClass() {
	nt, np := len(e.truths), len(e.preds)
	e.truthClass, e.predClass = make([]int32, nt), make([]int32, np)
	truthImg, predImg := make([]int32, nt), make([]int32, np)

	// Dense class indices, first in order of appearance, then renumbered
	// by ascending ID; dense image indices in order of appearance (group
	// order does not change any result).
	classOf := make(map[int64]int32)
	imageOf := make(map[int64]int32)
	var classes []int64
	nImg := int32(0)
	dense := func(c, img int64) (int32, int32) {
		ci, ok := classOf[c]
		if !ok {
			ci = int32(len(classes))
			classOf[c] = ci
			classes = append(classes, c)
		}
		ii, ok := imageOf[img]
		if !ok {
			ii = nImg
			imageOf[img] = ii
			nImg++
		}
		return ci, ii
	}
	for i := range e.truths {
		t := &e.truths[i]
		e.truthClass[i], truthImg[i] = dense(t.ClassID, t.ImageID)
	}
	for i := range e.preds {
		p := &e.preds[i]
		e.predClass[i], predImg[i] = dense(p.ClassID, p.ImageID)
	}
	nc := len(classes)
	byID := make([]int32, nc)
	for i := range byID {
		byID[i] = int32(i)
	}
	sortInt32By(byID, classes)
	renum := make([]int32, nc)
	e.classIDs = make([]int64, nc)
	for k, old := range byID {
		renum[old] = int32(k)
		e.classIDs[k] = classes[old]
	}
	for i, c := range e.truthClass {
		e.truthClass[i] = renum[c]
	}
	for i, c := range e.predClass {
		e.predClass[i] = renum[c]
	}

	// Counted truths per class.
	e.classTruths = make([]int, nc)
	for i, c := range e.truthClass {
		if !e.truthIg[i] {
			e.classTruths[c]++
		}
	}

	// Class order (all predictions: Predictions counts them, dropped ones
	// are ignored).
	bk := make([]int32, np)
	for r, i := range e.order {
		bk[r] = e.predClass[i]
	}
	cOfR, classOff := countingDest(bk, nc)
	e.classOff = classOff
	e.classRanked, e.classScore = make([]int32, np), make([]float64, np)
	for r, c := range cOfR {
		e.classRanked[c] = e.order[r]
		e.classScore[c] = e.rankScore[r]
	}

	// Group order: class after class as in class order, within a class by
	// image (a stable sort by image, then one by class), so a class's
	// outcomes, written at its class positions while matching, stay within
	// its own part of the outcome table.
	clsOfC := make([]int32, np)
	for k := range nc {
		for c := e.classOff[k]; c < e.classOff[k+1]; c++ {
			clsOfC[c] = int32(k)
		}
	}
	imgOfC := make([]int32, np)
	for c, i := range e.classRanked {
		imgOfC[c] = predImg[i]
	}
	byImage, _ := countingDest(imgOfC, int(nImg))
	for c, j := range byImage {
		bk[j] = clsOfC[c]
	}
	gOfImage, _ := countingDest(bk, nc)
	e.gPreds, e.gClassPos = make([]int32, np), make([]int32, np)
	predKey := make([]int64, np)
	for c, j := range byImage {
		g := gOfImage[j]
		e.gPreds[g], e.gClassPos[g] = e.classRanked[c], int32(c)
		predKey[g] = int64(clsOfC[c])<<32 | int64(imgOfC[c])
	}
	gOfInput := bk // reused: bk is no longer needed
	for g, i := range e.gPreds {
		gOfInput[i] = int32(g)
	}
	e.gBox = make([]project.Box, np)
	for i := range e.preds {
		e.gBox[gOfInput[i]] = e.preds[i].Box
	}

	// Truths: not ignored first (COCO), then by image, then by class, each
	// pass stable, so within a group the input order is kept.
	tIdx := make([]int32, nt)
	for i := range tIdx {
		tIdx[i] = int32(i)
	}
	if e.coco {
		k := 0
		for i := range tIdx {
			if !e.truthIg[i] {
				tIdx[k] = int32(i)
				k++
			}
		}
		for i := range e.truthIg {
			if e.truthIg[i] {
				tIdx[k] = int32(i)
				k++
			}
		}
	}
	tIdx = countingSort(tIdx, truthImg, int(nImg))
	e.gTruths = countingSort(tIdx, e.truthClass, nc)
	truthKey := make([]int64, nt)
	e.gTBox, e.gTCrowd, e.gTIg = make([]project.Box, nt), make([]bool, nt), make([]bool, nt)
	for g, t := range e.gTruths {
		truthKey[g] = int64(e.truthClass[t])<<32 | int64(truthImg[t])
		e.gTBox[g], e.gTCrowd[g], e.gTIg[g] = e.truths[t].Box, e.truths[t].Crowd, e.truthIg[t]
	}

	// Runs of equal (class, image) in both lists make the groups.
	ti, pi := 0, 0
	for ti < nt || pi < np {
		var k int64
		switch {
		case ti >= nt:
			k = predKey[pi]
		case pi >= np:
			k = truthKey[ti]
		default:
			k = min(truthKey[ti], predKey[pi])
		}
		g := group{t0: int32(ti), p0: int32(pi)}
		for ti < nt && truthKey[ti] == k {
			ti++
		}
		for pi < np && predKey[pi] == k {
			pi++
		}
		g.t1, g.p1 = int32(ti), int32(pi)
		if e.maxDet > 0 && int(g.p1-g.p0) > e.maxDet {
			for j := int(g.p0) + e.maxDet; j < int(g.p1); j++ {
				e.dropped = append(e.dropped, int32(j))
			}
			g.p1 = g.p0 + int32(e.maxDet)
		}
		e.groups = append(e.groups, g)
	}
}

// sortInt32By sorts idx by keys[idx] ascending (few values: the classes).
func sortInt32By(idx []int32, keys []int64) {
	for i := 1; i < len(idx); i++ {
		for j := i; j > 0 && keys[idx[j]] < keys[idx[j-1]]; j-- {
			idx[j], idx[j-1] = idx[j-1], idx[j]
		}
	}
}

// countingDest is a stable counting sort by bucket (values below n): it
// returns each source's position in bucket order and the bucket
// boundaries (length n+1).
func countingDest(bucket []int32, n int) (dest, off []int32) {
	off = make([]int32, n+1)
	for _, b := range bucket {
		off[b+1]++
	}
	for b := 1; b <= n; b++ {
		off[b] += off[b-1]
	}
	pos := make([]int32, n)
	copy(pos, off[:n])
	dest = make([]int32, len(bucket))
	for s, b := range bucket {
		dest[s] = pos[b]
		pos[b]++
	}
	return dest, off
}

// countingSort returns in stably sorted by bucket[v] (values below n).
func countingSort(in []int32, bucket []int32, n int) []int32 {
	bk := make([]int32, len(in))
	for s, v := range in {
		bk[s] = bucket[v]
	}
	dest, _ := countingDest(bk, n)
	out := make([]int32, len(in))
	for s, v := range in {
		out[dest[s]] = v
	}
	return out
}

// outcomes holds the prediction outcomes at every distinct threshold the
// figures use.
type outcomes struct {
	thr   []float64 // distinct thresholds, in order of first use
	o     []int8    // the prediction at class position c, threshold u: o[c*len(thr)+u]
	first int       // index of the first threshold: TP/FP, curve, matches
	main  []int     // the thresholds AP averages over
	at50  int
	at75  int
	coco  []int   // COCOThresholds
	match []int32 // per group position, the truth matched at first, or -1
}

// newOutcomes lists the distinct thresholds and where each use finds its
// outcomes.
func newOutcomes(first float64, main []float64, n int) outcomes {
	var outs outcomes
	index := func(t float64) int {
		for i, u := range outs.thr {
			if u == t {
				return i
			}
		}
		outs.thr = append(outs.thr, t)
		return len(outs.thr) - 1
	}
	outs.first = index(first)
	for _, t := range main {
		outs.main = append(outs.main, index(t))
	}
	outs.at50, outs.at75 = index(0.5), index(0.75)
	for _, t := range COCOThresholds() {
		outs.coco = append(outs.coco, index(t))
	}
	outs.o = make([]int8, len(outs.thr)*n)
	outs.match = make([]int32, n)
	for i := range outs.match {
		outs.match[i] = -1
	}
	return outs
}

// matchAll matches every group at every threshold, groups shared out over
// GOMAXPROCS goroutines; every prediction belongs to one group, so the
// goroutines write disjoint entries.
func (e *evaluation) matchAll(first float64, main []float64) outcomes {
	outs := newOutcomes(first, main, len(e.preds))
	nu := len(outs.thr)
	for _, g := range e.dropped {
		c := int(e.gClassPos[g])
		for u := range nu {
			outs.o[c*nu+u] = outIgnored
		}
	}
	thr := make([]float64, nu)
	for i, t := range outs.thr {
		thr[i] = t
		if e.coco {
			thr[i] = min(t, cocoMaxIoU)
		}
	}
	workers := workersFor(len(e.groups), len(e.preds))
	ms := make([]matcher, workers)
	parallel(len(e.groups), workers, func(w, lo, hi int) {
		m := &ms[w]
		for _, g := range e.groups[lo:hi] {
			if e.coco {
				m.matchCOCO(e, g, thr, &outs)
			} else {
				m.matchVOC(e, g, thr, &outs)
			}
		}
	})
	return outs
}

// workersFor is how many goroutines parallel uses for n parts of work of
// about cost predictions: up to GOMAXPROCS when the work makes it pay.
func workersFor(n, cost int) int {
	if cost < 20000 || n < 2 {
		return 1
	}
	return min(runtime.GOMAXPROCS(0), n)
}

// parallel runs work over [0,n) in contiguous parts on the given number of
// goroutines; work learns which goroutine (0 to workers−1) runs it, so
// each can keep its own scratch.
func parallel(n, workers int, work func(worker, lo, hi int)) {
	if workers <= 1 || n < 2 {
		work(0, 0, n)
		return
	}
	// Several parts per goroutine even out uneven parts.
	parts := min(n, workers*8)
	var wg sync.WaitGroup
	next := make(chan int, parts)
	for i := range parts {
		next <- i
	}
	close(next)
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				work(w, i*n/parts, (i+1)*n/parts)
			}
		}()
	}
	wg.Wait()
}

// matcher holds one goroutine's scratch buffers.
type matcher struct {
	ious        []float64
	taken       []bool
	best        []int32
	bestIoU     []float64
	predInRange []bool
}

// grow returns s with length n, reusing its storage.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// overlaps fills m.ious, one row of the group's truths per prediction; a
// crowd truth's overlap (COCO) is the share of the prediction inside it.
func (m *matcher) overlaps(e *evaluation, g group) []float64 {
	nt := int(g.t1 - g.t0)
	tboxes := e.gTBox[g.t0:g.t1]
	m.ious = grow(m.ious, int(g.p1-g.p0)*nt)
	plusOne := e.opt.PlusOne
	for pi, pb := range e.gBox[g.p0:g.p1] {
		pa := area(pb, plusOne)
		row := m.ious[pi*nt : (pi+1)*nt]
		for ti, tb := range tboxes {
			inter := intersection(pb, tb, plusOne)
			switch {
			case inter == 0:
				row[ti] = 0
			case e.coco && e.gTCrowd[int(g.t0)+ti]:
				row[ti] = inter / pa
			default:
				row[ti] = inter / (pa + area(tb, plusOne) - inter)
			}
		}
	}
	return m.ious
}

// matchCOCO labels the group's predictions at every threshold: each, in
// score order, takes the free (or crowd) truth with the best IoU at or
// above the threshold, the last of equal ones, counted truths before
// ignored ones (they are sorted first).
func (m *matcher) matchCOCO(e *evaluation, g group, thr []float64, outs *outcomes) {
	nt, np, nu := int(g.t1-g.t0), int(g.p1-g.p0), len(thr)
	cpos := e.gClassPos[g.p0:g.p1]
	m.predInRange = grow(m.predInRange, np)
	for pi, pb := range e.gBox[g.p0:g.p1] {
		m.predInRange[pi] = e.opt.AreaRange.contains(area(pb, e.opt.PlusOne))
	}
	if nt == 0 {
		for pi, c := range cpos {
			o := outFP
			if !m.predInRange[pi] {
				o = outIgnored
			}
			for u := range nu {
				outs.o[int(c)*nu+u] = o
			}
		}
		return
	}
	ious := m.overlaps(e, g)
	crowd, ig := e.gTCrowd[g.t0:g.t1], e.gTIg[g.t0:g.t1]
	m.taken = grow(m.taken, nt)
	taken := m.taken
	for u, th := range thr {
		clear(taken)
		for pi, c := range cpos {
			o := &outs.o[int(c)*nu+u]
			row := ious[pi*nt : (pi+1)*nt]
			best, bi := th, -1
			for ti, v := range row {
				if taken[ti] && !crowd[ti] {
					continue
				}
				// Once a counted truth is found, ignored ones (sorted last)
				// cannot replace it.
				if bi >= 0 && !ig[bi] && ig[ti] {
					break
				}
				if v < best {
					continue
				}
				best, bi = v, ti
			}
			if bi < 0 {
				if m.predInRange[pi] {
					*o = outFP
				} else {
					*o = outIgnored
				}
				continue
			}
			taken[bi] = true
			if ig[bi] {
				*o = outIgnored
			} else {
				*o = outTP
			}
			if u == outs.first {
				outs.match[int(g.p0)+pi] = e.gTruths[int(g.t0)+bi]
			}
		}
	}
}

// matchVOC labels the group's predictions at every threshold: each, in
// score order, takes the truth with the highest IoU (the first of equal
// ones), taken or not.
func (m *matcher) matchVOC(e *evaluation, g group, thr []float64, outs *outcomes) {
	nt, np, nu := int(g.t1-g.t0), int(g.p1-g.p0), len(thr)
	cpos := e.gClassPos[g.p0:g.p1]
	if nt == 0 {
		for _, c := range cpos {
			for u := range nu {
				outs.o[int(c)*nu+u] = outFP
			}
		}
		return
	}
	ious := m.overlaps(e, g)
	ig := e.gTIg[g.t0:g.t1]
	m.best, m.bestIoU = grow(m.best, np), grow(m.bestIoU, np)
	for pi := range np {
		best, bi := -1.0, int32(-1)
		for ti, v := range ious[pi*nt : (pi+1)*nt] {
			if v > best {
				best, bi = v, int32(ti)
			}
		}
		m.best[pi], m.bestIoU[pi] = bi, best
	}
	m.taken = grow(m.taken, nt)
	taken := m.taken
	for u, th := range thr {
		clear(taken)
		for pi, c := range cpos {
			o := &outs.o[int(c)*nu+u]
			bi := m.best[pi]
			if m.bestIoU[pi] < th {
				*o = outFP
				continue
			}
			switch {
			case ig[bi]:
				*o = outIgnored
			case taken[bi]:
				*o = outFP // duplicate
				continue
			default:
				*o = outTP
				taken[bi] = true
			}
			if u == outs.first {
				outs.match[int(g.p0)+pi] = e.gTruths[int(g.t0)+int(bi)]
			}
		}
	}
}
