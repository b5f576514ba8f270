package postgres

import (
	"errors"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
)

// Image records on a server project behave as in the file (store_test.go
// TestImageCRUD, status_test.go TestStatusIsPerAnnotator): the same
// refusals, statuses per annotator with the furthest one in Images,
// reviewed_by recorded; deleting an image takes its labels, suggestions
// and bytes. The server keeps statuses to their annotators: a member sets
// their own, a reviewer anyone's.
func TestServerImageRecords(t *testing.T) {
	srv, s := teamProject(t)
	im := imgRecord(t, s, 3)
	if im.Status != project.StatusNew || im.ID == 0 || im.Added.IsZero() {
		t.Errorf("new image: %+v", im)
	}
	if _, err := s.AddImage(bg, project.Image{Path: "other.jpg", SHA256: im.SHA256, Width: 1, Height: 1, Orientation: 1}); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("same hash twice: %v", err)
	}
	h := strings.Repeat("e", 64)
	for _, bad := range []project.Image{
		{Path: "a", SHA256: h, Width: 0, Height: 1, Orientation: 1},
		{Path: "a", SHA256: h, Width: 1, Height: 1, Orientation: 9},
		{Path: "a", SHA256: "abc", Width: 1, Height: 1, Orientation: 1},
		{Path: "a", SHA256: h, Width: 1, Height: 1, Orientation: 1, Status: "lost"},
	} {
		if _, err := s.AddImage(bg, bad); !errors.Is(err, project.ErrInvalid) {
			t.Errorf("AddImage(%+v): %v", bad, err)
		}
	}
	if _, err := s.Image(bg, 999); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("missing image: %v", err)
	}
	b := imgRecord(t, s, 1)
	ines, _ := s.AnnotatorByName(bg, "ines")
	tomas, _ := s.AnnotatorByName(bg, "tomas")
	rita, _ := s.AnnotatorByName(bg, "rita")

	// Each sets their own; a reviewer marks another's image reviewed.
	asInes, asRita := openAs(t, srv, "ines"), openAs(t, srv, "rita")
	if err := asInes.SetImageStatus(bg, im.ID, ines.ID, project.StatusDone, ines.ID); err != nil {
		t.Fatal(err)
	}
	if err := asInes.SetImageStatus(bg, b.ID, tomas.ID, project.StatusDone, ines.ID); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("ines sets tomas's status: %v", err)
	}
	if err := asRita.SetImageStatus(bg, im.ID, ines.ID, project.StatusReviewed, rita.ID); err != nil {
		t.Fatal(err)
	}
	if err := s.SetImageStatus(bg, b.ID, tomas.ID, project.StatusSkipped, tomas.ID); err != nil {
		t.Fatal(err)
	}
	if err := s.SetImageStatus(bg, im.ID, ines.ID, "lost", ines.ID); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("bad status: %v", err)
	}
	if err := s.SetImageStatus(bg, 999, ines.ID, project.StatusDone, ines.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("status of a missing image: %v", err)
	}
	var by int64
	s.pool.QueryRow(bg, "SELECT reviewed_by FROM image_status WHERE image_id = $1 AND annotator_id = $2", im.ID, ines.ID).Scan(&by)
	if by != rita.ID {
		t.Errorf("reviewed_by = %d, want rita (%d)", by, rita.ID)
	}
	status := func(ims []project.Image, err error) map[int64]project.ImageStatus {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		m := map[int64]project.ImageStatus{}
		for _, im := range ims {
			m[im.ID] = im.Status
		}
		return m
	}
	if got := status(s.Images(bg)); got[im.ID] != project.StatusReviewed || got[b.ID] != project.StatusSkipped {
		t.Errorf("furthest statuses %v", got)
	}
	if got := status(s.ImagesFor(bg, tomas.ID)); got[im.ID] != project.StatusNew || got[b.ID] != project.StatusSkipped {
		t.Errorf("tomas's statuses %v", got)
	}
	if ims, _ := s.Images(bg); ims[0].ID != b.ID || ims[1].ID != im.ID {
		t.Errorf("not in path order: %v", ims)
	}
	if got, err := s.ImageBySHA256(bg, im.SHA256); err != nil || got.ID != im.ID || got.Status != project.StatusReviewed {
		t.Errorf("ImageBySHA256: %+v %v", got, err)
	}

	if err := s.RelinkImage(bg, im.ID, "moved/x.jpg"); err != nil {
		t.Fatal(err)
	}
	if got, _ := s.Image(bg, im.ID); got.Path != "moved/x.jpg" {
		t.Errorf("renamed to %q", got.Path)
	}
	if err := asInes.DeleteImage(bg, im.ID); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator deletes an image: %v", err)
	}
	cl, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	rawLabel(t, s, im.ID, cl.ID, ines.ID, 0)
	rawSuggestion(t, s, im.ID, cl.ID, "pending")
	if err := s.DeleteImage(bg, im.ID); err != nil {
		t.Fatal(err)
	}
	if err := s.DeleteImage(bg, im.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("delete twice: %v", err)
	}
	c, _ := s.Counts(bg)
	if c.Images != 1 || c.Labels != 0 || c.Suggestions[project.SuggestionPending] != 0 {
		t.Errorf("delete image left rows: %+v", c)
	}

	// UndoIntake takes back the images an intake added, with their bytes.
	s.SetImageCache(t.TempDir(), 0)
	dir := t.TempDir()
	imgWrite(t, filepath.Join(dir, "p.jpg"), imgJPEG(t, 20, 20, 1))
	imgWrite(t, filepath.Join(dir, "q.jpg"), imgJPEG(t, 20, 20, 2))
	rep, err := s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 2 {
		t.Fatal(rep, err)
	}
	if err := s.UndoIntake(bg, rep); err != nil {
		t.Fatal(err)
	}
	ims, _ := s.Images(bg)
	chunks, _, contents := countChunks(t, s)
	if len(ims) != 1 || ims[0].ID != b.ID || chunks != 0 || contents != 0 {
		t.Errorf("after undo: %v, %d chunks, %d contents", ims, chunks, contents)
	}
}
