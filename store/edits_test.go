package store

import (
	"errors"
	"testing"

	"boxwright/project"
)

func TestApplyLabelChangeIsAllOrNothing(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 0)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	a, _ := s.AddAnnotator(bg, "ana")
	l := project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, Box: project.Rect(1, 2, 30, 40)}

	ids, err := s.ApplyLabelChange(bg, project.LabelChange{Insert: []project.Label{l, l}})
	if err != nil || len(ids) != 2 {
		t.Fatalf("insert: %v %v", ids, err)
	}
	if got, _ := s.Image(bg, im.ID); got.Status != project.StatusStarted {
		t.Errorf("first label should start the image, status %s", got.Status)
	}
	// A change naming a missing label rolls back entirely.
	moved := l
	moved.ID, moved.Box = ids[0], project.Rect(5, 5, 50, 50)
	_, err = s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1], 999}})
	if !errors.Is(err, project.ErrNotFound) {
		t.Fatalf("want ErrNotFound, got %v", err)
	}
	all, _ := s.Labels(bg, project.LabelFilter{ImageID: im.ID})
	if len(all) != 2 || all[0].Box != l.Box {
		t.Fatalf("failed change left traces: %+v", all)
	}
	// An invalid box is refused before anything changes.
	bad := moved
	bad.Box = project.Box{X0: 5, Y0: 5, X1: 5, Y1: 9}
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{bad}}); !errors.Is(err, project.ErrInvalid) {
		t.Fatalf("want ErrInvalid, got %v", err)
	}
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1]}}); err != nil {
		t.Fatal(err)
	}
	all, _ = s.Labels(bg, project.LabelFilter{ImageID: im.ID})
	if len(all) != 1 || all[0].Box != moved.Box {
		t.Fatalf("after change: %+v", all)
	}
	tal, err := s.LabelTallies(bg)
	if err != nil || len(tal) != 1 || tal[0] != (project.LabelTally{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, N: 1}) {
		t.Fatalf("tallies %+v %v", tal, err)
	}
}

func TestReplaceAnnotatorLabelsSwapsOnlyThatAnnotator(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 0)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	ana, _ := s.AddAnnotator(bg, "ana")
	con, _ := s.AddAnnotator(bg, "consensus")
	keep := project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: ana.ID, Box: project.Rect(1, 1, 9, 9)}
	if _, err := s.AddLabel(bg, keep); err != nil {
		t.Fatal(err)
	}
	old := keep
	old.AnnotatorID = con.ID
	s.AddLabel(bg, old)
	nl := project.Label{ImageID: im.ID, ClassID: c.ID, Box: project.Rect(2, 2, 8, 8), Source: "consensus of ana"}
	if err := s.ReplaceAnnotatorLabels(bg, con.ID, []project.Label{nl, nl}); err != nil {
		t.Fatal(err)
	}
	got, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: con.ID})
	if len(got) != 2 || got[0].Box != nl.Box || got[0].Origin != project.OriginImported || got[0].Source != nl.Source {
		t.Fatalf("consensus labels %+v", got)
	}
	if mine, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: ana.ID}); len(mine) != 1 {
		t.Errorf("another annotator's labels changed: %+v", mine)
	}
	// A bad box refuses the whole swap.
	bad := nl
	bad.Box = project.Box{X0: 3, Y0: 3, X1: 3, Y1: 5}
	if err := s.ReplaceAnnotatorLabels(bg, con.ID, []project.Label{nl, bad}); err == nil {
		t.Fatal("a bad box was accepted")
	}
	if got, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: con.ID}); len(got) != 2 {
		t.Errorf("a refused swap changed the labels: %d", len(got))
	}
}

func TestBoxesByImageGroupsAndFilters(t *testing.T) {
	s := newStore(t)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	a, _ := s.AddAnnotator(bg, "a")
	b, _ := s.AddAnnotator(bg, "b")
	var ims []project.Image
	for i := 0; i < 5; i++ {
		ims = append(ims, addImage(t, s, i))
	}
	// Interleaved rows, so that an image's boxes lie in several ranges.
	var want = map[int64]int{}
	for round := 0; round < 40; round++ {
		im := ims[round%len(ims)]
		ann := a.ID
		if round%3 == 0 {
			ann = b.ID
		}
		if _, err := s.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: ann, Box: project.Rect(float64(round), 0, float64(round)+5, 5)}); err != nil {
			t.Fatal(err)
		}
		if ann == a.ID {
			want[im.ID]++
		}
	}
	got, err := s.BoxesByImage(bg, []int64{a.ID})
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("%d images, want %d", len(got), len(want))
	}
	for i, ib := range got {
		if i > 0 && got[i-1].ImageID >= ib.ImageID {
			t.Errorf("images out of order: %d after %d", ib.ImageID, got[i-1].ImageID)
		}
		if len(ib.Boxes) != want[ib.ImageID] {
			t.Errorf("image %d: %d boxes, want %d", ib.ImageID, len(ib.Boxes), want[ib.ImageID])
		}
		for j, bx := range ib.Boxes {
			if bx.AnnotatorID != a.ID {
				t.Errorf("annotator %d slipped through the filter", bx.AnnotatorID)
			}
			if j > 0 && ib.Boxes[j-1].Box.X0 >= bx.Box.X0 {
				t.Errorf("image %d: boxes not in stored order", ib.ImageID)
			}
		}
	}
	all, _ := s.BoxesByImage(bg, nil)
	n := 0
	for _, ib := range all {
		n += len(ib.Boxes)
	}
	if n != 40 {
		t.Errorf("all annotators: %d boxes, want 40", n)
	}
}
