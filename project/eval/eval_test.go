package eval

import (
	"cmp"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os/exec"
	"reflect"
	"runtime"
	"slices"
	"testing"

	"boxwright/project"
)

func bx(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }

func mustEval(t *testing.T, truths []Truth, preds []Prediction, opt Options) Result {
	t.Helper()
	r, err := Evaluate(truths, preds, opt)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// TestAveragePrecisionByHand: ranked TP, FP, TP against 2 truths.
// Precision 1, 1/2, 2/3 at recall 1/2, 1/2, 1.
// All-point: envelope 1 at recall 1/2, 2/3 at recall 1:
// (1/2)·1 + (1/2)·(2/3) = 5/6 = 0.8333.
// 11-point: r = 0…0.5 (6 levels) have best precision 1, r = 0.6…1 (5 levels)
// have 2/3: (6·1 + 5·2/3)/11 = 28/33 = 0.8485.
// Step: (1/2)·1 + (1/2)·(2/3) = 5/6 as well (no dip to fill here).
// 101-point: r = 0…0.50 (51 levels) 1, r = 0.51…1 (50 levels) 2/3:
// (51 + 100/3)/101 = 253/303.
func TestAveragePrecisionByHand(t *testing.T) {
	tp := []bool{true, false, true}
	for _, c := range []struct {
		interp Interpolation
		want   float64
	}{
		{AllPoint, 5.0 / 6},
		{ElevenPoint, (6 + 5*2.0/3) / 11},
		{Step, 5.0 / 6},
		{Point101, (51 + 50*2.0/3) / 101},
	} {
		if got := AveragePrecision(tp, 2, c.interp); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%v: AP = %.6f, want %.6f", c.interp, got, c.want)
		}
	}
	// FP, TP against 1 truth: step 1/2, all-point 1/2.
	// TP, FP, FP, TP against 2: step (1 + 1/2)/2 = 0.75, all-point the same.
	// FP, TP, TP against 2: step (1/2 + 2/3)/2 = 7/12; all-point fills the
	// first TP up to 2/3: (2/3 + 2/3)/2 = 2/3.
	if got := AveragePrecision([]bool{false, true, true}, 2, AllPoint); math.Abs(got-2.0/3) > 1e-12 {
		t.Errorf("all-point FP,TP,TP = %v, want 2/3", got)
	}
	if got := AveragePrecisionStep([]bool{false, true, true}, 2); math.Abs(got-7.0/12) > 1e-12 {
		t.Errorf("step FP,TP,TP = %v, want 7/12", got)
	}
	if got := AveragePrecision(nil, 0, AllPoint); !math.IsNaN(got) {
		t.Errorf("AP without truths = %v, want NaN", got)
	}
	if got := AveragePrecision(nil, 3, ElevenPoint); got != 0 {
		t.Errorf("AP of an empty list = %v, want 0", got)
	}
}

// TestRecallLevelsExact: 3 of 10 truths found at precision 1 reach recall
// 0.3 exactly, so the 11-point levels 0, 0.1, 0.2 and 0.3 all score 1:
// 4/11. A float sum 0.1+0.1+0.1 would miss the 0.3 level.
func TestRecallLevelsExact(t *testing.T) {
	if got := AveragePrecision([]bool{true, true, true}, 10, ElevenPoint); math.Abs(got-4.0/11) > 1e-12 {
		t.Errorf("11-point = %v, want 4/11", got)
	}
	// 101-point: recall 0.07 reaches levels 0…0.07: 8/101.
	tp := make([]bool, 7)
	for i := range tp {
		tp[i] = true
	}
	if got := AveragePrecision(tp, 100, Point101); math.Abs(got-8.0/101) > 1e-12 {
		t.Errorf("101-point = %v, want 8/101", got)
	}
}

// TestCOCOThresholds: the ten thresholds 0.50:0.05:0.95 of the COCO
// detection evaluation (common practice) as the COCO evaluation tool makes
// them, np.linspace(.5, .95, 10) (its Params, from memory); the values are
// numpy 1.24.2's (Debian 12 python3-numpy), printed with repr: only .90
// differs from its decimal. Where /usr/bin/python3 has numpy the test asks
// it as well.
func TestCOCOThresholds(t *testing.T) {
	want := []float64{0.5, 0.55, 0.6, 0.65, 0.7, 0.75, 0.8, 0.85, 0.8999999999999999, 0.95}
	got := COCOThresholds()
	if !slices.Equal(got, want) {
		t.Errorf("COCOThresholds() = %v, want %v", got, want)
	}
	// np.linspace(0, 1, 101): levels 35, 41, 47, 57, 69, 70, 82, 83, 94
	// and 95 differ from k/100, each one ulp above (numpy 1.24.2).
	var above []int
	for k, r := range cocoRecallLevels {
		if r != float64(k)/100 {
			above = append(above, k)
			if r != math.Nextafter(float64(k)/100, 2) {
				t.Errorf("recall level %d = %v, not one ulp above %v", k, r, float64(k)/100)
			}
		}
	}
	if want := []int{35, 41, 47, 57, 69, 70, 82, 83, 94, 95}; !slices.Equal(above, want) || len(cocoRecallLevels) != 101 || cocoRecallLevels[100] != 1 {
		t.Errorf("recall levels off k/100 at %v, want %v", above, want)
	}
	out, err := exec.Command("/usr/bin/python3", "-c",
		"import numpy as np, json; print(json.dumps([np.linspace(.5, .95, 10).tolist(), np.linspace(0, 1, 101).tolist()]))").Output()
	if err != nil {
		t.Logf("numpy not at hand (%v): the hard-coded values only", err)
		return
	}
	var np [2][]float64
	if err := json.Unmarshal(out, &np); err != nil {
		t.Fatalf("numpy printed %q: %v", out, err)
	}
	if !slices.Equal(np[0], got) || !slices.Equal(np[1], cocoRecallLevels) {
		t.Errorf("numpy's linspace %v and %v, ours %v and %v", np[0], np[1], got, cocoRecallLevels)
	}
}

// TestCOCOThresholdOne: COCOeval matches at min(t, 1−1e-10) (its
// evaluateImg, from memory; testdata/coco_reference.py), so at threshold 1
// a prediction whose IoU rounding left a hair below 1 still matches: truth
// [0,10]², prediction [0,10]×[0,10+1e-12], IoU 100/(100+1e-11).
func TestCOCOThresholdOne(t *testing.T) {
	truths := []Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)}}
	preds := []Prediction{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10+1e-12), Score: 1}}
	if v := IoU(preds[0].Box, truths[0].Box, false); !(v < 1 && v >= 1-1e-10) {
		t.Fatalf("IoU %v, want just below 1", v)
	}
	r := mustEval(t, truths, preds, Options{Protocol: COCO, IoUs: []float64{1}})
	if !r.PredTP[0] || r.MAP != 1 {
		t.Errorf("COCO at threshold 1: TP %v AP %v, want a match and AP 1", r.PredTP[0], r.MAP)
	}
	// VOC keeps the plain comparison: IoU < 1 misses threshold 1.
	if r := mustEval(t, truths, preds, Options{Protocol: VOC, IoU: 1}); r.PredTP[0] {
		t.Error("VOC at threshold 1 matched IoU below 1")
	}
}

// TestIoUConventions: pixel-inclusive boxes 0..9 are 10 pixels wide.
// {0,0,9,9} and {0,0,4,9}: 50/100 = 0.5 inclusive; continuous 36/81.
// common practice
func TestIoUConventions(t *testing.T) {
	a, b := bx(0, 0, 9, 9), bx(0, 0, 4, 9)
	if got := IoU(a, b, true); got != 0.5 {
		t.Errorf("plusOne IoU = %v, want 0.5", got)
	}
	if got := IoU(a, b, false); got != 36.0/81 {
		t.Errorf("continuous IoU = %v, want 36/81", got)
	}
	if got := IoU(bx(0, 0, 1, 1), bx(1, 0, 2, 1), false); got != 0 {
		t.Errorf("touching boxes IoU = %v, want 0", got)
	}
}

// TestThresholdEqualityCounts: IoU exactly 0.5 (1 of 2) at threshold 0.5 is
// a match under both protocols.
func TestThresholdEqualityCounts(t *testing.T) {
	truths := []Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 2, 1)}}
	preds := []Prediction{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 1, 1), Score: 1}}
	for _, p := range []Protocol{VOC, COCO} {
		r := mustEval(t, truths, preds, Options{Protocol: p, IoUs: []float64{0.5}})
		if !r.PredTP[0] {
			t.Errorf("%v: IoU 0.5 at threshold 0.5 is not a match", p)
		}
	}
}

// TestStableTies: equal scores on one image keep input order, so the first
// listed of two identical predictions takes the truth (across images COCO
// ranks equal scores by image ID: TestCOCOevalDifferences).
func TestStableTies(t *testing.T) {
	truths := []Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)}}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.5, Ref: 10},
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.5, Ref: 11},
	}
	for _, p := range []Protocol{VOC, COCO} {
		r := mustEval(t, truths, preds, Options{Protocol: p})
		if !r.PredTP[0] || r.PredTP[1] {
			t.Errorf("%v: TP flags %v, want the first listed", p, r.PredTP)
		}
		slices.Reverse(preds)
		r = mustEval(t, truths, preds, Options{Protocol: p})
		if !r.PredTP[0] || r.PredTP[1] || preds[0].Ref != 11 {
			t.Errorf("%v reversed: TP flags %v, want the first listed", p, r.PredTP)
		}
		slices.Reverse(preds)
	}
}

// TestRankByScore: the radix ranking equals a stable comparison sort by
// descending score (COCO: then by image ID) on scores with ties, negative
// values, ±0, tiny and huge magnitudes, for list lengths around the sort's
// edge cases; and the scores it hands on are the predictions' own, bit for
// bit (−0 included).
func TestRankByScore(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 9))
	pool := []float64{0, math.Copysign(0, -1), 1, -1, 0.5, -0.5, 1e-300, -1e-300, 1e300, -1e300,
		math.SmallestNonzeroFloat64, -math.MaxFloat64, math.MaxFloat64, 0.25, 0.75}
	for run, n := range []int{0, 1, 2, 3, 17, 300, 5000, 300, 5000} {
		preds := make([]Prediction, n)
		for i := range preds {
			s := r.Float64()*2 - 1
			if r.IntN(3) == 0 {
				s = pool[r.IntN(len(pool))]
			}
			if run < 7 && s == 0 {
				s = 0 // −0 only in the last two runs: both ways of handing on scores
			}
			preds[i] = Prediction{ImageID: int64(r.IntN(7)), Score: s}
		}
		for _, coco := range []bool{false, true} {
			want := make([]int32, n)
			for i := range want {
				want[i] = int32(i)
			}
			slices.SortStableFunc(want, func(a, b int32) int {
				if c := cmp.Compare(preds[b].Score, preds[a].Score); c != 0 {
					return c
				}
				if coco {
					return cmp.Compare(preds[a].ImageID, preds[b].ImageID)
				}
				return 0
			})
			got, scores := rankByScore(preds, coco)
			if !slices.Equal(got, want) {
				t.Errorf("n %d coco %v: order %v, want %v", n, coco, got, want)
			}
			for r, i := range got {
				if math.Float64bits(scores[r]) != math.Float64bits(preds[i].Score) {
					t.Errorf("n %d coco %v: rank %d score %v, want %v", n, coco, r, scores[r], preds[i].Score)
				}
			}
		}
	}
}

// TestVOCDuplicate: a second prediction on a taken truth is a false positive
// with no match; and VOC does not fall back to another truth when the
// best-overlapping one is taken, while COCO does.
func TestVOCDuplicate(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)},
		{ImageID: 1, ClassID: 1, Box: bx(4, 0, 14, 10)},
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.9},
		// IoU 8/12 with truth 0, 6/14 with truth 1.
		{ImageID: 1, ClassID: 1, Box: bx(2, 0, 12, 10), Score: 0.8},
	}
	r := mustEval(t, truths, preds, Options{Protocol: VOC, IoU: 0.4})
	if !r.PredTP[0] || r.PredTP[1] || r.PredMatch[1] != -1 || r.Classes[0].FP != 1 {
		t.Errorf("VOC: TP %v match %v FP %d, want the second a duplicate FP", r.PredTP, r.PredMatch, r.Classes[0].FP)
	}
	if r.TruthMatched[1] {
		t.Error("VOC: truth 1 matched")
	}
	r = mustEval(t, truths, preds, Options{Protocol: COCO, IoUs: []float64{0.4}})
	if !r.PredTP[1] || r.PredMatch[1] != 1 {
		t.Errorf("COCO: TP %v match %v, want the second to take truth 1", r.PredTP, r.PredMatch)
	}
}

// TestVOCDifficult: a match to a difficult truth counts neither way and the
// truth is not counted, so AP is that of the other truth alone.
func TestVOCDifficult(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)},
		{ImageID: 1, ClassID: 1, Box: bx(50, 50, 60, 60), Difficult: true},
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(50, 50, 60, 60), Score: 0.9},
		{ImageID: 1, ClassID: 1, Box: bx(50, 50, 60, 60), Score: 0.85}, // duplicate on difficult: still ignored
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.8},
	}
	r := mustEval(t, truths, preds, Options{})
	c := r.Classes[0]
	if c.Truths != 1 || c.TP != 1 || c.FP != 0 || c.AP != 1 || len(c.Curve) != 1 {
		t.Errorf("truths %d TP %d FP %d AP %v curve %v; want 1 1 0 1 and one point", c.Truths, c.TP, c.FP, c.AP, c.Curve)
	}
	if !r.PredIgnored[0] || !r.PredIgnored[1] || r.PredMatch[0] != 1 {
		t.Errorf("ignored %v match %v", r.PredIgnored, r.PredMatch)
	}
}

// TestCOCOCrowd: a crowd truth absorbs every prediction inside it (overlap
// over the prediction's own area) and is ignored; the counted truth is
// still found.
func TestCOCOCrowd(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 100, 100), Crowd: true},
		{ImageID: 1, ClassID: 1, Box: bx(200, 0, 210, 10)},
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.9},
		{ImageID: 1, ClassID: 1, Box: bx(20, 20, 30, 30), Score: 0.8},
		{ImageID: 1, ClassID: 1, Box: bx(60, 60, 80, 80), Score: 0.7},
		{ImageID: 1, ClassID: 1, Box: bx(200, 0, 210, 10), Score: 0.6},
		{ImageID: 1, ClassID: 1, Box: bx(300, 0, 310, 10), Score: 0.5},
	}
	r := mustEval(t, truths, preds, Options{Protocol: COCO, Interpolation: Point101})
	c := r.Classes[0]
	if c.Truths != 1 || c.TP != 1 || c.FP != 1 {
		t.Errorf("truths %d TP %d FP %d, want 1 1 1", c.Truths, c.TP, c.FP)
	}
	for i := 0; i < 3; i++ {
		if !r.PredIgnored[i] || r.PredMatch[i] != 0 {
			t.Errorf("prediction %d: ignored %v match %d, want absorbed by the crowd", i, r.PredIgnored[i], r.PredMatch[i])
		}
	}
	// The TP comes first among counted predictions: AP 1 at every threshold.
	if c.AP != 1 || r.MAP != 1 {
		t.Errorf("AP %v mAP %v, want 1", c.AP, r.MAP)
	}
}

// TestCOCOAreaRange: with Small, a large truth is ignored (a prediction on
// it too), an unmatched large prediction is ignored, an unmatched small one
// is a false positive. Thresholds 32² and 96² from the COCO detection
// evaluation's area ranges (from memory).
func TestCOCOAreaRange(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 20, 20)},       // 400: small
		{ImageID: 1, ClassID: 1, Box: bx(100, 100, 300, 300)}, // 40000: large
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 20, 20), Score: 0.9},
		{ImageID: 1, ClassID: 1, Box: bx(100, 100, 300, 300), Score: 0.8},
		{ImageID: 1, ClassID: 1, Box: bx(500, 500, 700, 700), Score: 0.7}, // large, unmatched
		{ImageID: 1, ClassID: 1, Box: bx(900, 900, 905, 905), Score: 0.6}, // small, unmatched
	}
	r := mustEval(t, truths, preds, Options{Protocol: COCO, AreaRange: Small})
	c := r.Classes[0]
	if c.Truths != 1 || c.TP != 1 || c.FP != 1 {
		t.Errorf("small: truths %d TP %d FP %d, want 1 1 1", c.Truths, c.TP, c.FP)
	}
	if want := []bool{false, true, true, false}; !slices.Equal(r.PredIgnored, want) {
		t.Errorf("small: ignored %v, want %v", r.PredIgnored, want)
	}
	r = mustEval(t, truths, preds, Options{Protocol: COCO, AreaRange: Large})
	c = r.Classes[0]
	if c.Truths != 1 || c.TP != 1 || c.FP != 1 || !r.PredTP[1] || r.PredTP[0] || !r.PredIgnored[0] || !r.PredIgnored[3] {
		t.Errorf("large: truths %d TP %d FP %d TP flags %v", c.Truths, c.TP, c.FP, r.PredTP)
	}
	r = mustEval(t, truths, preds, Options{Protocol: COCO, AreaRange: Medium})
	if c := r.Classes[0]; c.Truths != 0 || c.TP != 0 || c.FP != 0 || !math.IsNaN(c.AP) || !math.IsNaN(r.MAP) {
		t.Errorf("medium: truths %d TP %d FP %d AP %v mAP %v", c.Truths, c.TP, c.FP, c.AP, r.MAP)
	}
	// COCOeval's ranges include both bounds (its Params.areaRng [0, 32²],
	// [32², 96²], [96², 1e5²] and [0, 1e5²] for all, from memory): 32² is
	// small and medium, 96² medium and large (TestCOCOevalDifferences
	// checks this against the re-implementation). Before Evaluate followed the
	// tool, small and large excluded the bounds.
	for _, c := range []struct {
		a    AreaRange
		area float64
		want bool
	}{
		{Small, 32 * 32, true}, {Small, 32*32 + 1e-9, false},
		{Medium, 32*32 - 1e-9, false}, {Medium, 32 * 32, true}, {Medium, 96 * 96, true}, {Medium, 96*96 + 1e-9, false},
		{Large, 96*96 - 1e-9, false}, {Large, 96 * 96, true}, {Large, 1e10, true}, {Large, 1e10 + 1e-3, false},
		{All, 0, true}, {All, 1e10, true}, {All, 1e10 + 1e-3, false},
	} {
		if got := c.a.contains(c.area); got != c.want {
			t.Errorf("%v contains %v: %v, want %v", c.a, c.area, got, c.want)
		}
	}
}

// TestCOCOMaxDetections: only the highest-scoring MaxDetections per image
// and class are counted, as COCOeval cuts them (maxDets per image and
// category, from memory; TestCOCOevalDifferences checks it against the
// re-implementation). Before Evaluate followed the tool, the cap was per image
// over all classes, and the class-2 box here used up one of image 1's two
// places.
func TestCOCOMaxDetections(t *testing.T) {
	truths := []Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)}, {ImageID: 2, ClassID: 1, Box: bx(0, 0, 10, 10)}}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.1}, // lowest of class 1 on image 1: dropped
		{ImageID: 1, ClassID: 2, Box: bx(50, 50, 60, 60), Score: 0.9},
		{ImageID: 1, ClassID: 1, Box: bx(80, 80, 90, 90), Score: 0.5},
		{ImageID: 1, ClassID: 1, Box: bx(80, 0, 90, 10), Score: 0.3},
		{ImageID: 1, ClassID: 2, Box: bx(50, 0, 60, 10), Score: 0.2}, // class 2's second: kept
		{ImageID: 2, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.05}, // own image: kept
	}
	r := mustEval(t, truths, preds, Options{Protocol: COCO, MaxDetections: 2})
	if want := []bool{true, false, false, false, false, false}; !slices.Equal(r.PredIgnored, want) {
		t.Errorf("ignored %v, want %v", r.PredIgnored, want)
	}
	if r.Classes[0].TP != 1 || r.Classes[0].FP != 2 || r.Classes[1].FP != 2 {
		t.Errorf("class 1 TP %d FP %d, class 2 FP %d; want 1 2 2", r.Classes[0].TP, r.Classes[0].FP, r.Classes[1].FP)
	}
	r = mustEval(t, truths, preds, Options{Protocol: COCO, MaxDetections: -1})
	if r.Classes[0].TP != 2 {
		t.Errorf("no cap: TP %d, want 2", r.Classes[0].TP)
	}
}

// TestOperatingPoint: precision, recall and F1 at a score threshold, and the
// best F1, on a hand list. Class 1, 3 truths: scores .9 TP, .8 FP, .7 TP,
// .6 FP. At .75: P 1/2, R 1/3, F1 2·(1/2)(1/3)/(5/6) = 0.4. Cut at .7:
// P 2/3, R 2/3, F1 2/3 (the best).
func TestOperatingPoint(t *testing.T) {
	var truths []Truth
	for i := int64(0); i < 3; i++ {
		truths = append(truths, Truth{ImageID: i, ClassID: 1, Box: bx(0, 0, 10, 10)})
	}
	preds := []Prediction{
		{ImageID: 0, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.9},
		{ImageID: 0, ClassID: 1, Box: bx(50, 0, 60, 10), Score: 0.8},
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.7},
		{ImageID: 1, ClassID: 1, Box: bx(50, 0, 60, 10), Score: 0.6},
	}
	r := mustEval(t, truths, preds, Options{ScoreThreshold: 0.75})
	c := r.Classes[0]
	if c.Precision != 0.5 || c.Recall != 1.0/3 || math.Abs(c.F1-0.4) > 1e-12 {
		t.Errorf("at .75: P %v R %v F1 %v", c.Precision, c.Recall, c.F1)
	}
	if math.Abs(c.BestF1-2.0/3) > 1e-12 || c.BestF1Threshold != 0.7 {
		t.Errorf("best F1 %v at %v, want 2/3 at 0.7", c.BestF1, c.BestF1Threshold)
	}
	if r.Precision != c.Precision || r.BestF1 != c.BestF1 {
		t.Errorf("pooled P %v best F1 %v differ from the only class", r.Precision, r.BestF1)
	}
	want := []Point{{1.0 / 3, 1, 0.9}, {1.0 / 3, 0.5, 0.8}, {2.0 / 3, 2.0 / 3, 0.7}, {2.0 / 3, 0.5, 0.6}}
	if !slices.Equal(c.Curve, want) {
		t.Errorf("curve %v, want %v", c.Curve, want)
	}
}

// TestMeans: mAP averages only classes with ground truth; a class with only
// predictions is listed with AP NaN.
func TestMeans(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)},
		{ImageID: 1, ClassID: 2, Box: bx(20, 0, 30, 10)},
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.9},
		{ImageID: 1, ClassID: 3, Box: bx(0, 0, 10, 10), Score: 0.9},
	}
	r := mustEval(t, truths, preds, Options{})
	if len(r.Classes) != 3 || r.Classes[0].AP != 1 || r.Classes[1].AP != 0 || !math.IsNaN(r.Classes[2].AP) || r.MAP != 0.5 {
		t.Errorf("classes %+v mAP %v", r.Classes, r.MAP)
	}
}

func TestEvaluateErrors(t *testing.T) {
	good := []Prediction{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 1, 1), Score: 1}}
	for name, c := range map[string]struct {
		truths []Truth
		preds  []Prediction
		opt    Options
	}{
		"protocol":      {nil, good, Options{Protocol: 7}},
		"interpolation": {nil, good, Options{Interpolation: 9}},
		"iou":           {nil, good, Options{IoU: 1.5}},
		"ious":          {nil, good, Options{Protocol: COCO, IoUs: []float64{}}},
		"score":         {nil, []Prediction{{Box: bx(0, 0, 1, 1), Score: math.NaN()}}, Options{}},
		"box":           {[]Truth{{Box: bx(1, 1, 0, 0)}}, good, Options{}},
	} {
		if _, err := Evaluate(c.truths, c.preds, c.opt); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

func TestParse(t *testing.T) {
	for s, want := range map[string]Protocol{"voc": VOC, "COCO": COCO} {
		if got, err := ParseProtocol(s); err != nil || got != want {
			t.Errorf("ParseProtocol(%q) = %v, %v", s, got, err)
		}
	}
	for s, want := range map[string]Interpolation{"all": AllPoint, "11": ElevenPoint, "101": Point101, "step": Step} {
		if got, err := ParseInterpolation(s); err != nil || got != want || got.String() != s {
			t.Errorf("ParseInterpolation(%q) = %v, %v", s, got, err)
		}
	}
	if _, err := ParseProtocol("yolo"); err == nil {
		t.Error("ParseProtocol accepted yolo")
	}
	if _, err := ParseInterpolation("12"); err == nil {
		t.Error("ParseInterpolation accepted 12")
	}
}

// TestConfusionMatrix on a hand scene, classes cat (1) and dog (2):
// image 1: cat truth found as cat, dog truth found as cat, a second cat
// truth missed, a dog prediction on empty ground (false alarm);
// image 2: a dog found as dog, a class-3 pair left out.
func TestConfusionMatrix(t *testing.T) {
	truths := []Truth{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Ref: 100},
		{ImageID: 1, ClassID: 2, Box: bx(20, 0, 30, 10), Ref: 101},
		{ImageID: 1, ClassID: 1, Box: bx(40, 0, 50, 10), Ref: 102},
		{ImageID: 2, ClassID: 2, Box: bx(0, 0, 10, 10), Ref: 103},
		{ImageID: 2, ClassID: 3, Box: bx(50, 0, 60, 10), Ref: 104},
	}
	preds := []Prediction{
		{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 0.9, Ref: 200},
		{ImageID: 1, ClassID: 1, Box: bx(21, 0, 31, 10), Score: 0.8, Ref: 201},
		{ImageID: 1, ClassID: 2, Box: bx(80, 80, 90, 90), Score: 0.7, Ref: 202},
		{ImageID: 2, ClassID: 2, Box: bx(1, 0, 11, 10), Score: 0.6, Ref: 203},
		{ImageID: 2, ClassID: 3, Box: bx(50, 0, 60, 10), Score: 0.6, Ref: 204},
	}
	cf := ConfusionMatrix(truths, preds, []int64{1, 2}, 0.5, false)
	want := [][]int{
		{1, 0, 1}, // cat: as cat, as dog, missed
		{1, 1, 0}, // dog
		{0, 1, 0}, // false alarm
	}
	for r := range want {
		if !slices.Equal(cf.Counts[r], want[r]) {
			t.Errorf("row %d = %v, want %v", r, cf.Counts[r], want[r])
		}
	}
	if got := cf.Cells[1][0]; len(got) != 1 || got[0] != [2]int64{101, 201} {
		t.Errorf("dog-as-cat cell %v", got)
	}
	if got := cf.Cells[0][2]; len(got) != 1 || got[0] != [2]int64{102, -1} {
		t.Errorf("missed cat cell %v", got)
	}
	if got := cf.Cells[2][1]; len(got) != 1 || got[0] != [2]int64{-1, 202} {
		t.Errorf("false alarm cell %v", got)
	}
}

// TestConfusionNoOverlap: with the threshold left at 0, disjoint boxes still
// do not match.
func TestConfusionNoOverlap(t *testing.T) {
	cf := ConfusionMatrix([]Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 1, 1)}},
		[]Prediction{{ImageID: 1, ClassID: 1, Box: bx(5, 5, 6, 6), Score: 1}}, []int64{1}, 0, false)
	if cf.Counts[0][0] != 0 || cf.Counts[0][1] != 1 || cf.Counts[1][0] != 1 {
		t.Errorf("counts %v, want one missed and one false alarm", cf.Counts)
	}
}

// TestEvaluateEmpty: no input, only truths, or only predictions, under both
// protocols: no panic, AP NaN without truths and 0 without predictions.
func TestEvaluateEmpty(t *testing.T) {
	truths := []Truth{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10)}}
	preds := []Prediction{{ImageID: 1, ClassID: 1, Box: bx(0, 0, 10, 10), Score: 1}}
	for _, p := range []Protocol{VOC, COCO} {
		r := mustEval(t, nil, nil, Options{Protocol: p})
		if len(r.Classes) != 0 || !math.IsNaN(r.MAP) {
			t.Errorf("%v, nothing: classes %v mAP %v", p, r.Classes, r.MAP)
		}
		if r := mustEval(t, truths, nil, Options{Protocol: p}); len(r.Classes) != 1 || r.MAP != 0 || r.TruthMatched[0] {
			t.Errorf("%v, truths only: %+v", p, r)
		}
		if r := mustEval(t, nil, preds, Options{Protocol: p}); len(r.Classes) != 1 || !math.IsNaN(r.MAP) || r.Classes[0].FP != 1 || r.PredMatch[0] != -1 {
			t.Errorf("%v, predictions only: %+v", p, r)
		}
	}
}

// TestParallelSameResult: the work shared out over goroutines gives the
// same result, to the bit, as on one: a scene above the size where the
// sharing starts, both protocols, GOMAXPROCS 1 and 4.
func TestParallelSameResult(t *testing.T) {
	truths, preds := scene(11, 300, 3000, 30000, 5, 20)
	for _, opt := range []Options{{Protocol: COCO, Interpolation: Point101}, {Protocol: VOC, Interpolation: AllPoint}} {
		prev := runtime.GOMAXPROCS(1)
		one := mustEval(t, truths, preds, opt)
		runtime.GOMAXPROCS(4)
		four := mustEval(t, truths, preds, opt)
		runtime.GOMAXPROCS(prev)
		if math.IsNaN(one.MAP) || !reflect.DeepEqual(one, four) {
			t.Errorf("%v: results differ between 1 and 4 goroutines (mAP %v, %v)", opt.Protocol, one.MAP, four.MAP)
		}
	}
}

// TestBestF1Scan: the per-class scan gives what bestF1 gives on the whole
// list, on random ranked lists with many tied scores.
func TestBestF1Scan(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 5))
	for c := 0; c < 300; c++ {
		list := make([]scored, r.IntN(30))
		for i := range list {
			list[i] = scored{float64(r.IntN(6)) / 5, r.IntN(2) == 0}
		}
		slices.SortStableFunc(list, func(a, b scored) int { return cmp.Compare(b.score, a.score) })
		n := 1 + r.IntN(20)
		var b bestF1Scan
		tp, fp := 0, 0
		for _, s := range list {
			b.next(s.score, tp, fp, n)
			if s.tp {
				tp++
			} else {
				fp++
			}
		}
		b.next(math.NaN(), tp, fp, n)
		if f, th := bestF1(list, n); f != b.f1 || th != b.threshold {
			t.Fatalf("list %v, %d truths: scan %v at %v, bestF1 %v at %v", list, n, b.f1, b.threshold, f, th)
		}
	}
}
