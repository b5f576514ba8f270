// Package eval scores predicted boxes against ground truth: matching (VOC- and
// COCO-style), precision/recall curves, average precision.
//
// Conventions shared by everything in the package:
//
//   - Predictions are ranked by descending score; equal scores keep their
//     input order (VOC) or, as the COCO evaluation tool ranks them, go by
//     image ID and then input order (COCO). The ranking is the same for
//     matching (per image and class) and for the curves (per class over all
//     images), so results never depend on map order.
//   - A prediction matches a truth when their IoU is greater than or equal
//     to the threshold: an IoU exactly at the threshold counts.
//   - VOC-style matching: each prediction, in score order, takes the truth of
//     its class on its image with the highest IoU (the first of equal ones),
//     whether or not that truth is taken. If the IoU reaches the threshold
//     and the truth is free it is a true positive; if the truth is already
//     taken it is a false positive (a duplicate); below the threshold it is
//     a false positive. A match to a Difficult truth is neither (ignored),
//     and Difficult truths are not counted. Under VOC a Crowd truth is
//     treated as Difficult. AreaRange and MaxDetections do not apply to VOC.
//   - COCO-style matching: predictions above MaxDetections per image and
//     class (by score) are dropped. Each remaining prediction takes the
//     best still-free truth with IoU at or above the threshold, preferring
//     truths that are not ignored; truths are ignored when Crowd, Difficult
//     or outside the AreaRange. A Crowd truth is never used up, so it can
//     absorb many predictions, and its overlap is the intersection over the
//     prediction's own area, as in the published protocol. A prediction
//     matched to an ignored truth is ignored; an unmatched prediction
//     outside the AreaRange is ignored too.
//   - Areas and IoU follow Options.PlusOne: either continuous (x1−x0)(y1−y0)
//     or pixel-inclusive (x1−x0+1)(y1−y0+1) as older toolkits computed.
//   - Recall levels for the 11- and 101-point interpolations are compared
//     exactly as fractions (recall ≥ k/10 is tp·10 ≥ k·n), so recall 0.3 is
//     never lost to 0.1+0.1+0.1 rounding; except Point101 under COCO, below.
//   - A class without ground truth has AP NaN and is left out of the means;
//     precision is 0 when no prediction was counted and recall is 0 when
//     there is no ground truth.
//
// The COCO protocol follows the COCO evaluation tool (the COCO API's
// COCOeval, as re-implemented in testdata/coco_reference.py) where it departs
// from the protocol as usually stated, so that our COCO figures equal the
// ones that tool gives (TestCOCOAgainstReference, to 1e-9; each case
// pinned by TestCOCOevalDifferences):
//
//   - Point101 averages over the tool's recall levels np.linspace(0, 1, 101),
//     i.e. k·0.01 in float64, with recall hits/n in float64, as the COCO
//     evaluation tool does: ten levels (0.35, 0.41, 0.47, 0.57, 0.69, 0.70,
//     0.82, 0.83, 0.94, 0.95) lie one ulp above k/100, so a recall of
//     exactly 7/10 does not reach level 0.70.
//   - COCOThresholds are np.linspace(.5, .95, 10), as the COCO evaluation
//     tool computes them: the ninth is 0.8999999999999999.
//   - Of several truths tied at the best IoU a prediction takes the last
//     (in the order above: counted truths first, each part in input order),
//     as the COCO evaluation tool does.
//   - Equal scores are ranked by image ID, then input order, as the COCO
//     evaluation tool does.
//   - MaxDetections cuts per image and class, as the COCO evaluation tool
//     does, not per image.
//   - Area ranges include both bounds, as the COCO evaluation tool's do:
//     small [0, 32²], medium [32², 96²], large [96², 1e5²], all [0, 1e5²];
//     32² is small and medium, 96² medium and large.
//   - A threshold t matches IoU ≥ min(t, 1−1e-10), as the COCO evaluation
//     tool does, so a threshold of 1 accepts IoU that rounding left just
//     below 1.
//
// AveragePrecision itself keeps exact recall levels for every
// interpolation.
package eval

import (
	"cmp"
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
	// All keeps every size up to 1e5² (as the COCO evaluation tool).
	All AreaRange = iota
	// Small keeps areas up to 32² inclusive.
	Small
	// Medium keeps areas from 32² to 96² inclusive.
	Medium
	// Large keeps areas from 96² (inclusive) to 1e5².
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

// contains reports whether an area lies in the range. The bounds are the
// COCO evaluation tool's, both inclusive: all [0, 1e5²], small [0, 32²],
// medium [32², 96²], large [96², 1e5²].
func (a AreaRange) contains(area float64) bool {
	const top = 1e5 * 1e5
	switch a {
	case Small:
		return area <= 32*32
	case Medium:
		return area >= 32*32 && area <= 96*96
	case Large:
		return area >= 96*96 && area <= top
	}
	return area <= top
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
	// MaxDetections caps COCO predictions per image and class, highest
	// scores kept (as the COCO evaluation tool cuts them); 0 means 100 and
	// a negative value means no cap.
	MaxDetections int
	// AreaRange limits COCO evaluation to one size of object.
	AreaRange AreaRange
	// ScoreThreshold is the operating point of the Precision, Recall and F1
	// figures: predictions with Score ≥ ScoreThreshold count.
	ScoreThreshold float64
}

// COCOThresholds returns the ten IoU thresholds 0.50:0.05:0.95 as the COCO
// evaluation tool computes them, np.linspace(.5, .95, 10): start + k·step
// with step = (0.95 − 0.5)/9 in float64 and the last exactly 0.95. So 0.9
// is 0.8999999999999999; the others are the float64 nearest their decimal.
func COCOThresholds() []float64 {
	return linspace(0.5, 0.95, 10)
}

// linspace is numpy's linspace(start, stop, num) with endpoint: y_k =
// k·step + start with step = (stop − start)/(num − 1), each operation
// rounded to float64 (the conversions keep the compiler from fusing them),
// and y_{num−1} = stop.
func linspace(start, stop float64, num int) []float64 {
	step := float64(stop-start) / float64(num-1)
	y := make([]float64, num)
	for k := range y {
		y[k] = float64(float64(k)*step) + start
	}
	y[num-1] = stop
	return y
}

// cocoRecallLevels are the COCO evaluation tool's recall levels
// np.linspace(0, 1, 101): k·0.01 in float64, so ten of them (0.35, 0.41,
// 0.47, 0.57, 0.69, 0.70, 0.82, 0.83, 0.94, 0.95) lie one ulp above k/100.
var cocoRecallLevels = linspace(0, 1, 101)

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

// intersection is the overlap area under the chosen convention. Boxes are
// finite, so plain comparisons stand in for math.Min and math.Max (the sign
// of a zero could differ, which the w, h ≤ 0 test makes moot).
func intersection(a, b project.Box, plusOne bool) float64 {
	x0, x1, y0, y1 := a.X0, a.X1, a.Y0, a.Y1
	if b.X0 > x0 {
		x0 = b.X0
	}
	if b.X1 < x1 {
		x1 = b.X1
	}
	if b.Y0 > y0 {
		y0 = b.Y0
	}
	if b.Y1 < y1 {
		y1 = b.Y1
	}
	w, h := x1-x0, y1-y0
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

// Evaluate matches preds to truths under opt and computes the figures. It
// fails on an unknown protocol or interpolation, thresholds outside (0,1],
// invalid boxes and non-finite scores.
func Evaluate(truths []Truth, preds []Prediction, opt Options) (Result, error) {
	first, main, err := checkInputs(truths, preds, opt)
	if err != nil {
		return Result{}, err
	}
	e := newEvaluation(truths, preds, opt)
	e.groupByImageClass()
	outs := e.matchAll(first, main)
	res := e.predictionResults(outs)
	var p pool
	res.Classes, p = e.classResults(outs, &res)
	summarize(&res, p)
	return res, nil
}

// checkInputs rejects bad options, boxes and scores, and returns the IoU
// thresholds.
func checkInputs(truths []Truth, preds []Prediction, opt Options) (first float64, main []float64, err error) {
	first, main, err = thresholds(opt)
	if err != nil {
		return 0, nil, err
	}
	if opt.Interpolation < AllPoint || opt.Interpolation > Step {
		return 0, nil, fmt.Errorf("eval: unknown interpolation %d", int(opt.Interpolation))
	}
	if len(truths) > math.MaxInt32 || len(preds) > math.MaxInt32 {
		return 0, nil, fmt.Errorf("eval: %d truths and %d predictions: at most %d of each", len(truths), len(preds), math.MaxInt32)
	}
	for i, t := range truths {
		if !t.Box.Valid() {
			return 0, nil, fmt.Errorf("eval: truth %d (ref %d): invalid box %v", i, t.Ref, t.Box)
		}
	}
	for i, p := range preds {
		if !p.Box.Valid() {
			return 0, nil, fmt.Errorf("eval: prediction %d (ref %d): invalid box %v", i, p.Ref, p.Box)
		}
		if math.IsNaN(p.Score) || math.IsInf(p.Score, 0) {
			return 0, nil, fmt.Errorf("eval: prediction %d (ref %d): score %v is not finite", i, p.Ref, p.Score)
		}
	}
	return first, main, nil
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

// evaluation is the state that Evaluate's stages share; see
// groupByImageClass for the rank (R), class (C) and group (G) orders.
type evaluation struct {
	truths    []Truth
	preds     []Prediction
	opt       Options
	coco      bool
	maxDet    int       // COCO cap per image and class; 0 for none
	truthIg   []bool    // truths that do not count
	order     []int32   // R → prediction index
	rankScore []float64 // R → score

	// Set by groupByImageClass.
	classIDs    []int64 // ascending; dense class k is classIDs[k]
	truthClass  []int32 // dense class of each truth
	predClass   []int32 // dense class of each prediction
	classTruths []int   // counted truths per dense class
	classOff    []int32 // class k is C positions classOff[k] to classOff[k+1]
	classRanked []int32 // C → prediction index
	classScore  []float64
	gPreds      []int32 // G → prediction index
	gClassPos   []int32 // G → C
	gBox        []project.Box
	gTruths     []int32 // truths in group order: truth index
	gTBox       []project.Box
	gTCrowd     []bool
	gTIg        []bool
	groups      []group
	dropped     []int32 // G positions of COCO predictions beyond the cap
}

// newEvaluation runs the stages that need no grouping: ignored truths and
// the score ranking.
func newEvaluation(truths []Truth, preds []Prediction, opt Options) *evaluation {
	e := &evaluation{truths: truths, preds: preds, opt: opt, coco: opt.Protocol == COCO}
	if e.coco {
		e.maxDet = opt.MaxDetections
		if e.maxDet == 0 {
			e.maxDet = 100
		}
		e.maxDet = max(e.maxDet, 0)
	}
	e.truthIg = e.ignoredTruths()
	e.order, e.rankScore = rankByScore(preds, e.coco)
	return e
}

// ignoredTruths marks difficult (and crowd) truths under VOC; crowd,
// difficult or outside the area range under COCO.
func (e *evaluation) ignoredTruths() []bool {
	truthIg := make([]bool, len(e.truths))
	for i, t := range e.truths {
		truthIg[i] = t.Difficult || t.Crowd || (e.coco && !e.opt.AreaRange.contains(area(t.Box, e.opt.PlusOne)))
	}
	return truthIg
}

// rankByScore ranks all predictions once, by descending score, equal
// scores by input order; under COCO equal scores go by image ID first,
// then input order, as the COCO evaluation tool ranks them. Groups and
// classes inherit the order. A stable radix sort on the scores' bits keeps
// input order among equal scores; runs of equal scores are then sorted by
// image under COCO.
func rankByScore(preds []Prediction, coco bool) (order []int32, scores []float64) {
	n := len(preds)
	keys := make([]uint64, n)
	order = make([]int32, n)
	negZero := false
	for i := range preds {
		s := preds[i].Score
		negZero = negZero || (s == 0 && math.Signbit(s))
		keys[i], order[i] = descendingKey(s), int32(i)
	}
	radixSort(keys, order)
	if coco {
		for lo := 0; lo < n; {
			hi := lo + 1
			for hi < n && keys[hi] == keys[lo] {
				hi++
			}
			if hi-lo > 1 {
				slices.SortFunc(order[lo:hi], func(a, b int32) int {
					return cmp.Or(cmp.Compare(preds[a].ImageID, preds[b].ImageID), cmp.Compare(a, b))
				})
			}
			lo = hi
		}
	}
	// The keys give back the scores, except that −0 became 0.
	scores = make([]float64, n)
	for r, k := range keys {
		if negZero {
			scores[r] = preds[order[r]].Score
		} else {
			scores[r] = scoreOfKey(k)
		}
	}
	return order, scores
}

// descendingKey maps a finite score to a key whose ascending order is the
// scores' descending order; 0 and −0 get the same key.
func descendingKey(s float64) uint64 {
	if s == 0 {
		s = 0
	}
	b := math.Float64bits(s)
	if b>>63 != 0 {
		b = ^b // negative: larger magnitude sorts lower
	} else {
		b |= 1 << 63
	}
	return ^b
}

// scoreOfKey inverts descendingKey.
func scoreOfKey(k uint64) float64 {
	b := ^k
	if b>>63 != 0 {
		b &^= 1 << 63
	} else {
		b = ^b
	}
	return math.Float64frombits(b)
}

// radixSort sorts keys ascending, carrying vals along, stably: a
// least-significant-digit radix sort on bytes that skips the bytes all keys
// share.
func radixSort(keys []uint64, vals []int32) {
	n := len(keys)
	var hist [8][256]int
	for _, k := range keys {
		for d := range 8 {
			hist[d][byte(k>>(8*d))]++
		}
	}
	srcK, srcV := keys, vals
	dstK, dstV := make([]uint64, n), make([]int32, n)
	for d := range 8 {
		h := &hist[d]
		if n == 0 || h[byte(srcK[0]>>(8*d))] == n {
			continue // every key has this byte
		}
		pos := 0
		for b := range h {
			c := h[b]
			h[b] = pos
			pos += c
		}
		for i, k := range srcK {
			b := byte(k >> (8 * d))
			dstK[h[b]], dstV[h[b]] = k, srcV[i]
			h[b]++
		}
		srcK, dstK, srcV, dstV = dstK, srcK, dstV, srcV
	}
	if n > 0 && &srcK[0] != &keys[0] {
		copy(keys, srcK)
		copy(vals, srcV)
	}
}

// predictionResults starts the result with the per-prediction and
// per-truth figures at the first threshold.
func (e *evaluation) predictionResults(outs outcomes) Result {
	res := Result{
		PredMatch:    make([]int, len(e.preds)),
		PredTP:       make([]bool, len(e.preds)),
		PredIgnored:  make([]bool, len(e.preds)),
		TruthMatched: make([]bool, len(e.truths)),
	}
	nu := len(outs.thr)
	for g, i := range e.gPreds {
		o := outs.o[int(e.gClassPos[g])*nu+outs.first]
		res.PredTP[i] = o == outTP
		res.PredIgnored[i] = o == outIgnored
		t := outs.match[g]
		res.PredMatch[i] = int(t)
		if t >= 0 {
			res.TruthMatched[t] = true
		}
	}
	return res
}
