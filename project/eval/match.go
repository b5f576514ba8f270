package eval

import (
	"cmp"
	"slices"
)

// Prediction outcomes at one threshold.
const (
	outFP      int8 = iota // counted, not matched
	outTP                  // counted, matched
	outIgnored             // not counted
)

// group is the truths and predictions of one class on one image.
type group struct {
	truths []int // input indices; COCO: not-ignored truths first
	preds  []int // input indices in score order (stable)
	ious   []float64
}

// groupByImageClass sorts truths and predictions into groups of one image
// and class, computes each group's overlaps and counts each class's truths
// and predictions.
func (e *evaluation) groupByImageClass() {
	type key struct{ image, class int64 }
	groups := make(map[key]*group)
	e.classTruths = make(map[int64]int)
	e.classPreds = make(map[int64][]int)
	get := func(k key) *group {
		g := groups[k]
		if g == nil {
			g = &group{}
			groups[k] = g
		}
		return g
	}
	for i, t := range e.truths {
		g := get(key{t.ImageID, t.ClassID})
		g.truths = append(g.truths, i)
		if !e.truthIg[i] {
			e.classTruths[t.ClassID]++
		} else if _, ok := e.classTruths[t.ClassID]; !ok {
			e.classTruths[t.ClassID] = 0
		}
	}
	for _, i := range e.order {
		p := e.preds[i]
		e.classPreds[p.ClassID] = append(e.classPreds[p.ClassID], i)
		if e.dropped[i] {
			continue
		}
		g := get(key{p.ImageID, p.ClassID})
		g.preds = append(g.preds, i)
	}
	// Fixed group order keeps the work deterministic.
	keys := make([]key, 0, len(groups))
	for k, g := range groups {
		if e.coco {
			slices.SortStableFunc(g.truths, func(a, b int) int {
				return boolInt(e.truthIg[a]) - boolInt(e.truthIg[b])
			})
		}
		e.overlaps(g)
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b key) int {
		return cmp.Or(cmp.Compare(a.image, b.image), cmp.Compare(a.class, b.class))
	})
	e.groups = make([]*group, len(keys))
	for i, k := range keys {
		e.groups[i] = groups[k]
	}
}

// overlaps fills g.ious, one row of truths per prediction.
func (e *evaluation) overlaps(g *group) {
	g.ious = make([]float64, len(g.preds)*len(g.truths))
	for pi, p := range g.preds {
		pb := e.preds[p].Box
		for ti, t := range g.truths {
			tb := e.truths[t].Box
			if e.coco && e.truths[t].Crowd {
				// Crowd overlap is the share of the prediction inside it.
				inter := intersection(pb, tb, e.opt.PlusOne)
				if inter > 0 {
					g.ious[pi*len(g.truths)+ti] = inter / area(pb, e.opt.PlusOne)
				}
			} else {
				g.ious[pi*len(g.truths)+ti] = IoU(pb, tb, e.opt.PlusOne)
			}
		}
	}
}

// outcomes holds the prediction outcomes at every threshold the figures
// use.
type outcomes struct {
	first      []int8   // at the first threshold: TP/FP, curve, matches
	main       [][]int8 // at the thresholds AP averages over
	at50, at75 []int8
	coco       [][]int8 // at COCOThresholds
	match      []int    // per prediction, the truth matched at first, or -1
}

// matchAll matches at every threshold the figures use, once per distinct
// value.
func (e *evaluation) matchAll(first float64, main []float64) outcomes {
	cache := make(map[float64][]int8)
	var match []int
	run := func(thr float64) []int8 {
		if o, ok := cache[thr]; ok {
			return o
		}
		var m []int
		if thr == first {
			m = make([]int, len(e.preds))
			for i := range m {
				m[i] = -1
			}
		}
		o := e.matchAt(thr, m)
		if m != nil {
			match = m
		}
		cache[thr] = o
		return o
	}
	var outs outcomes
	outs.first = run(first)
	outs.main = make([][]int8, len(main))
	for i, t := range main {
		outs.main[i] = run(t)
	}
	outs.at50, outs.at75 = run(0.5), run(0.75)
	cocoT := COCOThresholds()
	outs.coco = make([][]int8, len(cocoT))
	for i, t := range cocoT {
		outs.coco[i] = run(t)
	}
	outs.match = match
	return outs
}

// matchAt labels every prediction at one threshold; m, when not nil,
// receives the matched truth of each prediction.
func (e *evaluation) matchAt(thr float64, m []int) []int8 {
	o := make([]int8, len(e.preds))
	for _, g := range e.groups {
		if e.coco {
			matchCOCO(g, thr, o, m, e.truths, e.preds, e.truthIg, e.opt)
		} else {
			matchVOC(g, thr, o, m, e.truthIg)
		}
	}
	for i := range e.preds {
		if e.dropped[i] {
			o[i] = outIgnored
		}
	}
	return o
}

// matchVOC labels the group's predictions at one threshold. m, when not
// nil, receives the matched truth of each prediction.
func matchVOC(g *group, thr float64, o []int8, m []int, truthIg []bool) {
	nt := len(g.truths)
	var taken []bool
	if nt > 0 {
		taken = make([]bool, nt)
	}
	for pi, p := range g.preds {
		best, bi := -1.0, -1
		for ti := 0; ti < nt; ti++ {
			if v := g.ious[pi*nt+ti]; v > best {
				best, bi = v, ti
			}
		}
		if bi < 0 || best < thr {
			o[p] = outFP
			continue
		}
		t := g.truths[bi]
		switch {
		case truthIg[t]:
			o[p] = outIgnored
		case taken[bi]:
			o[p] = outFP // duplicate
			continue
		default:
			o[p] = outTP
			taken[bi] = true
		}
		if m != nil {
			m[p] = t
		}
	}
}

// matchCOCO labels the group's predictions at one threshold; g.truths are
// sorted with the not-ignored ones first.
func matchCOCO(g *group, thr float64, o []int8, m []int, truths []Truth, preds []Prediction, truthIg []bool, opt Options) {
	nt := len(g.truths)
	var taken []bool
	if nt > 0 {
		taken = make([]bool, nt)
	}
	for pi, p := range g.preds {
		best, bi := thr, -1
		for ti := 0; ti < nt; ti++ {
			t := g.truths[ti]
			if taken[ti] && !truths[t].Crowd {
				continue
			}
			// Once a counted truth is found, ignored ones (sorted last)
			// cannot replace it.
			if bi >= 0 && !truthIg[g.truths[bi]] && truthIg[t] {
				break
			}
			v := g.ious[pi*nt+ti]
			if v < best || (bi >= 0 && v == best) {
				continue
			}
			best, bi = v, ti
		}
		if bi < 0 {
			if opt.AreaRange.contains(area(preds[p].Box, opt.PlusOne)) {
				o[p] = outFP
			} else {
				o[p] = outIgnored
			}
			continue
		}
		t := g.truths[bi]
		taken[bi] = true
		if truthIg[t] {
			o[p] = outIgnored
		} else {
			o[p] = outTP
		}
		if m != nil {
			m[p] = t
		}
	}
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}
