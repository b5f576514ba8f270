package postgres

import (
	"errors"
	"fmt"
	"strings"
	"testing"

	"boxwright/project"
)

// rawLabel stores a label with raw SQL as the owner (labels are another
// part of the store), for tests that need classes in use.
func rawLabel(t *testing.T, s *Store, imageID, classID, annotatorID int64, x0 float64) {
	t.Helper()
	if _, err := s.pool.Exec(bg, `INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin) VALUES ($1, $2, $3, $4, 0, 10, 10, 'drawn')`,
		imageID, classID, annotatorID, x0); err != nil {
		t.Fatal(err)
	}
}

func rawSuggestion(t *testing.T, s *Store, imageID, classID int64, state string) {
	t.Helper()
	if _, err := s.pool.Exec(bg, `INSERT INTO suggestions(image_id, class_id, x0, y0, x1, y1, score, source, state) VALUES ($1, $2, 1, 1, 5, 5, 0.9, 'det', $3)`,
		imageID, classID, state); err != nil {
		t.Fatal(err)
	}
}

// imgRecord stores a bare image record with the n-th test hash.
func imgRecord(t *testing.T, s *Store, n int) project.Image {
	t.Helper()
	im, err := s.AddImage(bg, project.Image{Path: fmt.Sprintf("img%c.jpg", 'a'+n), SHA256: strings.Repeat(string(rune('a'+n%6)), 64), Width: 640, Height: 480, Orientation: 1})
	if err != nil {
		t.Fatal(err)
	}
	return im
}

// Classes on a server project behave as in the file (store_test.go
// TestClassCRUD and TestRenameKeepsLabelsAndDeleteRules): palette colours
// and digit keys in order, the same refusals, display order; renames keep
// labels, a class in use is refused unless merged or deleted with its
// labels. Only owners change classes: an annotator and a reviewer are
// refused with a message saying so, and nothing changes.
func TestServerClasses(t *testing.T) {
	srv, s := teamProject(t)
	a, err := s.AddClass(bg, project.Class{Name: "sailboat"})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := s.AddClass(bg, project.Class{Name: "kayak"})
	if a.Color != project.Palette[0] || b.Color != project.Palette[1] {
		t.Errorf("palette colours not assigned in order: %v %v", a.Color, b.Color)
	}
	if a.HotKey != "1" || b.HotKey != "2" {
		t.Errorf("hot keys %q %q, want 1 2", a.HotKey, b.HotKey)
	}
	if _, err := s.AddClass(bg, project.Class{Name: "kayak"}); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("duplicate class: %v", err)
	}
	for _, bad := range []string{"", "  ", "tab\there", " lead"} {
		if _, err := s.AddClass(bg, project.Class{Name: bad}); !errors.Is(err, project.ErrInvalid) {
			t.Errorf("class name %q: %v", bad, err)
		}
	}
	if _, err := s.AddClass(bg, project.Class{Name: "x", HotKey: "F5"}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("bad hot key: %v", err)
	}
	got, err := s.ClassByName(bg, "kayak")
	if err != nil || got != b {
		t.Errorf("ClassByName = %+v, %v", got, err)
	}
	if _, err := s.Class(bg, 999); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("missing class: %v", err)
	}
	if err := s.UpdateClass(bg, project.Class{ID: 999, Name: "ghost"}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("update a missing class: %v", err)
	}
	b.Color = project.Palette[5]
	b.HotKey = "k"
	if err := s.UpdateClass(bg, b); err != nil {
		t.Fatal(err)
	}
	if got, _ := s.Class(bg, b.ID); got != b {
		t.Errorf("after update: %+v want %+v", got, b)
	}
	if err := s.RenameClass(bg, "kayak", "sailboat"); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("rename onto existing name: %v", err)
	}
	cs, _ := s.Classes(bg)
	if len(cs) != 2 || cs[0].Name != "sailboat" || cs[1].Name != "kayak" {
		t.Errorf("class order: %+v", cs)
	}

	// In use: labels and a suggestion of kayak.
	im := imgRecord(t, s, 0)
	olga, _ := s.AnnotatorByName(bg, "olga")
	boat, _ := s.AddClass(bg, project.Class{Name: "boat"})
	empty, _ := s.AddClass(bg, project.Class{Name: "unused"})
	for i := range 3 {
		rawLabel(t, s, im.ID, b.ID, olga.ID, float64(i))
	}
	rawSuggestion(t, s, im.ID, b.ID, "pending")
	if err := s.RenameClass(bg, "kayak", "canoe"); err != nil {
		t.Fatal(err)
	}
	err = s.DeleteClass(bg, b.ID, project.DeleteClassOptions{})
	if !errors.Is(err, project.ErrInUse) || !strings.Contains(err.Error(), "3 labels") {
		t.Errorf("delete in-use class: %v", err)
	}
	if err := s.DeleteClass(bg, empty.ID, project.DeleteClassOptions{}); err != nil {
		t.Errorf("delete unused class: %v", err)
	}
	if err := s.DeleteClass(bg, b.ID, project.DeleteClassOptions{MoveTo: b.ID}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("merge into itself: %v", err)
	}
	if err := s.DeleteClass(bg, b.ID, project.DeleteClassOptions{MoveTo: 12345}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("merge into missing class: %v", err)
	}

	// Not owners: refused, with the reason, and nothing changes.
	for _, who := range []string{"ines", "rita"} {
		o := openAs(t, srv, who)
		if _, err := o.AddClass(bg, project.Class{Name: "buoy"}); !errors.Is(err, project.ErrNotAllowed) || !strings.Contains(err.Error(), "only an owner") {
			t.Errorf("%s adds a class: %v, want ErrNotAllowed saying only an owner may", who, err)
		}
		if err := o.RenameClass(bg, "canoe", "dinghy"); !errors.Is(err, project.ErrNotAllowed) {
			t.Errorf("%s renames a class: %v", who, err)
		}
		if err := o.MergeClass(bg, "canoe", "boat"); !errors.Is(err, project.ErrNotAllowed) {
			t.Errorf("%s merges classes: %v", who, err)
		}
		if err := o.DeleteClass(bg, boat.ID, project.DeleteClassOptions{}); !errors.Is(err, project.ErrNotAllowed) {
			t.Errorf("%s deletes a class: %v", who, err)
		}
		if cs, _ := o.Classes(bg); len(cs) != 3 || cs[1].Name != "canoe" {
			t.Errorf("%s reads classes %+v after the refusals", who, cs)
		}
	}

	if err := s.MergeClass(bg, "canoe", "boat"); err != nil {
		t.Fatal(err)
	}
	var labels, suggestions int
	s.pool.QueryRow(bg, "SELECT (SELECT count(*) FROM labels WHERE class_id = $1), (SELECT count(*) FROM suggestions WHERE class_id = $1)", boat.ID).Scan(&labels, &suggestions)
	if labels != 3 || suggestions != 1 {
		t.Errorf("after merge: %d labels and %d suggestions of boat, want 3 and 1", labels, suggestions)
	}
	if _, err := s.ClassByName(bg, "canoe"); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("merged class still there: %v", err)
	}
	if err := s.DeleteClass(bg, boat.ID, project.DeleteClassOptions{DeleteLabels: true}); err != nil {
		t.Fatal(err)
	}
	c, _ := s.Counts(bg)
	if c.Labels != 0 || c.Suggestions[project.SuggestionPending] != 0 || len(c.LabelsByClass) != 1 {
		t.Errorf("delete with labels left %d labels, %v suggestions, classes %v", c.Labels, c.Suggestions, c.LabelsByClass)
	}
}
