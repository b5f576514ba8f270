package store

import (
	"context"
	"database/sql"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"boxwright/project"
)

var bg = context.Background()

func newStore(t *testing.T) *Store {
	t.Helper()
	s, err := Create(filepath.Join(t.TempDir(), "p"+Extension))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s
}

func hash(n int) string { return strings.Repeat(string(rune('a'+n%26)), 64) }

// addImage stores a bare image record for tests that do not need a file.
func addImage(t *testing.T, s *Store, n int) project.Image {
	t.Helper()
	im, err := s.AddImage(bg, project.Image{Path: "img" + string(rune('a'+n)) + ".jpg", SHA256: hash(n), Width: 640, Height: 480, Orientation: 1})
	if err != nil {
		t.Fatal(err)
	}
	return im
}

func TestCreateReopenPragmas(t *testing.T) {
	path := filepath.Join(t.TempDir(), "harbour.boxw")
	s, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.AddClass(bg, project.Class{Name: "buoy"}); err != nil {
		t.Fatal(err)
	}
	var mode string
	var fk, busy, sync int
	s.db.QueryRow("PRAGMA journal_mode").Scan(&mode)
	s.db.QueryRow("PRAGMA foreign_keys").Scan(&fk)
	s.db.QueryRow("PRAGMA busy_timeout").Scan(&busy)
	s.db.QueryRow("PRAGMA synchronous").Scan(&sync)
	if mode != "wal" || fk != 1 || busy != int(busyTimeout.Milliseconds()) || sync != 1 {
		t.Errorf("pragmas: journal_mode=%s foreign_keys=%d busy_timeout=%d synchronous=%d; want wal 1 %d 1(NORMAL)", mode, fk, busy, sync, busyTimeout.Milliseconds())
	}
	s.Close()

	if _, err := Create(path); !errors.Is(err, ErrExists) {
		t.Errorf("Create over an existing file: %v, want ErrExists", err)
	}
	s, err = Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	cs, _ := s.Classes(bg)
	if len(cs) != 1 || cs[0].Name != "buoy" {
		t.Errorf("classes after reopen: %+v", cs)
	}
	v, _ := s.SchemaVersion(bg)
	if v != latestVersion() {
		t.Errorf("schema version %d, want %d", v, latestVersion())
	}
	var applied int
	s.db.QueryRow("SELECT count(*) FROM schema_migrations").Scan(&applied)
	if applied != len(migrations()) {
		t.Errorf("%d migrations recorded, want %d", applied, len(migrations()))
	}
}

// An empty file is not a project: Open refuses it and leaves it as it
// was (only Create makes a project), so that a 0-byte file given by
// mistake is not silently turned into one.
func TestOpenRefusesEmptyFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "empty.boxw")
	if err := os.WriteFile(path, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := Open(path); !errors.Is(err, ErrNotProject) || !strings.Contains(err.Error(), "empty") || !strings.Contains(err.Error(), path) {
		t.Errorf("open empty file: %v", err)
	}
	if st, err := os.Stat(path); err != nil || st.Size() != 0 {
		t.Errorf("the empty file was changed: %v %v", st, err)
	}
	for _, side := range []string{"-wal", "-shm"} {
		if _, err := os.Stat(path + side); err == nil {
			t.Errorf("%s file left beside the refused file", side)
		}
	}
}

func TestOpenRefusals(t *testing.T) {
	dir := t.TempDir()
	if _, err := Open(filepath.Join(dir, "nope.boxw")); !errors.Is(err, ErrMissingFile) {
		t.Errorf("missing file: %v", err)
	}
	if _, err := Open(dir); !errors.Is(err, ErrNotProject) {
		t.Errorf("folder: %v", err)
	}
	text := filepath.Join(dir, "notes.boxw")
	os.WriteFile(text, []byte(strings.Repeat("this is a text file, not a database\n", 200)), 0o644)
	if _, err := Open(text); !errors.Is(err, ErrNotProject) || !strings.Contains(err.Error(), "not an SQLite database") {
		t.Errorf("text file: %v", err)
	}

	other := filepath.Join(dir, "other.db")
	db, err := sql.Open("sqlite3", other)
	if err != nil {
		t.Fatal(err)
	}
	db.Exec("CREATE TABLE stuff(x)")
	db.Close()
	if _, err := Open(other); !errors.Is(err, ErrNotProject) || !strings.Contains(err.Error(), "another program") {
		t.Errorf("foreign SQLite file: %v", err)
	}
}

func TestOpenRefusesNewerSchemaAndChangesNothing(t *testing.T) {
	path := filepath.Join(t.TempDir(), "future.boxw")
	s, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	s.db.Exec("INSERT INTO schema_migrations(version, name, applied_at) VALUES (999, 'from_the_future', '2030-01-01T00:00:00Z')")
	s.Close()
	before, _ := os.ReadFile(path)
	_, err = Open(path)
	if !errors.Is(err, ErrNewerSchema) || !strings.Contains(err.Error(), "999") {
		t.Fatalf("newer schema: %v", err)
	}
	after, _ := os.ReadFile(path)
	if string(before) != string(after) {
		t.Errorf("refused open changed the file")
	}
	if _, err := os.Stat(path + "-wal"); err == nil {
		t.Errorf("refused open left a WAL file")
	}
}

func TestClassCRUD(t *testing.T) {
	s := newStore(t)
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
}

func TestRenameKeepsLabelsAndDeleteRules(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 0)
	ann, _ := s.AddAnnotator(bg, "Ines")
	kayak, _ := s.AddClass(bg, project.Class{Name: "kayak"})
	boat, _ := s.AddClass(bg, project.Class{Name: "boat"})
	empty, _ := s.AddClass(bg, project.Class{Name: "unused"})
	for i := 0; i < 3; i++ {
		if _, err := s.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: kayak.ID, AnnotatorID: ann.ID, Box: project.Box{X0: float64(i), Y0: 0, X1: 10, Y1: 10}}); err != nil {
			t.Fatal(err)
		}
	}
	s.AddSuggestions(bg, []project.Suggestion{{ImageID: im.ID, ClassID: kayak.ID, Box: project.Box{X0: 1, Y0: 1, X1: 5, Y1: 5}, Score: 0.9, Source: "det"}})
	if err := s.RenameClass(bg, "kayak", "canoe"); err != nil {
		t.Fatal(err)
	}
	ls, _ := s.Labels(bg, project.LabelFilter{ClassID: kayak.ID})
	if len(ls) != 3 {
		t.Errorf("labels after rename: %d, want 3", len(ls))
	}
	err := s.DeleteClass(bg, kayak.ID, project.DeleteClassOptions{})
	if !errors.Is(err, project.ErrInUse) || !strings.Contains(err.Error(), "3 labels") {
		t.Errorf("delete in-use class: %v", err)
	}
	if err := s.DeleteClass(bg, empty.ID, project.DeleteClassOptions{}); err != nil {
		t.Errorf("delete unused class: %v", err)
	}
	if err := s.DeleteClass(bg, kayak.ID, project.DeleteClassOptions{MoveTo: kayak.ID}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("merge into itself: %v", err)
	}
	if err := s.DeleteClass(bg, kayak.ID, project.DeleteClassOptions{MoveTo: 12345}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("merge into missing class: %v", err)
	}
	if err := s.MergeClass(bg, "canoe", "boat"); err != nil {
		t.Fatal(err)
	}
	ls, _ = s.Labels(bg, project.LabelFilter{ClassID: boat.ID})
	gs, _ := s.Suggestions(bg, project.SuggestionFilter{})
	if len(ls) != 3 || len(gs) != 1 || gs[0].ClassID != boat.ID {
		t.Errorf("after merge: %d labels of boat, suggestions %+v", len(ls), gs)
	}
	if _, err := s.ClassByName(bg, "canoe"); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("merged class still there: %v", err)
	}
	if err := s.DeleteClass(bg, boat.ID, project.DeleteClassOptions{DeleteLabels: true}); err != nil {
		t.Fatal(err)
	}
	c, _ := s.Counts(bg)
	if c.Labels != 0 || c.Suggestions[project.SuggestionPending] != 0 {
		t.Errorf("delete with labels left %d labels, %v suggestions", c.Labels, c.Suggestions)
	}
}

func TestAnnotatorCRUD(t *testing.T) {
	s := newStore(t)
	a, err := s.AddAnnotator(bg, "Tomas")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.AddAnnotator(bg, "Tomas"); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("duplicate annotator: %v", err)
	}
	if got, _ := s.EnsureAnnotator(bg, "Tomas"); got.ID != a.ID {
		t.Errorf("EnsureAnnotator made a second Tomas")
	}
	if err := s.RenameAnnotator(bg, a.ID, "Tomás"); err != nil {
		t.Fatal(err)
	}
	got, _ := s.Annotator(bg, a.ID)
	if got.Name != "Tomás" || got.Created.IsZero() {
		t.Errorf("after rename: %+v", got)
	}
	im := addImage(t, s, 0)
	cl, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	l, _ := s.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: cl.ID, AnnotatorID: a.ID, Box: project.Box{X0: 0, Y0: 0, X1: 1, Y1: 1}})
	if err := s.DeleteAnnotator(bg, a.ID); !errors.Is(err, project.ErrInUse) {
		t.Errorf("delete annotator with labels: %v", err)
	}
	s.DeleteLabel(bg, l.ID)
	if err := s.DeleteAnnotator(bg, a.ID); err != nil {
		t.Errorf("delete annotator: %v", err)
	}
	if err := s.DeleteAnnotator(bg, a.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("delete twice: %v", err)
	}
	as, _ := s.Annotators(bg)
	if len(as) != 0 {
		t.Errorf("annotators left: %+v", as)
	}
}

func TestImageCRUD(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 3)
	if im.Status != project.StatusNew || im.ID == 0 {
		t.Errorf("new image: %+v", im)
	}
	if _, err := s.AddImage(bg, project.Image{Path: "other.jpg", SHA256: hash(3), Width: 1, Height: 1, Orientation: 1}); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("same hash twice: %v", err)
	}
	for _, bad := range []project.Image{
		{Path: "a", SHA256: hash(4), Width: 0, Height: 1, Orientation: 1},
		{Path: "a", SHA256: hash(4), Width: 1, Height: 1, Orientation: 9},
		{Path: "a", SHA256: "abc", Width: 1, Height: 1, Orientation: 1},
		{Path: "a", SHA256: hash(4), Width: 1, Height: 1, Orientation: 1, Status: "lost"},
	} {
		if _, err := s.AddImage(bg, bad); !errors.Is(err, project.ErrInvalid) {
			t.Errorf("AddImage(%+v): %v", bad, err)
		}
	}
	marker, _ := s.AddAnnotator(bg, "Marker")
	if err := s.SetImageStatus(bg, im.ID, marker.ID, project.StatusDone, marker.ID); err != nil {
		t.Fatal(err)
	}
	if err := s.SetImageStatus(bg, im.ID, marker.ID, "lost", marker.ID); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("bad status: %v", err)
	}
	if err := s.RelinkImage(bg, im.ID, "moved/x.jpg"); err != nil {
		t.Fatal(err)
	}
	got, _ := s.ImageBySHA256(bg, hash(3))
	if got.Path != "moved/x.jpg" || got.Status != project.StatusDone {
		t.Errorf("after status+relink: %+v", got)
	}
	cl, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	an, _ := s.AddAnnotator(bg, "Ines")
	s.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: cl.ID, AnnotatorID: an.ID, Box: project.Box{X0: 0, Y0: 0, X1: 2, Y1: 2}})
	s.AddSuggestions(bg, []project.Suggestion{{ImageID: im.ID, ClassID: cl.ID, Box: project.Box{X0: 0, Y0: 0, X1: 2, Y1: 2}, Score: .5, Source: "d"}})
	if err := s.DeleteImage(bg, im.ID); err != nil {
		t.Fatal(err)
	}
	c, _ := s.Counts(bg)
	if c.Images != 0 || c.Labels != 0 || c.Suggestions[project.SuggestionPending] != 0 {
		t.Errorf("delete image left rows: %+v", c)
	}
	if err := s.SetImageStatus(bg, im.ID, marker.ID, project.StatusDone, marker.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("status of deleted image: %v", err)
	}
}

func TestLabelCRUD(t *testing.T) {
	s := newStore(t)
	im1, im2 := addImage(t, s, 0), addImage(t, s, 1)
	cl, _ := s.AddClass(bg, project.Class{Name: "motorboat"})
	ines, _ := s.AddAnnotator(bg, "Ines")
	tomas, _ := s.AddAnnotator(bg, "Tomas")
	box := project.Box{X0: 10.5, Y0: 20.25, X1: 110, Y1: 80}
	l, err := s.AddLabel(bg, project.Label{ImageID: im1.ID, ClassID: cl.ID, AnnotatorID: ines.ID, Box: box})
	if err != nil {
		t.Fatal(err)
	}
	if l.Origin != project.OriginDrawn || l.Created.IsZero() {
		t.Errorf("new label: %+v", l)
	}
	s.AddLabel(bg, project.Label{ImageID: im1.ID, ClassID: cl.ID, AnnotatorID: tomas.ID, Box: box, Origin: project.OriginImported, Source: "old.json"})
	s.AddLabel(bg, project.Label{ImageID: im2.ID, ClassID: cl.ID, AnnotatorID: ines.ID, Box: box})
	got, _ := s.Label(bg, l.ID)
	if got.Box != box || got.AnnotatorID != ines.ID {
		t.Errorf("read back %+v", got)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: im1.ID}); len(ls) != 2 {
		t.Errorf("labels of image 1: %d", len(ls))
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: im1.ID, AnnotatorID: tomas.ID}); len(ls) != 1 || ls[0].Source != "old.json" || ls[0].Origin != project.OriginImported {
		t.Errorf("labels of image 1 by Tomas: %+v", ls)
	}
	bad := []project.Label{
		{ImageID: im1.ID, ClassID: cl.ID, AnnotatorID: ines.ID, Box: project.Box{X0: 5, Y0: 5, X1: 5, Y1: 9}},
		{ImageID: im1.ID, ClassID: cl.ID, AnnotatorID: ines.ID, Box: box, Origin: "guessed"},
	}
	for _, b := range bad {
		if _, err := s.AddLabel(bg, b); !errors.Is(err, project.ErrInvalid) {
			t.Errorf("AddLabel(%+v): %v", b, err)
		}
	}
	if _, err := s.AddLabel(bg, project.Label{ImageID: 999, ClassID: cl.ID, AnnotatorID: ines.ID, Box: box}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("label for missing image: %v", err)
	}
	// A batch with one bad label stores none of it.
	before, _ := s.Counts(bg)
	err = s.AddLabels(bg, []project.Label{{ImageID: im2.ID, ClassID: cl.ID, AnnotatorID: ines.ID, Box: box}, bad[0]})
	after, _ := s.Counts(bg)
	if err == nil || after.Labels != before.Labels {
		t.Errorf("bad batch: err %v, labels %d -> %d", err, before.Labels, after.Labels)
	}
	time.Sleep(2 * time.Millisecond)
	l.Box = project.Box{X0: 0, Y0: 0, X1: 50, Y1: 50}
	if err := s.UpdateLabel(bg, l); err != nil {
		t.Fatal(err)
	}
	got, _ = s.Label(bg, l.ID)
	if got.Box != l.Box || !got.Updated.After(got.Created) {
		t.Errorf("after update: %+v", got)
	}
	l.Box = project.Box{X0: 1, Y0: 1, X1: 0, Y1: 2}
	if err := s.UpdateLabel(bg, l); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("update to inverted box: %v", err)
	}
	if err := s.DeleteLabel(bg, l.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Label(bg, l.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("deleted label: %v", err)
	}
}

func TestSuggestionsReviewAndCounts(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 0)
	boat, _ := s.AddClass(bg, project.Class{Name: "motorboat"})
	kayak, _ := s.AddClass(bg, project.Class{Name: "kayak"})
	rev, _ := s.AddAnnotator(bg, "Ines")
	b := project.Box{X0: 10, Y0: 10, X1: 50, Y1: 30}
	ids, err := s.AddSuggestions(bg, []project.Suggestion{
		{ImageID: im.ID, ClassID: boat.ID, Box: b, Score: 0.91, Source: "detector-v7"},
		{ImageID: im.ID, ClassID: boat.ID, Box: b.Translate(100, 0), Score: 0.55, Source: "detector-v7"},
		{ImageID: im.ID, ClassID: kayak.ID, Box: b.Translate(0, 100), Score: 0.30, Source: "detector-v7"},
	})
	if err != nil || len(ids) != 3 {
		t.Fatal(ids, err)
	}
	if _, err := s.AddSuggestions(bg, []project.Suggestion{{ImageID: im.ID, ClassID: boat.ID, Box: b, Source: "x"}, {ImageID: im.ID, ClassID: 77, Box: b, Source: "x"}}); err == nil {
		t.Errorf("batch with an unknown class accepted")
	}
	if gs, _ := s.Suggestions(bg, project.SuggestionFilter{}); len(gs) != 3 {
		t.Errorf("bad batch left %d suggestions, want 3", len(gs))
	}
	l, err := acceptOne(s, ids[0], rev.ID, b, boat.ID)
	if err != nil {
		t.Fatal(err)
	}
	if l.Origin != project.OriginAccepted || l.Source != "detector-v7" || l.Score != 0.91 || l.SuggestionID != ids[0] {
		t.Errorf("accepted label: %+v", l)
	}
	corrected := b.Translate(101, 1)
	l2, err := acceptOne(s, ids[1], rev.ID, corrected, boat.ID)
	if err != nil || l2.Origin != project.OriginCorrected || l2.Box != corrected {
		t.Errorf("corrected: %+v %v", l2, err)
	}
	if err := rejectOne(s, ids[2], rev.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := acceptOne(s, ids[2], rev.ID, b, boat.ID); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("accepting a rejected suggestion: %v", err)
	}
	if err := rejectOne(s, ids[0], rev.ID); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("rejecting an accepted suggestion: %v", err)
	}
	if err := rejectOne(s, 999, rev.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("rejecting a missing suggestion: %v", err)
	}
	g, _ := s.Suggestion(bg, ids[1])
	if g.State != project.SuggestionCorrected || g.ReviewerID != rev.ID || g.LabelID != l2.ID || g.Reviewed.IsZero() {
		t.Errorf("reviewed suggestion: %+v", g)
	}
	if gs, _ := s.Suggestions(bg, project.SuggestionFilter{State: project.SuggestionRejected, Source: "detector-v7"}); len(gs) != 1 || gs[0].ID != ids[2] {
		t.Errorf("filter by state: %+v", gs)
	}
	s.DeleteLabel(bg, l2.ID)
	if g, _ := s.Suggestion(bg, ids[1]); g.LabelID != 0 {
		t.Errorf("suggestion still links a deleted label")
	}
	if err := s.DeleteSuggestion(bg, ids[0]); err != nil {
		t.Fatal(err)
	}
	if l, _ := s.Label(bg, l.ID); l.SuggestionID != 0 {
		t.Errorf("label still links a deleted suggestion")
	}

	s.SetImageStatus(bg, im.ID, rev.ID, project.StatusStarted, rev.ID)
	addImage(t, s, 1)
	c, err := s.Counts(bg)
	if err != nil {
		t.Fatal(err)
	}
	if c.Images != 2 || c.ImagesBy[project.StatusStarted] != 1 || c.ImagesBy[project.StatusNew] != 1 || c.ImagesBy[project.StatusDone] != 0 {
		t.Errorf("images: %d %v", c.Images, c.ImagesBy)
	}
	if c.Labels != 1 || c.Suggestions[project.SuggestionRejected] != 1 || c.Suggestions[project.SuggestionCorrected] != 1 || c.Suggestions[project.SuggestionAccepted] != 0 {
		t.Errorf("labels %d suggestions %v", c.Labels, c.Suggestions)
	}
	if len(c.LabelsByClass) != 2 || c.LabelsByClass[0].Count != 1 || c.LabelsByClass[1].Count != 0 {
		t.Errorf("by class: %+v", c.LabelsByClass)
	}
	if len(c.LabelsByAnnotator) != 1 || c.LabelsByAnnotator[0].Count != 1 {
		t.Errorf("by annotator: %+v", c.LabelsByAnnotator)
	}
	s.AddSuggestions(bg, []project.Suggestion{{ImageID: im.ID, ClassID: kayak.ID, Box: b, Score: 0.4, Source: "other"}})
	per, err := s.CountsByImage(bg)
	if err != nil {
		t.Fatal(err)
	}
	if len(per) != 1 || per[im.ID] != (project.ImageCounts{Labels: 1, Pending: 1}) {
		t.Errorf("per image: %+v", per)
	}
}

// One connection writes in many short transactions while another reads and
// also writes; with the busy timeout no "database is locked" reaches the
// caller.
func TestTwoConnectionsOnOneFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "shared.boxw")
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Close()
	r, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	im := addImage(t, w, 0)
	cl, _ := w.AddClass(bg, project.Class{Name: "buoy"})
	an, _ := w.AddAnnotator(bg, "Ines")
	an2, _ := r.AddAnnotator(bg, "Tomas")

	const n = 200
	var wg sync.WaitGroup
	errs := make(chan error, 3*n)
	wg.Add(3)
	go func() {
		defer wg.Done()
		for i := 0; i < n; i++ {
			_, err := w.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: cl.ID, AnnotatorID: an.ID, Box: project.Box{X0: 0, Y0: 0, X1: float64(i + 1), Y1: 5}})
			if err != nil {
				errs <- err
			}
		}
	}()
	go func() {
		defer wg.Done()
		for i := 0; i < n; i++ {
			if _, err := r.Labels(bg, project.LabelFilter{ImageID: im.ID}); err != nil {
				errs <- err
			}
			if _, err := r.Counts(bg); err != nil {
				errs <- err
			}
		}
	}()
	go func() {
		defer wg.Done()
		for i := 0; i < n; i++ {
			_, err := r.AddLabel(bg, project.Label{ImageID: im.ID, ClassID: cl.ID, AnnotatorID: an2.ID, Box: project.Box{X0: 0, Y0: 0, X1: float64(i + 1), Y1: 5}})
			if err != nil {
				errs <- err
			}
		}
	}()
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Errorf("concurrent use: %v", err)
	}
	if c, _ := r.Counts(bg); c.Labels != 2*n {
		t.Errorf("labels stored: %d, want %d", c.Labels, 2*n)
	}
}

// acceptOne accepts one suggestion with a final box and class through
// Decide and reads back the label it made.
func acceptOne(s *Store, id, reviewerID int64, final project.Box, classID int64) (project.Label, error) {
	made, err := s.Decide(bg, reviewerID, []project.Decision{{SuggestionID: id, Accept: true, Box: final, ClassID: classID}})
	if err != nil {
		return project.Label{}, err
	}
	return s.Label(bg, made[id])
}

// rejectOne rejects one suggestion through Decide.
func rejectOne(s *Store, id, reviewerID int64) error {
	_, err := s.Decide(bg, reviewerID, []project.Decision{{SuggestionID: id}})
	return err
}
