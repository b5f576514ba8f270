package project

import (
	"math"
	"testing"
)

// The expected values were computed with torchvision.ops.box_iou 0.14.1 and
// shapely 1.8.5 (Polygon.intersection/union areas), both from Debian 12, on
// the same boxes given as x0,y0,x1,y1.
func TestIoUWorkedValues(t *testing.T) {
	cases := []struct {
		name string
		a, b Box
		want float64
	}{
		{"diagonal overlap", Box{0, 0, 10, 10}, Box{5, 5, 15, 15}, 1.0 / 7},
		{"nested", Box{0, 0, 10, 10}, Box{2, 2, 8, 8}, 0.36},
		{"touching edge", Box{0, 0, 10, 10}, Box{10, 0, 20, 10}, 0},
		{"half", Box{0, 0, 100, 100}, Box{0, 0, 100, 50}, 0.5},
		{"fractional", Box{0.5, 0.5, 2.5, 3.5}, Box{1, 1, 4, 2}, 0.2},
	}
	for _, c := range cases {
		for _, order := range [][2]Box{{c.a, c.b}, {c.b, c.a}} {
			got := order[0].IoU(order[1])
			if math.Abs(got-c.want) > 1e-12 {
				t.Errorf("%s: IoU(%v, %v) = %.15f, want %.15f", c.name, order[0], order[1], got, c.want)
			}
		}
	}
}

func TestBoxBasics(t *testing.T) {
	b := Box{1, 2, 4, 8}
	if b.Width() != 3 || b.Height() != 6 || b.Area() != 18 {
		t.Fatalf("size of %v: %g x %g = %g", b, b.Width(), b.Height(), b.Area())
	}
	if got := Rect(4, 8, 1, 2); got != b {
		t.Errorf("Rect with swapped corners = %v, want %v", got, b)
	}
	if got := b.Intersect(Box{3, 0, 10, 5}); got != (Box{3, 2, 4, 5}) {
		t.Errorf("Intersect = %v", got)
	}
	if got := b.Intersect(Box{5, 5, 6, 6}); got != (Box{}) {
		t.Errorf("disjoint Intersect = %v, want zero box", got)
	}
	if got := b.Union(Box{0, 5, 2, 10}); got != (Box{0, 2, 4, 10}) {
		t.Errorf("Union = %v", got)
	}
	if got := (Box{}).Union(b); got != b {
		t.Errorf("empty Union = %v", got)
	}
	if got := (Box{-5, -1, 20, 7}).Clamp(10, 6); got != (Box{0, 0, 10, 6}) {
		t.Errorf("Clamp = %v", got)
	}
	if !(Box{30, 30, 40, 40}).Clamp(10, 10).Empty() {
		t.Errorf("box outside the image should clamp to empty")
	}
	if got := b.Translate(1, -1); got != (Box{2, 1, 5, 7}) {
		t.Errorf("Translate = %v", got)
	}
	if x, y := b.Center(); x != 2.5 || y != 5 {
		t.Errorf("Center = %g,%g", x, y)
	}
	if !b.Contains(1, 8) || b.Contains(0.9, 3) {
		t.Errorf("Contains wrong at the edges")
	}
}

func TestBoxValid(t *testing.T) {
	for _, b := range []Box{{0, 0, 0, 1}, {0, 0, 1, 0}, {2, 0, 1, 1}, {0, 0, math.NaN(), 1}, {0, 0, math.Inf(1), 1}} {
		if b.Valid() {
			t.Errorf("%v reported valid", b)
		}
	}
	if !(Box{0, 0, 0.5, 0.5}).Valid() {
		t.Errorf("small positive box reported invalid")
	}
	if (Box{}).IoU(Box{}) != 0 {
		t.Errorf("IoU of empty boxes should be 0")
	}
}

// The accept rule of review: a suggestion accepted unchanged is "accepted",
// one whose box or class changed is "corrected" (our own rule, shared by
// every backend).
func TestDecisionFinal(t *testing.T) {
	g := Suggestion{ID: 1, ClassID: 3, Box: Box{X0: 1, Y0: 2, X1: 11, Y1: 12}}
	cases := []struct {
		d      Decision
		box    Box
		class  int64
		state  SuggestionState
		origin Origin
	}{
		{Decision{Accept: true}, g.Box, 3, SuggestionAccepted, OriginAccepted},
		{Decision{Accept: true, Box: g.Box, ClassID: 3}, g.Box, 3, SuggestionAccepted, OriginAccepted},
		{Decision{Accept: true, ClassID: 4}, g.Box, 4, SuggestionCorrected, OriginCorrected},
		{Decision{Accept: true, Box: Box{X0: 1, Y0: 2, X1: 12, Y1: 12}}, Box{X0: 1, Y0: 2, X1: 12, Y1: 12}, 3, SuggestionCorrected, OriginCorrected},
	}
	for i, c := range cases {
		box, class, state, origin := c.d.Final(g)
		if box != c.box || class != c.class || state != c.state || origin != c.origin {
			t.Errorf("case %d: got %v %d %s %s", i, box, class, state, origin)
		}
	}
}
