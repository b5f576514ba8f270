package suggest

import (
	"math"
	"slices"
	"testing"

	"boxwright/project"
)

// TestNMSHandBuilt checks greedy non-maximum suppression on cases worked by
// hand. common practice: greedy NMS visits boxes by falling score, keeps a
// box unless its IoU with an already kept box exceeds the threshold, and a
// suppressed box suppresses nothing.
func TestNMSHandBuilt(t *testing.T) {
	b := func(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }
	cases := []struct {
		name   string
		boxes  []project.Box
		scores []float64
		iou    float64
		want   []int
	}{
		{"empty", nil, nil, 0.5, nil},
		{"one", []project.Box{b(0, 0, 1, 1)}, []float64{0.3}, 0.5, []int{0}},
		// IoU 1 > 0.99: the lower score goes.
		{"identical boxes", []project.Box{b(0, 0, 10, 10), b(0, 0, 10, 10)}, []float64{0.4, 0.9}, 0.99, []int{1}},
		// Equal scores: input order decides.
		{"identical, tied scores", []project.Box{b(0, 0, 10, 10), b(0, 0, 10, 10), b(0, 0, 10, 10)}, []float64{0.5, 0.5, 0.5}, 0.5, []int{0}},
		// [0,3]x[0,1] and [1,4]x[0,1]: intersection 2, union 3+3-2 = 4, IoU 0.5 exactly, not > 0.5.
		{"IoU at the threshold is kept", []project.Box{b(0, 0, 3, 1), b(1, 0, 4, 1)}, []float64{0.9, 0.8}, 0.5, []int{0, 1}},
		{"IoU just above the threshold", []project.Box{b(0, 0, 3, 1), b(1, 0, 4, 1)}, []float64{0.9, 0.8}, math.Nextafter(0.5, 0), []int{0}},
		// A=[0,3], B=[1,4], C=[2.5,5.5] (height 1): IoU(A,B) = 0.5, IoU(B,C) = 1.5/4.5 = 1/3,
		// IoU(A,C) = 0.5/5.5 = 1/11. At 0.4, B goes and C stays, since B was suppressed.
		{"suppressed boxes suppress nothing", []project.Box{b(0, 0, 3, 1), b(1, 0, 4, 1), b(2.5, 0, 5.5, 1)}, []float64{0.9, 0.8, 0.7}, 0.4, []int{0, 2}},
		// Touching boxes have IoU 0; at threshold 0 only overlap suppresses.
		{"touching at threshold 0", []project.Box{b(0, 0, 1, 1), b(1, 0, 2, 1), b(0.5, 0, 1.5, 1)}, []float64{0.1, 0.2, 0.3}, 0, []int{2}},
		{"disjoint, highest first", []project.Box{b(0, 0, 1, 1), b(5, 5, 6, 6), b(9, 9, 10, 10)}, []float64{0.2, 0.9, 0.5}, 0.5, []int{1, 2, 0}},
		{"NaN score ranks last", []project.Box{b(0, 0, 1, 1), b(0, 0, 1, 1)}, []float64{math.NaN(), 0}, 0.5, []int{1}},
	}
	for _, c := range cases {
		if got := NMS(c.boxes, c.scores, c.iou); !slices.Equal(got, c.want) {
			t.Errorf("%s: NMS = %v, want %v", c.name, got, c.want)
		}
	}
}

// TestFilterApply checks the score cut and that suppression works per image
// and class only.
func TestFilterApply(t *testing.T) {
	box := project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}
	near := project.Box{X0: 1, Y0: 0, X1: 11, Y1: 10} // IoU 90/110 = 0.818 with box
	ps := []Proposal{
		{ImageID: 1, ClassID: 1, Box: box, Score: 0.6, Where: "a"},
		{ImageID: 1, ClassID: 1, Box: near, Score: 0.9, Where: "b"}, // suppresses a
		{ImageID: 1, ClassID: 2, Box: box, Score: 0.5, Where: "c"},  // other class: stays
		{ImageID: 2, ClassID: 1, Box: box, Score: 0.5, Where: "d"},  // other image: stays
		{ImageID: 1, ClassID: 0, ClassName: "bird", Box: box, Score: 0.7, Where: "e"},
		{ImageID: 1, ClassID: 0, ClassName: "fish", Box: box, Score: 0.7, Where: "f"},  // other unknown class: stays
		{ImageID: 1, ClassID: 0, ClassName: "bird", Box: near, Score: 0.8, Where: "g"}, // suppresses e
		{ImageID: 1, ClassID: 1, Box: box, Score: 0.1, Where: "h"},                     // below the score
		{ImageID: 1, ClassID: 1, Box: box, Score: math.NaN(), Where: "i"},              // no score
		{ImageID: 1, ClassID: 2, Box: near, Score: 0.2, Where: "j"},                    // exactly MinScore: kept, then suppressed by c
	}
	where := func(ps []Proposal) string {
		s := ""
		for _, p := range ps {
			s += p.Where
		}
		return s
	}
	kept, below, supp := Filter{MinScore: 0.2, NMS: 0.5}.Apply(ps)
	if w := where(kept); w != "bcdfg" || below != 2 || supp != 3 {
		t.Errorf("Apply = %s, %d below, %d suppressed; want bcdfg, 2, 3", w, below, supp)
	}
	// IoU 0.818 is not above 0.9: nothing suppressed.
	kept, below, supp = Filter{MinScore: 0.2, NMS: 0.9}.Apply(ps)
	if w := where(kept); w != "abcdefgj" || below != 2 || supp != 0 {
		t.Errorf("Apply at 0.9 = %s, %d, %d; want abcdefgj, 2, 0", w, below, supp)
	}
	kept, below, supp = Filter{}.Apply(ps)
	if w := where(kept); w != "abcdefghj" || below != 1 || supp != 0 {
		t.Errorf("Apply off = %s, %d, %d; want abcdefghj, 1, 0", w, below, supp)
	}
}
