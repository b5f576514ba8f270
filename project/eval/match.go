package eval

import (
	"runtime"
	"sync"
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

// group is the truths and predictions of one class on one image: ranges of
// evaluation.gTruths (COCO: not-ignored truths first, each part in input
// order) and evaluation.gPreds (in rank order, cut at the COCO cap).
type group struct {
	t0, t1, p0, p1 int32
}

// groupByImageClass gives every class a dense index (in ascending ID
// order), lists each class's predictions in rank order, and sorts truths
// and predictions into groups of one image and class with counting sorts.
// Under COCO it drops the predictions beyond the cap of their group.
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
	for i, t := range e.truths {
		e.truthClass[i], truthImg[i] = dense(t.ClassID, t.ImageID)
	}
	for i, p := range e.preds {
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

	// Each class's predictions in rank order (all of them: Predictions
	// counts them, dropped ones are ignored).
	e.classOff = make([]int32, nc+1)
	e.classRanked = countingSort(e.order, e.predClass, nc, e.classOff)

	// Truths: not ignored first (COCO), then by class, then by image, each
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
	tIdx = countingSort(tIdx, e.truthClass, nc, nil)
	e.gTruths = countingSort(tIdx, truthImg, int(nImg), nil)
	// Predictions: by class (rank order kept), then by image.
	e.gPreds = countingSort(e.classRanked, predImg, int(nImg), nil)

	// Runs of equal (image, class) in both lists make the groups.
	ti, pi := 0, 0
	key := func(img, class int32) int64 { return int64(img)<<32 | int64(class) }
	for ti < nt || pi < np {
		var k int64
		switch {
		case ti >= nt:
			p := e.gPreds[pi]
			k = key(predImg[p], e.predClass[p])
		case pi >= np:
			t := e.gTruths[ti]
			k = key(truthImg[t], e.truthClass[t])
		default:
			t, p := e.gTruths[ti], e.gPreds[pi]
			k = min(key(truthImg[t], e.truthClass[t]), key(predImg[p], e.predClass[p]))
		}
		g := group{t0: int32(ti), p0: int32(pi)}
		for ti < nt && key(truthImg[e.gTruths[ti]], e.truthClass[e.gTruths[ti]]) == k {
			ti++
		}
		for pi < np && key(predImg[e.gPreds[pi]], e.predClass[e.gPreds[pi]]) == k {
			pi++
		}
		g.t1, g.p1 = int32(ti), int32(pi)
		if e.maxDet > 0 && int(g.p1-g.p0) > e.maxDet {
			e.dropped = append(e.dropped, e.gPreds[int(g.p0)+e.maxDet:g.p1]...)
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

// countingSort returns in stably sorted by bucket[v] (values below n); off,
// when not nil (length n+1), receives the bucket boundaries.
func countingSort(in []int32, bucket []int32, n int, off []int32) []int32 {
	if off == nil {
		off = make([]int32, n+1)
	}
	for _, v := range in {
		off[bucket[v]+1]++
	}
	for b := 1; b <= n; b++ {
		off[b] += off[b-1]
	}
	out := make([]int32, len(in))
	pos := make([]int32, n)
	copy(pos, off[:n])
	for _, v := range in {
		b := bucket[v]
		out[pos[b]] = v
		pos[b]++
	}
	return out
}

// outcomes holds the prediction outcomes at every distinct threshold the
// figures use.
type outcomes struct {
	thr   []float64 // distinct thresholds, in order of first use
	o     []int8    // prediction i at threshold u is o[i*len(thr)+u]
	first int       // index of the first threshold: TP/FP, curve, matches
	main  []int     // the thresholds AP averages over
	at50  int
	at75  int
	coco  []int // COCOThresholds
	match []int // per prediction, the truth matched at first, or -1
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
	outs.match = make([]int, n)
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
	for _, p := range e.dropped {
		for u := range nu {
			outs.o[int(p)*nu+u] = outIgnored
		}
	}
	thr := make([]float64, len(outs.thr))
	for i, t := range outs.thr {
		thr[i] = t
		if e.coco {
			thr[i] = min(t, cocoMaxIoU)
		}
	}
	parallel(len(e.groups), len(e.preds), func(lo, hi int) {
		var m matcher
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

// parallel runs work over [0,n) in contiguous parts, on up to GOMAXPROCS
// goroutines when cost (about the number of predictions) makes it pay.
func parallel(n, cost int, work func(lo, hi int)) {
	workers := runtime.GOMAXPROCS(0)
	if cost < 20000 || n < 2 {
		workers = 1
	}
	workers = min(workers, n)
	if workers <= 1 {
		work(0, n)
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
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				work(i*n/parts, (i+1)*n/parts)
			}
		}()
	}
	wg.Wait()
}

// matcher holds one goroutine's scratch buffers.
type matcher struct {
	ious        []float64
	taken       []bool
	crowd, ig   []bool
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
func (m *matcher) overlaps(e *evaluation, ts, ps []int32) []float64 {
	nt := len(ts)
	m.ious = grow(m.ious, len(ps)*nt)
	plusOne := e.opt.PlusOne
	for pi, p := range ps {
		pb := e.preds[p].Box
		pa := area(pb, plusOne)
		row := m.ious[pi*nt : (pi+1)*nt]
		for ti, t := range ts {
			tb := e.truths[t].Box
			inter := intersection(pb, tb, plusOne)
			switch {
			case inter == 0:
				row[ti] = 0
			case e.coco && e.truths[t].Crowd:
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
	ts, ps := e.gTruths[g.t0:g.t1], e.gPreds[g.p0:g.p1]
	nt := len(ts)
	m.predInRange = grow(m.predInRange, len(ps))
	for pi, p := range ps {
		m.predInRange[pi] = e.opt.AreaRange.contains(area(e.preds[p].Box, e.opt.PlusOne))
	}
	nu := len(thr)
	if nt == 0 {
		for pi, p := range ps {
			o := outFP
			if !m.predInRange[pi] {
				o = outIgnored
			}
			for u := range nu {
				outs.o[int(p)*nu+u] = o
			}
		}
		return
	}
	ious := m.overlaps(e, ts, ps)
	m.taken, m.crowd, m.ig = grow(m.taken, nt), grow(m.crowd, nt), grow(m.ig, nt)
	for ti, t := range ts {
		m.crowd[ti], m.ig[ti] = e.truths[t].Crowd, e.truthIg[t]
	}
	taken, crowd, ig := m.taken, m.crowd, m.ig
	for u, th := range thr {
		clear(taken)
		for pi, p := range ps {
			o := &outs.o[int(p)*nu+u]
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
				outs.match[p] = int(ts[bi])
			}
		}
	}
}

// matchVOC labels the group's predictions at every threshold: each, in
// score order, takes the truth with the highest IoU (the first of equal
// ones), taken or not.
func (m *matcher) matchVOC(e *evaluation, g group, thr []float64, outs *outcomes) {
	ts, ps := e.gTruths[g.t0:g.t1], e.gPreds[g.p0:g.p1]
	nt, nu := len(ts), len(thr)
	if nt == 0 {
		for _, p := range ps {
			for u := range nu {
				outs.o[int(p)*nu+u] = outFP
			}
		}
		return
	}
	ious := m.overlaps(e, ts, ps)
	m.best, m.bestIoU = grow(m.best, len(ps)), grow(m.bestIoU, len(ps))
	for pi := range ps {
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
		for pi, p := range ps {
			o := &outs.o[int(p)*nu+u]
			bi := m.best[pi]
			if m.bestIoU[pi] < th {
				*o = outFP
				continue
			}
			t := ts[bi]
			switch {
			case e.truthIg[t]:
				*o = outIgnored
			case taken[bi]:
				*o = outFP // duplicate
				continue
			default:
				*o = outTP
				taken[bi] = true
			}
			if u == outs.first {
				outs.match[p] = int(t)
			}
		}
	}
}
