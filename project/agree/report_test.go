package agree

import (
	"math"
	"testing"

	"boxwright/project"
)

func sq(x0, y0, x1, y1 float64) project.Box { return project.Rect(x0, y0, x1, y1) }

// A scene worked out by hand: one class disagreement on image 1, one box
// only A drew on image 2.
func scene() []ImageLabels {
	return []ImageLabels{
		{ImageID: 1, Name: "one", By: []Labels{
			{Boxes: []project.Box{sq(0, 0, 10, 10), sq(20, 20, 30, 30)}, Classes: []int64{1, 2}},
			{Boxes: []project.Box{sq(0, 0, 10, 10), sq(20, 20, 30, 30)}, Classes: []int64{1, 1}},
		}},
		{ImageID: 2, Name: "two", By: []Labels{
			{Boxes: []project.Box{sq(0, 0, 10, 10)}, Classes: []int64{1}},
			{},
		}},
		{ImageID: 3, Name: "empty", By: []Labels{{}, {}}},
	}
}

func TestComparePairHandScene(t *testing.T) {
	r := ComparePair(scene(), 0, 1, Options{Classes: []int64{1, 2}})
	// Worked out by hand.
	if r.Images != 2 || r.NA != 3 || r.NB != 2 || r.Matched != 2 || r.OnlyA != 1 || r.OnlyB != 0 {
		t.Fatalf("counts %+v", r)
	}
	if r.F1 != 0.8 { // 2·2 / (3 + 2)
		t.Errorf("F1 %v, want 0.8", r.F1)
	}
	if r.IoU.Mean != 1 || r.IoU.Median != 1 || r.IoU.Histogram[HistogramBins-1] != 2 {
		t.Errorf("IoU summary %+v", r.IoU)
	}
	// Rows A's class, columns B's: (1,1) and (2,1).
	if r.Confusion[0][0] != 1 || r.Confusion[1][0] != 1 || r.Confusion[0][1] != 0 || r.Confusion[1][1] != 0 {
		t.Errorf("confusion %v", r.Confusion)
	}
	// po = 1/2, pe = (1·2 + 1·0)/4 = 1/2: kappa 0.
	if math.Abs(r.Kappa.Kappa) > 1e-12 {
		t.Errorf("kappa %v, want 0", r.Kappa.Kappa)
	}
	// The unmatched box of class 1 is A's answer against B's "no object".
	if r.ConfusionWithNoObject[0][2] != 1 || r.ConfusionWithNoObject[2][2] != 0 {
		t.Errorf("no-object confusion %v", r.ConfusionWithNoObject)
	}
	c1 := r.PerClass[0]
	if c1.Class != 1 || c1.A != 2 || c1.B != 2 || c1.Agreed != 1 || c1.Confused != 1 || c1.OnlyA != 1 || c1.F1 != 0.5 {
		t.Errorf("class 1 %+v", c1)
	}
	// Both images have one error; the one without any match comes first.
	if len(r.PerImage) != 2 || r.PerImage[0].Name != "two" || r.PerImage[0].Errors != 1 || r.PerImage[1].ClassDisagreements != 1 {
		t.Errorf("ranking %+v", r.PerImage)
	}
}

func TestCompareManyAnnotators(t *testing.T) {
	ims := scene()
	// A third annotator agrees with A on image 1 only.
	ims[0].By = append(ims[0].By, ims[0].By[0])
	ims[1].By = append(ims[1].By, Labels{})
	ims[2].By = append(ims[2].By, Labels{})
	r, err := Compare(ims, 3, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Pairs) != 3 || r.Objects != 3 {
		t.Fatalf("pairs %d objects %d", len(r.Pairs), r.Objects)
	}
	if r.Fleiss != nil {
		t.Errorf("Fleiss' kappa given although image 2's box was missed by two annotators")
	}
	if math.IsNaN(r.Alpha.Alpha) {
		t.Errorf("alpha undefined: %v", r.Alpha.Notes)
	}
	if w := r.Worst(1); len(w) != 1 || w[0].Errors < 2 {
		t.Errorf("worst %+v", w)
	}
	if _, err := Compare(ims, 1, Options{}, nil); err == nil {
		t.Errorf("one annotator accepted")
	}
}

// Hyndman & Fan (1996) definition 7 (NumPy's default "linear" method),
// worked by hand: h = (n−1)p.
func TestQuantileDefinition7(t *testing.T) {
	x := []float64{0.1, 0.2, 0.3, 0.4}
	for _, c := range []struct{ p, want float64 }{{0, 0.1}, {0.1, 0.13}, {0.5, 0.25}, {0.9, 0.37}, {1, 0.4}} {
		if got := Quantile(x, c.p); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("Quantile(%v) = %v, want %v", c.p, got, c.want)
		}
	}
	if !math.IsNaN(Quantile(nil, 0.5)) {
		t.Errorf("quantile of nothing should be NaN")
	}
}

// With two annotators the objects are taken from the pair's matches; they
// must be what GroupObjects finds.
func TestTwoAnnotatorObjectsMatchGrouping(t *testing.T) {
	ims := reportBenchImages(300, 2, 20)
	r, err := Compare(ims, 2, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := 0
	for _, g := range groupAll(ims, 2, DefaultThreshold, false) {
		want += len(g)
	}
	if r.Objects != want {
		t.Errorf("%d objects from the pair, GroupObjects finds %d", r.Objects, want)
	}
}

// Images are told apart by their place in the list, not by ImageID: a
// caller that leaves the IDs zero gets every image's objects (the hand
// scene has 3: one per box of A, B's two matched), as with IDs.
func TestTwoAnnotatorObjectsWithoutImageIDs(t *testing.T) {
	ims := scene()
	for i := range ims {
		ims[i].ImageID = 0
	}
	r, err := Compare(ims, 2, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Objects != 3 {
		t.Errorf("%d objects on images without IDs, want 3", r.Objects)
	}
	withIDs, _ := Compare(scene(), 2, Options{}, nil)
	if r.Alpha.Alpha != withIDs.Alpha.Alpha || r.Alpha.Units != withIDs.Alpha.Units {
		t.Errorf("alpha %+v without image IDs, %+v with", r.Alpha, withIDs.Alpha)
	}
}

// Class IDs far apart (rated through a map) and many classes (seen
// through a map) give the figures of the same scene with small IDs:
// agreement does not depend on how classes are numbered.
func TestCompareClassNumbering(t *testing.T) {
	relabel := func(ims []ImageLabels, f func(int64) int64) []ImageLabels {
		for i := range ims {
			for a := range ims[i].By {
				cs := append([]int64(nil), ims[i].By[a].Classes...)
				for k := range cs {
					cs[k] = f(cs[k])
				}
				ims[i].By[a].Classes = cs
			}
		}
		return ims
	}
	base := reportBenchImages(400, 2, 20)
	many := reportBenchImages(400, 2, 20)
	// 40 classes: each image's classes shifted by its index.
	for i := range base {
		shift := int64(i%10) * 4
		for a := range base[i].By {
			for k := range base[i].By[a].Classes {
				base[i].By[a].Classes[k] += shift
				many[i].By[a].Classes[k] += shift
			}
		}
	}
	want, err := Compare(base, 2, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Compare(relabel(many, func(c int64) int64 { return c * 1_000_000_007 }), 2, Options{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(want.Pairs[0].Classes) != 40 {
		t.Fatalf("%d classes, want 40", len(want.Pairs[0].Classes))
	}
	if got.Alpha.Alpha != want.Alpha.Alpha || got.Objects != want.Objects || got.Pairs[0].Kappa.Kappa != want.Pairs[0].Kappa.Kappa {
		t.Errorf("far-apart class IDs: alpha %v, %d objects, kappa %v; small IDs: %v, %d, %v",
			got.Alpha.Alpha, got.Objects, got.Pairs[0].Kappa.Kappa, want.Alpha.Alpha, want.Objects, want.Pairs[0].Kappa.Kappa)
	}
}
