package postgres

import (
	"errors"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// Labels come back as stored, in image then ID order, filtered; times are
// the server's, in UTC; a bad label (no area, unknown origin, a missing
// image) fails the whole batch, and the error names the label.
func TestLabelsAddFilterAndRefuse(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	tomas := f.annotator("Tomas")
	b := project.Box{X0: 10.5, Y0: 20.25, X1: 110, Y1: 80}
	before := time.Now().Add(-time.Minute)
	err := s.AddLabels(bg, []project.Label{
		{ImageID: f.im2, ClassID: f.boat, AnnotatorID: f.olga, Box: b},
		{ImageID: f.im1, ClassID: f.boat, AnnotatorID: tomas, Box: b, Origin: project.OriginImported, Source: "old.json", Score: 0.5},
		{ImageID: f.im1, ClassID: f.kayak, AnnotatorID: f.olga, Box: b.Translate(1, 1)},
	})
	if err != nil {
		t.Fatal(err)
	}
	all, err := s.Labels(bg, project.LabelFilter{})
	if err != nil || len(all) != 3 {
		t.Fatalf("labels %+v %v", all, err)
	}
	if all[0].ImageID != f.im1 || all[1].ImageID != f.im1 || all[2].ImageID != f.im2 || all[0].ID > all[1].ID {
		t.Errorf("not in image, id order: %+v", all)
	}
	l := all[2]
	if l.Origin != project.OriginDrawn || l.Box != b || l.SuggestionID != 0 || l.Created.Location() != time.UTC ||
		l.Created.Before(before) || l.Updated.Before(l.Created) {
		t.Errorf("stored label %+v", l)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: f.im1, AnnotatorID: tomas}); len(ls) != 1 || ls[0].Source != "old.json" || ls[0].Score != 0.5 || ls[0].Origin != project.OriginImported {
		t.Errorf("image 1 by Tomas: %+v", ls)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ClassID: f.kayak}); len(ls) != 1 || ls[0].Box != b.Translate(1, 1) {
		t.Errorf("kayak labels: %+v", ls)
	}
	if got, err := s.Label(bg, l.ID); err != nil || got != l {
		t.Errorf("Label(%d) = %+v, %v; want %+v", l.ID, got, err, l)
	}
	if _, err := s.Label(bg, 999); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("missing label: %v", err)
	}
	good := project.Label{ImageID: f.im2, ClassID: f.boat, AnnotatorID: f.olga, Box: b}
	for name, c := range map[string]struct {
		bad  project.Label
		is   error
		want string
	}{
		"no area":        {project.Label{ImageID: f.im1, ClassID: f.boat, AnnotatorID: f.olga, Box: box(5, 5, 5, 9)}, project.ErrInvalid, "label 2 of 2"},
		"unknown origin": {project.Label{ImageID: f.im1, ClassID: f.boat, AnnotatorID: f.olga, Box: b, Origin: "guessed"}, project.ErrInvalid, `unknown origin "guessed"`},
		"missing image":  {project.Label{ImageID: 999, ClassID: f.boat, AnnotatorID: f.olga, Box: b}, project.ErrNotFound, "label 2 of 2: image 999 does not exist"},
		"missing class":  {project.Label{ImageID: f.im1, ClassID: 999, AnnotatorID: f.olga, Box: b}, project.ErrNotFound, "class 999"},
		"missing person": {project.Label{ImageID: f.im1, ClassID: f.boat, AnnotatorID: 999, Box: b}, project.ErrNotFound, "annotator 999"},
	} {
		err := s.AddLabels(bg, []project.Label{good, c.bad})
		if !errors.Is(err, c.is) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %v and %q", name, err, c.is, c.want)
		}
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 3 {
		t.Errorf("refused batches left %d labels, want 3", n)
	}
}

// Boxes are grouped by image in image order, each image's boxes in the
// order stored, and filtered by annotator.
func TestBoxesByImageGroupsAndFilters(t *testing.T) {
	f := newLabFix(t, false)
	a, b := f.annotator("a"), f.annotator("b")
	ims := []int64{f.im1, f.im2, f.image("c.jpg", 100, 100), f.image("d.jpg", 100, 100)}
	want := map[int64]int{}
	var ls []project.Label
	for round := 0; round < 40; round++ {
		im := ims[(round*3)%len(ims)]
		ann := a
		if round%3 == 0 {
			ann = b
		}
		ls = append(ls, project.Label{ImageID: im, ClassID: f.boat, AnnotatorID: ann, Box: box(float64(round), 0, float64(round)+5, 5)})
		if ann == a {
			want[im]++
		}
	}
	if err := f.s.AddLabels(bg, ls); err != nil {
		t.Fatal(err)
	}
	got, err := f.s.BoxesByImage(bg, []int64{a})
	if err != nil || len(got) != len(want) {
		t.Fatalf("%d images (%v), want %d", len(got), err, len(want))
	}
	for i, ib := range got {
		if i > 0 && got[i-1].ImageID >= ib.ImageID {
			t.Errorf("images out of order: %d after %d", ib.ImageID, got[i-1].ImageID)
		}
		if len(ib.Boxes) != want[ib.ImageID] {
			t.Errorf("image %d: %d boxes, want %d", ib.ImageID, len(ib.Boxes), want[ib.ImageID])
		}
		for j, bx := range ib.Boxes {
			if bx.AnnotatorID != a || bx.ClassID != f.boat {
				t.Errorf("box %+v slipped through the filter", bx)
			}
			if j > 0 && ib.Boxes[j-1].Box.X0 >= bx.Box.X0 {
				t.Errorf("image %d: boxes not in stored order", ib.ImageID)
			}
		}
	}
	all, _ := f.s.BoxesByImage(bg, nil)
	n := 0
	for _, ib := range all {
		n += len(ib.Boxes)
	}
	if n != 40 {
		t.Errorf("all annotators: %d boxes, want 40", n)
	}
}

// Migration 3 makes every row-level rule call bw_rank() and
// bw_annotator() once per statement (an InitPlan) rather than once per
// row: in each plan's filter the function call itself must not appear.
// (Before it, reading 200,000 labels as a member took about 9 times as
// long as with the rules out of the way.)
func TestPoliciesEvaluatedOncePerStatement(t *testing.T) {
	f := newLabFix(t, true)
	ines := connectAs(t, f.srv, "ines")
	for _, q := range []string{
		"SELECT id FROM labels",
		"UPDATE labels SET x1 = x1 + 1",
		"DELETE FROM labels",
		"SELECT id FROM suggestions",
		"UPDATE suggestions SET score = 0",
		"DELETE FROM models",
		"UPDATE image_status SET status = 'done'",
		"SELECT id FROM images",
		"SELECT id FROM classes",
		"UPDATE images SET path = path",
		"DELETE FROM annotators",
	} {
		rows, err := ines.Query(bg, "EXPLAIN "+q)
		if err != nil {
			t.Fatal(err)
		}
		plan, err := pgx.CollectRows(rows, pgx.RowTo[string])
		if err != nil {
			t.Fatal(err)
		}
		for _, line := range plan {
			if l := strings.TrimSpace(line); strings.HasPrefix(l, "Filter:") && (strings.Contains(l, "bw_rank()") || strings.Contains(l, "bw_annotator()")) {
				t.Errorf("%s: a policy function runs per row: %s", q, l)
			}
		}
	}
}
