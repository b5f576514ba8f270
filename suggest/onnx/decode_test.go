package onnx

import (
	"errors"
	"strings"
	"testing"

	"boxwright/project"
)

// Auto-detection from shapes alone, with and without the number of
// classes known, and the ambiguous shapes refused with what fits.
func TestPlanLayoutFromShapes(t *testing.T) {
	one := func(shape ...int64) []RawOutput { return []RawOutput{{Name: "out", Shape: shape}} }
	cases := []struct {
		outs       []RawOutput
		classes    int
		layout     string
		transposed bool
		n, c       int
		fails      string
	}{
		{one(1, 300, 7), 3, LayoutCentreScores, false, 300, 3, ""},
		{one(1, 7, 300), 3, LayoutCentreScores, true, 300, 3, ""},
		{one(1, 300, 8), 3, LayoutCentreObjectness, false, 300, 3, ""},
		{one(300, 8), 3, LayoutCentreObjectness, false, 300, 3, ""},
		{one(1, 20, 6), 3, LayoutDetections, false, 20, 0, ""},
		{[]RawOutput{{Name: "b", Shape: []int64{1, 50, 4}}, {Name: "s", Shape: []int64{1, 50, 3}}}, 0, LayoutCornersScores, false, 50, 3, ""},
		{[]RawOutput{{Name: "b", Shape: []int64{1, 50, 4}}, {Name: "s", Shape: []int64{1, 50}}, {Name: "i", Shape: []int64{1, 50}}}, 3, LayoutCornersScores, false, 50, 0, ""},
		// Without names, one tensor cannot say whether it holds an objectness.
		{one(1, 300, 8), 0, "", false, 0, 0, "fit more than one layout: centre-objectness-scores (3 classes) or centre-scores (4 classes)"},
		// Six values: a detection, or a box and two class scores.
		{one(1, 20, 6), 2, "", false, 0, 0, "fit more than one layout"},
		{one(1, 7, 5, 5), 3, "", false, 0, 0, "out [1×7×5×5] fit no output layout"},
		{one(1, 300, 9), 3, "", false, 0, 0, "fit no output layout"},
	}
	for i, c := range cases {
		p, err := planLayout(LayoutAuto, c.outs, c.classes)
		if c.fails != "" {
			if err == nil || !strings.Contains(err.Error(), c.fails) || !errors.Is(err, project.ErrInvalid) {
				t.Errorf("case %d: got %+v, %v; want an error with %q", i, p, err, c.fails)
			}
			continue
		}
		if err != nil || p.layout != c.layout || p.transposed != c.transposed || p.n != c.n || p.classes != c.c {
			t.Errorf("case %d: got %+v, %v; want %s transposed=%v n=%d classes=%d", i, p, err, c.layout, c.transposed, c.n, c.c)
		}
	}
	// A layout named by the user settles what auto cannot.
	if p, err := planLayout(LayoutCentreScores, one(1, 300, 8), 0); err != nil || p.classes != 4 {
		t.Errorf("centre-scores named: %+v %v", p, err)
	}
	_, err := planLayout(LayoutDetections, one(1, 300, 8), 3)
	if err == nil || !strings.Contains(err.Error(), "detections: wants N × 6, found [1×300×8]") {
		t.Errorf("a named layout that does not fit: %v", err)
	}
}

// The centre layouts decode to corners, the objectness multiplies, the
// transposed tensor reads the same; best class or every class that
// passes; normalised boxes scale to the input. The expected values are
// worked by hand from the layout definitions (common practice).
func TestCandidatesByLayout(t *testing.T) {
	// Two candidates, C = 2: (cx, cy, w, h, s0, s1).
	rows := [][]float32{{50, 40, 20, 10, 0.9, 0.3}, {10, 10, 4, 6, 0.2, 0.6}}
	flat := func(rows [][]float32, transpose bool) []float32 {
		var out []float32
		if !transpose {
			for _, r := range rows {
				out = append(out, r...)
			}
			return out
		}
		for j := range rows[0] {
			for _, r := range rows {
				out = append(out, r[j])
			}
		}
		return out
	}
	want := []Candidate{{Box: project.Box{X0: 40, Y0: 35, X1: 60, Y1: 45}, Class: 0, Score: float64(float32(0.9))}, {Box: project.Box{X0: 8, Y0: 7, X1: 12, Y1: 13}, Class: 1, Score: float64(float32(0.6))}}
	for _, tr := range []bool{false, true} {
		shape := []int64{1, 2, 6}
		if tr {
			shape = []int64{1, 6, 2}
		}
		outs := []RawOutput{{Name: "o", Shape: shape, Data: flat(rows, tr)}}
		p, err := planLayout(LayoutCentreScores, outs, 2)
		if err != nil {
			t.Fatal(err)
		}
		got, err := p.candidates(outs, Output{}, 100, 100, 2, 0.25)
		if err != nil || len(got) != 2 || got[0] != want[0] || got[1] != want[1] {
			t.Errorf("transposed=%v: %+v %v, want %+v", tr, got, err, want)
		}
		multi, _ := p.candidates(outs, Output{MultiLabel: true}, 100, 100, 2, 0.25)
		if len(multi) != 3 { // 0.9 and 0.3 of the first, 0.6 of the second
			t.Errorf("multi-label: %+v", multi)
		}
	}
	// Objectness × class score: 0.5 × 0.9 passes 0.25, 0.5 × 0.3 does not.
	obj := []RawOutput{{Name: "o", Shape: []int64{1, 1, 7}, Data: []float32{50, 40, 20, 10, 0.5, 0.9, 0.3}}}
	p, _ := planLayout(LayoutCentreObjectness, obj, 2)
	got, _ := p.candidates(obj, Output{}, 100, 100, 2, 0.25)
	if len(got) != 1 || got[0].Class != 0 || got[0].Score != float64(float32(0.5))*float64(float32(0.9)) {
		t.Errorf("objectness: %+v", got)
	}
	// Normalised corners with class ids; an id outside the names is named.
	cs := []RawOutput{{Name: "boxes", Shape: []int64{1, 2, 4}, Data: []float32{0.1, 0.2, 0.5, 0.6, 0, 0, 0.5, 0.5}},
		{Name: "scores", Shape: []int64{1, 2}, Data: []float32{0.8, 0.9}}, {Name: "ids", Shape: []int64{1, 2}, Data: []float32{2, 1}}}
	p, _ = planLayout(LayoutCornersScores, cs, 3)
	got, err := p.candidates(cs, Output{Normalised: true}, 200, 100, 3, 0.25)
	if err != nil || len(got) != 2 || got[0].Box != (project.Box{X0: float64(float32(0.1)) * 200, Y0: float64(float32(0.2)) * 100, X1: 100, Y1: float64(float32(0.6)) * 100}) || got[0].Class != 2 {
		t.Errorf("normalised corners with ids: %+v %v", got, err)
	}
	if _, err := p.candidates(cs, Output{}, 200, 100, 2, 0.25); err == nil || !strings.Contains(err.Error(), "output ids, row 0: class id 2 is not one of the 2 classes") {
		t.Errorf("class id outside the names: %v", err)
	}
	// Detections: rows with no score are padding.
	ds := []RawOutput{{Name: "dets", Shape: []int64{1, 2, 6}, Data: []float32{1, 2, 30, 40, 0.7, 1, 0, 0, 0, 0, 0, 0}}}
	p, _ = planLayout(LayoutDetections, ds, 0)
	got, err = p.candidates(ds, Output{}, 100, 100, 3, 0)
	if err != nil || len(got) != 1 || got[0].Class != 1 || got[0].Box != (project.Box{X0: 1, Y0: 2, X1: 30, Y1: 40}) {
		t.Errorf("detections: %+v %v", got, err)
	}
}

// Finish maps back through the letterbox, clamps, drops boxes under a
// pixel, suppresses per class and caps, best first.
func TestFinish(t *testing.T) {
	lb := FitLetterbox(200, 100, 100, 100, "letterbox", "centre") // 100×50 at (0, 25): half scale
	cs := []Candidate{
		{Box: project.Box{X0: 10, Y0: 30, X1: 20, Y1: 40}, Class: 0, Score: 0.5},
		{Box: project.Box{X0: 11, Y0: 30, X1: 20, Y1: 40}, Class: 0, Score: 0.9}, // suppresses the first (IoU 0.9)
		{Box: project.Box{X0: 11, Y0: 30, X1: 20, Y1: 40}, Class: 1, Score: 0.4}, // another class: kept
		{Box: project.Box{X0: -10, Y0: 20, X1: 5, Y1: 30}, Class: 1, Score: 0.3}, // clamped to the image
		{Box: project.Box{X0: 50, Y0: 80, X1: 60, Y1: 90}, Class: 1, Score: 0.8}, // in the padding: dropped
	}
	got := Finish(cs, lb, 0.5, 0, 10)
	want := []Detection{
		{Box: project.Box{X0: 22, Y0: 10, X1: 40, Y1: 30}, Class: 0, Score: 0.9},
		{Box: project.Box{X0: 22, Y0: 10, X1: 40, Y1: 30}, Class: 1, Score: 0.4},
		{Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}, Class: 1, Score: 0.3},
	}
	if len(got) != len(want) {
		t.Fatalf("got %+v", got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("%d: got %+v, want %+v", i, got[i], want[i])
		}
	}
	if got := Finish(cs, lb, -1, 0, 2); len(got) != 2 || got[0].Score != 0.9 || got[1].Score != 0.5 {
		t.Errorf("no suppression, capped at 2: %+v", got)
	}
	// Two candidates into the suppression: the best of class 0 and the
	// best of class 1 (the cap comes before the suppression).
	if got := Finish(cs, lb, 0.5, 2, 10); len(got) != 1 || got[0].Score != 0.9 {
		t.Errorf("two candidates, one in the image: %+v", got)
	}
}

// Class names from metadata: a JSON list, an index → name JSON object,
// and the {0: 'name', …} mapping detectors commonly export (common
// practice), with commas and quotes inside names.
func TestModelClassesFromMetadata(t *testing.T) {
	cases := map[string][]string{
		`["rover", "crate"]`:                         {"rover", "crate"},
		`{"1": "crate", "0": "rover"}`:               {"rover", "crate"},
		`{0: 'rover', 1: 'crate, small', 2: "it's"}`: {"rover", "crate, small", "it's"},
		`{1: 'b', 0: 'a'}`:                           {"a", "b"},
	}
	for v, want := range cases {
		got, _, err := ModelClasses(map[string]string{"names": v})
		if err != nil || strings.Join(got, "|") != strings.Join(want, "|") {
			t.Errorf("%s: %q %v", v, got, err)
		}
	}
	for _, v := range []string{`{0: 'a', 2: 'b'}`, `rover,crate`, `{0 'a'}`, `{}`} {
		if _, _, err := ModelClasses(map[string]string{"names": v}); err == nil {
			t.Errorf("%s was read", v)
		}
	}
}
