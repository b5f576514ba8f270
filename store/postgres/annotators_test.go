package postgres

import (
	"errors"
	"testing"

	"boxwright/project"
)

// Annotators on a server project behave as in the file (store_test.go
// TestAnnotatorCRUD): duplicates refused, EnsureAnnotator adds once,
// rename keeps the id, one with labels or on the team is not deleted.
// Annotators may not add annotators; reviewers may (the consensus).
func TestServerAnnotators(t *testing.T) {
	srv, s := teamProject(t)
	a, err := s.AddAnnotator(bg, "Tomas B")
	if err != nil {
		t.Fatal(err)
	}
	if a.ID == 0 || a.Created.IsZero() {
		t.Errorf("added %+v", a)
	}
	if _, err := s.AddAnnotator(bg, "Tomas B"); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("duplicate annotator: %v", err)
	}
	if _, err := s.AddAnnotator(bg, " lead"); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("bad name: %v", err)
	}
	if got, _ := s.EnsureAnnotator(bg, "Tomas B"); got.ID != a.ID {
		t.Errorf("EnsureAnnotator made a second Tomas B")
	}
	if err := s.RenameAnnotator(bg, a.ID, "Tomás B"); err != nil {
		t.Fatal(err)
	}
	got, _ := s.Annotator(bg, a.ID)
	if got.Name != "Tomás B" || !got.Created.Equal(a.Created) {
		t.Errorf("after rename: %+v", got)
	}
	if _, err := s.Annotator(bg, 999); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("missing annotator: %v", err)
	}
	im := imgRecord(t, s, 0)
	cl, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	rawLabel(t, s, im.ID, cl.ID, a.ID, 0)
	if err := s.DeleteAnnotator(bg, a.ID); !errors.Is(err, project.ErrInUse) {
		t.Errorf("delete annotator with labels: %v", err)
	}
	s.pool.Exec(bg, "DELETE FROM labels")
	if err := s.DeleteAnnotator(bg, a.ID); err != nil {
		t.Errorf("delete annotator: %v", err)
	}
	if err := s.DeleteAnnotator(bg, a.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("delete twice: %v", err)
	}
	ines, _ := s.AnnotatorByName(bg, "ines")
	if err := s.DeleteAnnotator(bg, ines.ID); !errors.Is(err, project.ErrInUse) {
		t.Errorf("delete a member's annotator: %v", err)
	}
	as, _ := s.Annotators(bg)
	var names []string
	for _, a := range as {
		names = append(names, a.Name)
	}
	if len(names) != 4 || names[0] != "ines" || names[1] != "olga" || names[2] != "rita" || names[3] != "tomas" {
		t.Errorf("annotators %v, want the team by name", names)
	}

	if _, err := openAs(t, srv, "ines").EnsureAnnotator(bg, "consensus"); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator adds an annotator: %v", err)
	}
	if _, err := openAs(t, srv, "rita").EnsureAnnotator(bg, "consensus"); err != nil {
		t.Errorf("a reviewer adds the consensus: %v", err)
	}
	if err := openAs(t, srv, "rita").RenameAnnotator(bg, ines.ID, "Ines"); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("a reviewer renames an annotator: %v", err)
	}
}
