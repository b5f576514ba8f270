package postgres

import (
	"errors"
	"strings"
	"testing"

	"boxwright/project"
)

// An edit is all or nothing: a change naming a missing label, or with an
// invalid box, changes nothing; inserted IDs come back in order; the
// first label of an annotator on an image starts it for them.
func TestApplyLabelChangeIsAllOrNothing(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	a := f.annotator("ana")
	l := project.Label{ImageID: f.im1, ClassID: f.boat, AnnotatorID: a, Box: project.Rect(1, 2, 30, 40)}
	l2 := l
	l2.Box = project.Rect(3, 3, 9, 9)
	ids, err := s.ApplyLabelChange(bg, project.LabelChange{Insert: []project.Label{l, l2}})
	if err != nil || len(ids) != 2 || ids[0] >= ids[1] {
		t.Fatalf("insert: %v %v", ids, err)
	}
	if got, _ := s.Label(bg, ids[1]); got.Box != l2.Box {
		t.Errorf("IDs not in insert order: label %d is %v", ids[1], got.Box)
	}
	if st := f.status(f.im1, a); st != "started" {
		t.Errorf("first label should start the image, status %q", st)
	}
	if st := f.status(f.im2, a); st != "" {
		t.Errorf("an image without labels got status %q", st)
	}
	moved := l
	moved.ID, moved.Box = ids[0], project.Rect(5, 5, 50, 50)
	_, err = s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1], 999}})
	if !errors.Is(err, project.ErrNotFound) || !strings.Contains(err.Error(), "999") {
		t.Fatalf("want ErrNotFound naming 999, got %v", err)
	}
	_, err = s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{moved, {ID: 998, ClassID: f.boat, Box: moved.Box}}})
	if !errors.Is(err, project.ErrNotFound) || !strings.Contains(err.Error(), "998") {
		t.Fatalf("update of a missing label: %v", err)
	}
	badClass := moved
	badClass.ClassID = 997
	if _, err = s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{badClass}}); !errors.Is(err, project.ErrNotFound) {
		t.Fatalf("update to a missing class: %v", err)
	}
	_, err = s.ApplyLabelChange(bg, project.LabelChange{Delete: []int64{ids[1]}, Insert: []project.Label{{ImageID: 996, ClassID: f.boat, AnnotatorID: a, Box: l.Box}}})
	if !errors.Is(err, project.ErrNotFound) {
		t.Fatalf("insert on a missing image: %v", err)
	}
	all, _ := s.Labels(bg, project.LabelFilter{ImageID: f.im1})
	if len(all) != 2 || all[0].Box != l.Box || all[1].Box != l2.Box {
		t.Fatalf("failed changes left traces: %+v", all)
	}
	bad := moved
	bad.Box = project.Box{X0: 5, Y0: 5, X1: 5, Y1: 9}
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{bad}}); !errors.Is(err, project.ErrInvalid) {
		t.Fatalf("want ErrInvalid, got %v", err)
	}
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1]}}); err != nil {
		t.Fatal(err)
	}
	all, _ = s.Labels(bg, project.LabelFilter{ImageID: f.im1})
	if len(all) != 1 || all[0].Box != moved.Box || !all[0].Updated.After(all[0].Created) {
		t.Fatalf("after change: %+v", all)
	}
	tal, err := s.LabelTallies(bg)
	if err != nil || len(tal) != 1 || tal[0] != (project.LabelTally{ImageID: f.im1, ClassID: f.boat, AnnotatorID: a, N: 1}) {
		t.Fatalf("tallies %+v %v", tal, err)
	}
	// A done image stays done when its annotator adds a label.
	f.sql.Exec(bg, "UPDATE image_status SET status = 'done' WHERE image_id = $1 AND annotator_id = $2", f.im1, a)
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Insert: []project.Label{l}}); err != nil {
		t.Fatal(err)
	}
	if st := f.status(f.im1, a); st != "done" {
		t.Errorf("a done image became %q", st)
	}
}

func TestReplaceAnnotatorLabelsSwapsOnlyThatAnnotator(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	ana, con := f.annotator("ana"), f.annotator("consensus")
	f.label(f.im1, f.boat, ana, box(1, 1, 9, 9))
	f.label(f.im1, f.boat, con, box(1, 1, 9, 9))
	nl := project.Label{ImageID: f.im1, ClassID: f.boat, Box: box(2, 2, 8, 8), Source: "consensus of ana"}
	if err := s.ReplaceAnnotatorLabels(bg, con, []project.Label{nl, nl}); err != nil {
		t.Fatal(err)
	}
	got, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: con})
	if len(got) != 2 || got[0].Box != nl.Box || got[0].Origin != project.OriginImported || got[0].Source != nl.Source || got[0].AnnotatorID != con {
		t.Fatalf("consensus labels %+v", got)
	}
	if mine, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: ana}); len(mine) != 1 {
		t.Errorf("another annotator's labels changed: %+v", mine)
	}
	bad := nl
	bad.Box = box(3, 3, 3, 5)
	if err := s.ReplaceAnnotatorLabels(bg, con, []project.Label{nl, bad}); !errors.Is(err, project.ErrInvalid) {
		t.Fatalf("a bad box: %v", err)
	}
	missing := nl
	missing.ImageID = 999
	if err := s.ReplaceAnnotatorLabels(bg, con, []project.Label{nl, missing}); !errors.Is(err, project.ErrNotFound) {
		t.Fatalf("a missing image: %v", err)
	}
	if got, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: con}); len(got) != 2 {
		t.Errorf("a refused swap changed the labels: %d", len(got))
	}
}

// Row-level security holds through the methods: an annotator's edit of
// another annotator's label fails with ErrNotAllowed and says the label
// is not theirs (the server would only have left it alone), and the
// whole edit is undone; their own edits work.
func TestEditsHonourRowLevelSecurity(t *testing.T) {
	f := newLabFix(t, true)
	inesID, tomasID := f.annotator("ines"), f.annotator("tomas")
	hers := f.label(f.im1, f.boat, inesID, box(1, 1, 10, 10))
	his := f.label(f.im1, f.boat, tomasID, box(2, 2, 20, 20))
	ines := f.as("ines")

	upd := func(id int64, b project.Box) project.Label {
		return project.Label{ID: id, ClassID: f.boat, Box: b}
	}
	for name, c := range map[string]project.LabelChange{
		"update his":           {Update: []project.Label{upd(his, box(0, 0, 5, 5))}},
		"delete his":           {Delete: []int64{his}},
		"hers then his":        {Update: []project.Label{upd(hers, box(0, 0, 7, 7)), upd(his, box(0, 0, 5, 5))}},
		"delete hers, his too": {Delete: []int64{hers, his}},
	} {
		_, err := ines.ApplyLabelChange(bg, c)
		if !errors.Is(err, project.ErrNotAllowed) || !strings.Contains(err.Error(), "is not yours (it is tomas's)") {
			t.Errorf("%s: %v, want ErrNotAllowed saying the label is not hers", name, err)
		}
	}
	_, err := ines.ApplyLabelChange(bg, project.LabelChange{Insert: []project.Label{{ImageID: f.im2, ClassID: f.boat, AnnotatorID: tomasID, Box: box(1, 1, 4, 4)}}})
	if !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("inserting a label as tomas: %v", err)
	}
	if err := ines.AddLabels(bg, []project.Label{{ImageID: f.im2, ClassID: f.boat, AnnotatorID: tomasID, Box: box(1, 1, 4, 4)}}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("adding a batch as tomas: %v", err)
	}
	if err := ines.ReplaceAnnotatorLabels(bg, tomasID, nil); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("replacing tomas's labels: %v", err)
	}
	if n := f.count("SELECT count(*) FROM labels WHERE annotator_id = $1 AND x1 = 20", tomasID); n != 1 {
		t.Errorf("tomas's label changed: %d as it was", n)
	}
	if n := f.count("SELECT count(*) FROM labels WHERE id = $1 AND x1 = 10", hers); n != 1 {
		t.Errorf("a refused edit changed ines's own label")
	}
	if f.status(f.im2, tomasID) != "" {
		t.Errorf("a refused insert left a status")
	}
	ids, err := ines.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{upd(hers, box(0, 0, 7, 7))},
		Insert: []project.Label{{ImageID: f.im2, ClassID: f.kayak, AnnotatorID: inesID, Box: box(1, 1, 4, 4)}}})
	if err != nil || len(ids) != 1 {
		t.Fatalf("ines's own edit: %v %v", ids, err)
	}
	if f.status(f.im2, inesID) != "started" {
		t.Errorf("ines's image not started")
	}
	if _, err := ines.ApplyLabelChange(bg, project.LabelChange{Delete: []int64{hers, ids[0]}}); err != nil {
		t.Errorf("ines deleting her own labels: %v", err)
	}
	if all, _ := ines.Labels(bg, project.LabelFilter{}); len(all) != 1 || all[0].ID != his {
		t.Errorf("ines reads %+v, want tomas's label alone", all)
	}
}
