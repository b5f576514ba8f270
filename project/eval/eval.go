// Package eval scores predicted boxes against ground truth: matching (VOC- and
// COCO-style), precision/recall curves, average precision.
//
// Conventions shared by everything in the package:
//
//   - Predictions are ranked by descending score with a stable sort, so
//     predictions with equal scores keep their input order. The ranking is
//     the same for matching (per image and class) and for the curves (per
//     class over all images), so results never depend on map order.
//   - A prediction matches a truth when their IoU is greater than or equal
//     to the threshold: an IoU exactly at the threshold counts.
//   - VOC-style matching: each prediction, in score order, takes the truth of
//     its class on its image with the highest IoU, whether or not that truth
//     is taken. If the IoU reaches the threshold and the truth is free it is
//     a true positive; if the truth is already taken it is a false positive
//     (a duplicate); below the threshold it is a false positive. A match to
//     a Difficult truth is neither (ignored), and Difficult truths are not
//     counted. Under VOC a Crowd truth is treated as Difficult.
//     AreaRange and MaxDetections do not apply to VOC.
//   - COCO-style matching: predictions above MaxDetections per image (by
//     score, over all classes of the image) are dropped. Each remaining
//     prediction takes the best still-free truth with IoU at or above the
//     threshold, preferring truths that are not ignored; truths are ignored
//     when Crowd, Difficult or outside the AreaRange. A Crowd truth is never
//     used up, so it can absorb many predictions, and its overlap is the
//     intersection over the prediction's own area, as in the published
//     protocol. A prediction matched to an ignored truth is ignored; an
//     unmatched prediction outside the AreaRange is ignored too.
//   - Areas and IoU follow Options.PlusOne: either continuous (x1−x0)(y1−y0)
//     or pixel-inclusive (x1−x0+1)(y1−y0+1) as older toolkits computed.
//   - Recall levels for the 11- and 101-point interpolations are compared
//     exactly as fractions (recall ≥ k/10 is tp·10 ≥ k·n), so recall 0.3 is
//     never lost to 0.1+0.1+0.1 rounding.
//   - A class without ground truth has AP NaN and is left out of the means;
//     precision is 0 when no prediction was counted and recall is 0 when
//     there is no ground truth.
package eval

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"boxwright/project"
)

// Protocol chooses how predictions are matched to ground truth.
type Protocol int

const (
	// VOC matches each prediction to its highest-IoU truth; duplicates are
	// false positives and difficult truths are ignored.
	VOC Protocol = iota
	// COCO matches each prediction to the best free truth above the
	// threshold, with crowd truths, area ranges and a per-image cap.
	COCO
)

// String returns "voc" or "coco".
func (p Protocol) String() string {
	switch p {
	case VOC:
		return "voc"
	case COCO:
		return "coco"
	}
	return fmt.Sprintf("Protocol(%d)", int(p))
}

// ParseProtocol reads "voc" or "coco" (any case).
func ParseProtocol(s string) (Protocol, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "voc":
		return VOC, nil
	case "coco":
		return COCO, nil
	}
	return 0, fmt.Errorf("eval: unknown protocol %q (want voc or coco)", s)
}

// Interpolation chooses how a precision/recall curve becomes one number.
type Interpolation int

const (
	// AllPoint is the area under the monotone precision envelope (the
	// precision at each recall replaced by the best precision at that recall
	// or higher).
	AllPoint Interpolation = iota
	// ElevenPoint averages the best precision at recall ≥ r for
	// r = 0, 0.1, …, 1.
	ElevenPoint
	// Point101 averages the best precision at recall ≥ r for
	// r = 0, 0.01, …, 1.
	Point101
	// Step is the non-interpolated sum Σ (R_n − R_{n−1}) P_n over the ranks.
	Step
)

// String returns "all", "11", "101" or "step".
func (i Interpolation) String() string {
	switch i {
	case AllPoint:
		return "all"
	case ElevenPoint:
		return "11"
	case Point101:
		return "101"
	case Step:
		return "step"
	}
	return fmt.Sprintf("Interpolation(%d)", int(i))
}

// ParseInterpolation reads "all", "11", "101" or "step".
func ParseInterpolation(s string) (Interpolation, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "all":
		return AllPoint, nil
	case "11":
		return ElevenPoint, nil
	case "101":
		return Point101, nil
	case "step":
		return Step, nil
	}
	return 0, fmt.Errorf("eval: unknown interpolation %q (want all, 11, 101 or step)", s)
}

// AreaRange limits COCO-style evaluation to truths and predictions of a
// size. Areas use the Options.PlusOne convention.
type AreaRange int

const (
	// All keeps every size.
	All AreaRange = iota
	// Small keeps areas below 32².
	Small
	// Medium keeps areas from 32² to 96² inclusive.
	Medium
	// Large keeps areas above 96².
	Large
)

// String returns "all", "small", "medium" or "large".
func (a AreaRange) String() string {
	switch a {
	case All:
		return "all"
	case Small:
		return "small"
	case Medium:
		return "medium"
	case Large:
		return "large"
	}
	return fmt.Sprintf("AreaRange(%d)", int(a))
}

// contains reports whether an area lies in the range.
func (a AreaRange) contains(area float64) bool {
	switch a {
	case Small:
		return area < 32*32
	case Medium:
		return area >= 32*32 && area <= 96*96
	case Large:
		return area > 96*96
	}
	return true
}

// Truth is one ground-truth box.
type Truth struct {
	ImageID int64
	ClassID int64
	Box     project.Box
	// Difficult truths neither count nor penalise (VOC's flag).
	Difficult bool
	// Crowd marks a box around a group of objects (COCO's flag).
	Crowd bool
	// Ref is the caller's id, e.g. the label id; eval only passes it on.
	Ref int64
}

// Prediction is one box a detector proposed, with its confidence.
type Prediction struct {
	ImageID int64
	ClassID int64
	Box     project.Box
	Score   float64
	// Ref is the caller's id; eval only passes it on.
	Ref int64
}

// Options configure Evaluate. The zero value is VOC at IoU 0.5, all-point.
type Options struct {
	Protocol Protocol
	// IoU is the VOC threshold; 0 means 0.5.
	IoU float64
	// IoUs are the COCO thresholds; nil means COCOThresholds().
	IoUs []float64
	// Interpolation is used as given: its zero value is AllPoint for both
	// protocols, so COCO callers who want the published figures pass
	// Point101 explicitly (VOC 2007 used ElevenPoint, later VOC years
	// AllPoint; from memory).
	Interpolation Interpolation
	// PlusOne uses pixel-inclusive areas (x1−x0+1)(y1−y0+1) as older
	// toolkits did; otherwise areas are continuous.
	PlusOne bool
	// MaxDetections caps COCO predictions per image, highest scores kept;
	// 0 means 100 and a negative value means no cap.
	MaxDetections int
	// AreaRange limits COCO evaluation to one size of object.
	AreaRange AreaRange
	// ScoreThreshold is the operating point of the Precision, Recall and F1
	// figures: predictions with Score ≥ ScoreThreshold count.
	ScoreThreshold float64
}

// COCOThresholds returns 0.50, 0.55, …, 0.95, each computed as k/100 so that
// every value is the float64 nearest the decimal (0.80 is 0.8, not
// 0.8000000000000002).
func COCOThresholds() []float64 {
	t := make([]float64, 0, 10)
	for k := 50; k <= 95; k += 5 {
		t = append(t, float64(k)/100)
	}
	return t
}

// area is the box area under the chosen convention.
func area(b project.Box, plusOne bool) float64 {
	w, h := b.X1-b.X0, b.Y1-b.Y0
	if plusOne {
		w, h = w+1, h+1
	}
	if w <= 0 || h <= 0 {
		return 0
	}
	return w * h
}

// intersection is the overlap area under the chosen convention.
func intersection(a, b project.Box, plusOne bool) float64 {
	w := math.Min(a.X1, b.X1) - math.Max(a.X0, b.X0)
	h := math.Min(a.Y1, b.Y1) - math.Max(a.Y0, b.Y0)
	if plusOne {
		w, h = w+1, h+1
	}
	if w <= 0 || h <= 0 {
		return 0
	}
	return w * h
}

// IoU returns the intersection over union of a and b in [0,1]: continuous
// areas, or pixel-inclusive areas (width x1−x0+1) when plusOne is set.
func IoU(a, b project.Box, plusOne bool) float64 {
	inter := intersection(a, b, plusOne)
	if inter == 0 {
		return 0
	}
	return inter / (area(a, plusOne) + area(b, plusOne) - inter)
}

// Point is one point of a precision/recall curve: the figures after counting
// every prediction down to and including the one with this Score.
type Point struct {
	Recall, Precision, Score float64
}

// ClassResult holds the figures of one class.
type ClassResult struct {
	ClassID int64
	// Truths counts the ground truth that is not ignored.
	Truths int
	// Predictions counts the class's predictions in the input.
	Predictions int
	// TP and FP count predictions at the first IoU threshold; ignored
	// predictions are in neither.
	TP, FP int
	// AP is the average precision under Options: at IoU for VOC, the mean
	// over IoUs for COCO (AP@[.50:.95] by default). NaN without ground truth.
	AP float64
	// AP50, AP75 and AP50_95 use the chosen protocol's matching and
	// interpolation at IoU 0.5, 0.75 and the mean over COCOThresholds.
	AP50, AP75, AP50_95 float64
	// Curve has one point per counted prediction in score order, at the
	// first IoU threshold.
	Curve []Point
	// Precision, Recall and F1 at Options.ScoreThreshold, first IoU.
	Precision, Recall, F1 float64
	// BestF1 is the highest F1 over score thresholds, reached by keeping the
	// predictions with Score ≥ BestF1Threshold (both 0 when no threshold
	// gives a true positive).
	BestF1, BestF1Threshold float64
}

// Result holds the figures of an evaluation.
type Result struct {
	// Classes are in ascending class ID order: every class that has truths
	// or predictions.
	Classes []ClassResult
	// MAP is the mean of the classes' AP over classes with ground truth
	// (NaN if there are none).
	MAP float64
	// AP50, AP75 and AP50_95 are the means of the classes' figures.
	AP50, AP75, AP50_95 float64
	// Precision, Recall and F1 pool all classes at Options.ScoreThreshold.
	Precision, Recall, F1 float64
	// BestF1 is the best pooled F1 over one score threshold for all
	// classes, and that threshold.
	BestF1, BestF1Threshold float64
	// PredMatch is, per input prediction, the index of the truth it matched
	// at the first IoU threshold (including ignored matches), or -1.
	PredMatch []int
	// PredTP is, per input prediction, whether it was a true positive at
	// the first IoU threshold.
	PredTP []bool
	// PredIgnored is, per input prediction, whether it counted neither way
	// (matched a difficult or crowd truth, outside the area range, or above
	// MaxDetections).
	PredIgnored []bool
	// TruthMatched is, per input truth, whether any prediction matched it at
	// the first IoU threshold.
	TruthMatched []bool
}

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

// Evaluate matches preds to truths under opt and computes the figures. It
// fails on an unknown protocol or interpolation, thresholds outside (0,1],
// invalid boxes and non-finite scores.
func Evaluate(truths []Truth, preds []Prediction, opt Options) (Result, error) {
	first, main, err := thresholds(opt)
	if err != nil {
		return Result{}, err
	}
	if opt.Interpolation < AllPoint || opt.Interpolation > Step {
		return Result{}, fmt.Errorf("eval: unknown interpolation %d", int(opt.Interpolation))
	}
	for i, t := range truths {
		if !t.Box.Valid() {
			return Result{}, fmt.Errorf("eval: truth %d (ref %d): invalid box %v", i, t.Ref, t.Box)
		}
	}
	for i, p := range preds {
		if !p.Box.Valid() {
			return Result{}, fmt.Errorf("eval: prediction %d (ref %d): invalid box %v", i, p.Ref, p.Box)
		}
		if math.IsNaN(p.Score) || math.IsInf(p.Score, 0) {
			return Result{}, fmt.Errorf("eval: prediction %d (ref %d): score %v is not finite", i, p.Ref, p.Score)
		}
	}
	coco := opt.Protocol == COCO

	// Ignored truths: difficult (and crowd) under VOC; crowd, difficult or
	// outside the area range under COCO.
	truthIg := make([]bool, len(truths))
	for i, t := range truths {
		truthIg[i] = t.Difficult || t.Crowd || (coco && !opt.AreaRange.contains(area(t.Box, opt.PlusOne)))
	}

	// Rank all predictions once; groups inherit the order.
	order := make([]int, len(preds))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		sa, sb := preds[a].Score, preds[b].Score
		switch {
		case sa > sb:
			return -1
		case sa < sb:
			return 1
		}
		return 0
	})

	dropped := make([]bool, len(preds))
	if coco {
		maxDet := opt.MaxDetections
		if maxDet == 0 {
			maxDet = 100
		}
		if maxDet > 0 {
			perImage := make(map[int64]int)
			for _, i := range order {
				n := perImage[preds[i].ImageID]
				if n >= maxDet {
					dropped[i] = true
				}
				perImage[preds[i].ImageID] = n + 1
			}
		}
	}

	type key struct{ image, class int64 }
	groups := make(map[key]*group)
	classTruths := make(map[int64]int)
	classPreds := make(map[int64][]int) // input indices in score order
	get := func(k key) *group {
		g := groups[k]
		if g == nil {
			g = &group{}
			groups[k] = g
		}
		return g
	}
	for i, t := range truths {
		g := get(key{t.ImageID, t.ClassID})
		g.truths = append(g.truths, i)
		if !truthIg[i] {
			classTruths[t.ClassID]++
		} else if _, ok := classTruths[t.ClassID]; !ok {
			classTruths[t.ClassID] = 0
		}
	}
	for _, i := range order {
		p := preds[i]
		classPreds[p.ClassID] = append(classPreds[p.ClassID], i)
		if dropped[i] {
			continue
		}
		g := get(key{p.ImageID, p.ClassID})
		g.preds = append(g.preds, i)
	}
	// Fixed group order keeps the work deterministic.
	keys := make([]key, 0, len(groups))
	for k, g := range groups {
		if coco {
			slices.SortStableFunc(g.truths, func(a, b int) int {
				return boolInt(truthIg[a]) - boolInt(truthIg[b])
			})
		}
		g.ious = make([]float64, len(g.preds)*len(g.truths))
		for pi, p := range g.preds {
			pb := preds[p].Box
			for ti, t := range g.truths {
				tb := truths[t].Box
				if coco && truths[t].Crowd {
					// Crowd overlap is the share of the prediction inside it.
					inter := intersection(pb, tb, opt.PlusOne)
					if inter > 0 {
						g.ious[pi*len(g.truths)+ti] = inter / area(pb, opt.PlusOne)
					}
				} else {
					g.ious[pi*len(g.truths)+ti] = IoU(pb, tb, opt.PlusOne)
				}
			}
		}
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b key) int {
		if a.image != b.image {
			return cmpInt64(a.image, b.image)
		}
		return cmpInt64(a.class, b.class)
	})
	gs := make([]*group, len(keys))
	for i, k := range keys {
		gs[i] = groups[k]
	}

	// Outcomes per threshold, computed once per distinct value.
	outcomes := make(map[float64][]int8)
	var match []int
	run := func(thr float64) []int8 {
		if o, ok := outcomes[thr]; ok {
			return o
		}
		o := make([]int8, len(preds))
		var m []int
		if thr == first {
			m = make([]int, len(preds))
			for i := range m {
				m[i] = -1
			}
		}
		for _, g := range gs {
			if coco {
				matchCOCO(g, thr, o, m, truths, preds, truthIg, opt)
			} else {
				matchVOC(g, thr, o, m, truthIg)
			}
		}
		for i := range preds {
			if dropped[i] {
				o[i] = outIgnored
			}
		}
		if m != nil {
			match = m
		}
		outcomes[thr] = o
		return o
	}
	firstOut := run(first)
	mainOut := make([][]int8, len(main))
	for i, t := range main {
		mainOut[i] = run(t)
	}
	out50, out75 := run(0.5), run(0.75)
	cocoT := COCOThresholds()
	cocoOut := make([][]int8, len(cocoT))
	for i, t := range cocoT {
		cocoOut[i] = run(t)
	}

	classIDs := make([]int64, 0, len(classTruths)+len(classPreds))
	for c := range classTruths {
		classIDs = append(classIDs, c)
	}
	for c := range classPreds {
		if _, ok := classTruths[c]; !ok {
			classIDs = append(classIDs, c)
		}
	}
	slices.Sort(classIDs)

	res := Result{
		PredMatch:    match,
		PredTP:       make([]bool, len(preds)),
		PredIgnored:  make([]bool, len(preds)),
		TruthMatched: make([]bool, len(truths)),
	}
	for i, o := range firstOut {
		res.PredTP[i] = o == outTP
		res.PredIgnored[i] = o == outIgnored
		if match[i] >= 0 {
			res.TruthMatched[match[i]] = true
		}
	}

	var tp []bool
	apAt := func(ranked []int, o []int8, n int) float64 {
		tp = tp[:0]
		for _, i := range ranked {
			if o[i] != outIgnored {
				tp = append(tp, o[i] == outTP)
			}
		}
		return AveragePrecision(tp, n, opt.Interpolation)
	}
	meanAP := func(ranked []int, outs [][]int8, n int) float64 {
		s := 0.0
		for _, o := range outs {
			s += apAt(ranked, o, n)
		}
		return s / float64(len(outs))
	}

	var pooled []scored
	var sums [4]float64
	var nWith int
	var poolTP, poolFP, poolN int
	for _, c := range classIDs {
		ranked := classPreds[c]
		n := classTruths[c]
		cr := ClassResult{ClassID: c, Truths: n, Predictions: len(ranked)}
		cr.AP = meanAP(ranked, mainOut, n)
		cr.AP50 = apAt(ranked, out50, n)
		cr.AP75 = apAt(ranked, out75, n)
		cr.AP50_95 = meanAP(ranked, cocoOut, n)

		var list []scored
		tpAt, fpAt := 0, 0
		for _, i := range ranked {
			switch firstOut[i] {
			case outIgnored:
				continue
			case outTP:
				cr.TP++
			default:
				cr.FP++
			}
			isTP := firstOut[i] == outTP
			list = append(list, scored{preds[i].Score, isTP})
			cr.Curve = append(cr.Curve, Point{
				Recall:    ratio(cr.TP, n),
				Precision: ratio(cr.TP, cr.TP+cr.FP),
				Score:     preds[i].Score,
			})
			if preds[i].Score >= opt.ScoreThreshold {
				if isTP {
					tpAt++
				} else {
					fpAt++
				}
			}
		}
		cr.Precision, cr.Recall, cr.F1 = prf(tpAt, fpAt, n)
		cr.BestF1, cr.BestF1Threshold = bestF1(list, n)
		poolTP += tpAt
		poolFP += fpAt
		poolN += n
		pooled = append(pooled, list...)
		if n > 0 {
			nWith++
			sums[0] += cr.AP
			sums[1] += cr.AP50
			sums[2] += cr.AP75
			sums[3] += cr.AP50_95
		}
		res.Classes = append(res.Classes, cr)
	}
	if nWith > 0 {
		k := float64(nWith)
		res.MAP, res.AP50, res.AP75, res.AP50_95 = sums[0]/k, sums[1]/k, sums[2]/k, sums[3]/k
	} else {
		res.MAP, res.AP50, res.AP75, res.AP50_95 = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	}
	res.Precision, res.Recall, res.F1 = prf(poolTP, poolFP, poolN)
	slices.SortStableFunc(pooled, func(a, b scored) int {
		switch {
		case a.score > b.score:
			return -1
		case a.score < b.score:
			return 1
		}
		return 0
	})
	res.BestF1, res.BestF1Threshold = bestF1(pooled, poolN)
	return res, nil
}

// thresholds returns the first IoU threshold (the one behind TP/FP, the
// curve and the matches) and the thresholds that AP averages over.
func thresholds(opt Options) (first float64, main []float64, err error) {
	switch opt.Protocol {
	case VOC:
		t := opt.IoU
		if t == 0 {
			t = 0.5
		}
		main = []float64{t}
	case COCO:
		main = opt.IoUs
		if main == nil {
			main = COCOThresholds()
		}
		if len(main) == 0 {
			return 0, nil, errors.New("eval: COCO needs at least one IoU threshold")
		}
	default:
		return 0, nil, fmt.Errorf("eval: unknown protocol %d", int(opt.Protocol))
	}
	for _, t := range main {
		if !(t > 0 && t <= 1) {
			return 0, nil, fmt.Errorf("eval: IoU threshold %v outside (0,1]", t)
		}
	}
	return main[0], main, nil
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

// scored is one counted prediction for the F1 search.
type scored struct {
	score float64
	tp    bool
}

// bestF1 scans score thresholds down a ranked list. A cut is only taken
// where the score changes, since a threshold cannot split tied scores.
func bestF1(list []scored, n int) (f1, threshold float64) {
	tp, fp := 0, 0
	for i, s := range list {
		if s.tp {
			tp++
		} else {
			fp++
		}
		if i+1 < len(list) && list[i+1].score == s.score {
			continue
		}
		if _, _, f := prf(tp, fp, n); f > f1 {
			f1, threshold = f, s.score
		}
	}
	return f1, threshold
}

// prf returns precision, recall and F1 from counts.
func prf(tp, fp, n int) (p, r, f float64) {
	p, r = ratio(tp, tp+fp), ratio(tp, n)
	if p+r > 0 {
		f = 2 * p * r / (p + r)
	}
	return p, r, f
}

// ratio is a/b, or 0 when b is 0.
func ratio(a, b int) float64 {
	if b == 0 {
		return 0
	}
	return float64(a) / float64(b)
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

func cmpInt64(a, b int64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}
