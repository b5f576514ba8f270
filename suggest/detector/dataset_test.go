package detector

import (
	"errors"
	"strings"
	"testing"

	"boxwright/project"
)

func cand(id int64, done bool, classes ...int64) Candidate {
	c := Candidate{Image: project.Image{ID: id, Width: 1280, Height: 960, Status: project.StatusStarted}, Done: done}
	for i, k := range classes {
		x := float64(10 + 40*i)
		c.Labels = append(c.Labels, project.Label{ImageID: id, ClassID: k, Box: project.Box{X0: x, Y0: 10, X1: x + 30, Y1: 40}})
	}
	if done {
		c.Image.Status = project.StatusDone
	}
	return c
}

var dsClasses = []project.Class{{ID: 1, Name: "sailboat"}, {ID: 2, Name: "buoy"}, {ID: 3, Name: "kayak"}}

// Prepare uses labelled and done images, never skipped ones; classes with
// too few boxes are skipped (all classes) or refused (named), the split is
// seeded and keeps every image once.
func TestPrepare(t *testing.T) {
	var cs []Candidate
	for i := int64(1); i <= 20; i++ {
		cs = append(cs, cand(i, false, 1, 2))
	}
	cs = append(cs, cand(21, false, 3, 3, 3)) // kayak: 3 boxes only
	cs = append(cs, cand(22, true))           // a done image with nothing on it: a negative
	cs = append(cs, cand(23, false))          // not done, no labels: unused
	skipped := cand(24, false, 1, 1)          // skipped images are never used
	skipped.Image.Status = project.StatusSkipped
	cs = append(cs, skipped)

	ts, err := Prepare(cs, dsClasses, DataOptions{Validation: 0.25, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(ts.Classes, ",") != "sailboat,buoy" || len(ts.Skipped) != 1 || !strings.Contains(ts.Skipped[0], "kayak: 3 boxes, at least 10") {
		t.Errorf("classes %v, skipped %v", ts.Classes, ts.Skipped)
	}
	// 20 labelled + 1 negative; kayak's image has no box of a chosen class
	// but labels, so it is no negative.
	if n := len(ts.Train) + len(ts.Val); n != 21 || len(ts.Val) != 5 {
		t.Errorf("train %d, val %d", len(ts.Train), len(ts.Val))
	}
	if ts.BoxCounts[0] != 20 || ts.BoxCounts[1] != 20 {
		t.Errorf("box counts %v", ts.BoxCounts)
	}
	seen := map[int64]bool{}
	for _, e := range append(append([]Example{}, ts.Train...), ts.Val...) {
		if seen[e.Image.ID] || e.Image.ID == 23 || e.Image.ID == 24 || e.Image.ID == 21 {
			t.Errorf("image %d used wrongly", e.Image.ID)
		}
		seen[e.Image.ID] = true
	}
	again, _ := Prepare(cs, dsClasses, DataOptions{Validation: 0.25, Seed: 3})
	other, _ := Prepare(cs, dsClasses, DataOptions{Validation: 0.25, Seed: 4})
	ids := func(es []Example) string {
		var b strings.Builder
		for _, e := range es {
			b.WriteString(string(rune('A' + e.Image.ID)))
		}
		return b.String()
	}
	if ids(again.Val) != ids(ts.Val) || ids(other.Val) == ids(ts.Val) {
		t.Errorf("split not seeded: %s %s %s", ids(ts.Val), ids(again.Val), ids(other.Val))
	}

	if _, err := Prepare(cs, dsClasses, DataOptions{Classes: []string{"sailboat", "kayak"}}); !errors.Is(err, project.ErrInvalid) ||
		!strings.Contains(err.Error(), "kayak has 3 boxes") || !strings.Contains(err.Error(), "at least 10") {
		t.Errorf("too few boxes: %v", err)
	}
	if _, err := Prepare(cs, dsClasses, DataOptions{Classes: []string{"yacht"}}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("unknown class: %v", err)
	}
	if _, err := Prepare(cs[:1], dsClasses, DataOptions{}); err == nil || !strings.Contains(err.Error(), "nothing to train on") {
		t.Errorf("too little data: %v", err)
	}
	if _, err := Prepare(cs, dsClasses, DataOptions{Validation: 2}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("validation share 2: %v", err)
	}
}

// On 1280-px images, 30-px objects keep 8 px at 384 (30/1280·384 = 9);
// 10-px objects need 1024 and get the largest size; tiny images stop at
// their own size.
func TestChooseInputSize(t *testing.T) {
	ex := func(w, h int, side float64) []Example {
		return []Example{{Image: project.Image{Width: w, Height: h}, Boxes: []project.Box{{X0: 0, Y0: 0, X1: side, Y1: side}}}}
	}
	for _, c := range []struct {
		w, h int
		side float64
		want int
	}{{1280, 960, 30, 384}, {1280, 960, 10, 640}, {300, 200, 4, 320}, {1280, 960, 200, 256}} {
		if got := ChooseInputSize(ex(c.w, c.h, c.side)); got != c.want {
			t.Errorf("%dx%d, %v px objects: %d, want %d", c.w, c.h, c.side, got, c.want)
		}
	}
}
