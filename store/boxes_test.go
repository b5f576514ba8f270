package store

import (
	"context"
	"errors"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
)

// boxesStore has two images with three boxes each, annotators a and b.
func boxesStore(t *testing.T) (*Store, project.Annotator, project.Annotator) {
	t.Helper()
	s := newStore(t)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	a, _ := s.AddAnnotator(bg, "a")
	b, _ := s.AddAnnotator(bg, "b")
	for i := 0; i < 2; i++ {
		im := addImage(t, s, i)
		for k := 0; k < 3; k++ {
			ann := a.ID
			if k == 1 {
				ann = b.ID
			}
			if _, err := s.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: ann, Box: project.Rect(float64(k), 0, float64(k)+5, 5)}); err != nil {
				t.Fatal(err)
			}
		}
	}
	return s, a, b
}

// The images' boxes may share one array: appending to one image's boxes
// must not change the next image's.
func TestBoxesByImageAppendKeepsNeighbours(t *testing.T) {
	s, _, _ := boxesStore(t)
	got, err := s.BoxesByImage(bg, nil)
	if err != nil || len(got) != 2 {
		t.Fatalf("%d images, %v", len(got), err)
	}
	before := append([]project.BoxRow(nil), got[1].Boxes...)
	_ = append(got[0].Boxes, project.BoxRow{AnnotatorID: 99, Box: project.Rect(100, 100, 200, 200)})
	for i, b := range got[1].Boxes {
		if b != before[i] {
			t.Fatalf("appending to image %d's boxes changed image %d's box %d: %+v, was %+v", got[0].ImageID, got[1].ImageID, i, b, before[i])
		}
	}
}

// A cancelled read stops with the context's error.
func TestBoxesByImageCancelled(t *testing.T) {
	s, a, b := boxesStore(t)
	ctx, cancel := context.WithCancel(bg)
	cancel()
	if _, err := s.BoxesByImage(ctx, []int64{a.ID, b.ID}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled read: %v, want context.Canceled", err)
	}
}

// A coordinate that is not a number (another program wrote text into the
// column) is an error naming the image and the column, not a zero.
func TestBoxesByImageRefusesTextCoordinate(t *testing.T) {
	s, _, _ := boxesStore(t)
	// Text sorts after every number in SQLite, so the CHECK x1 > x0 holds.
	if _, err := s.db.Exec("UPDATE labels SET x0 = 'abc', x1 = 'abd' WHERE id = (SELECT max(id) FROM labels)"); err != nil {
		t.Fatal(err)
	}
	var img int64
	if err := s.db.QueryRow("SELECT image_id FROM labels WHERE x0 = 'abc'").Scan(&img); err != nil {
		t.Fatal(err)
	}
	_, err := s.BoxesByImage(bg, nil)
	if err == nil {
		t.Fatal("a text coordinate was read as a number")
	}
	for _, want := range []string{"read boxes", "image " + strconv.FormatInt(img, 10), "x0", `"abc"`, "not a number"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not say %q", err, want)
		}
		if testing.Verbose() && want == "read boxes" {
			t.Log(err)
		}
	}
	// Text that is a number (the column's affinity stores it as one)
	// reads as that number.
	if _, err := s.db.Exec("UPDATE labels SET x0 = '2.5', x1 = '7.5' WHERE x0 = 'abc'"); err != nil {
		t.Fatal(err)
	}
	got, err := s.BoxesByImage(bg, nil)
	if err != nil {
		t.Fatal(err)
	}
	last := got[len(got)-1].Boxes
	if b := last[len(last)-1].Box; b.X0 != 2.5 || b.X1 != 7.5 {
		t.Errorf("text coordinates read as %v, want x0 2.5, x1 7.5", b)
	}
}
