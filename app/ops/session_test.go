package ops

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"boxwright/app/internal/faults"
	"boxwright/project"
	"boxwright/store"
)

// sessFixture is a project with two images, two classes and two
// annotators, a session of Ines's on it, and a second connection that
// reads what was really written.
type sessFixture struct {
	t           *testing.T
	ctx         context.Context
	path        string
	st, check   *store.Store
	img, img2   project.Image
	cls, cls2   project.Class
	ines, tomas project.Annotator
	s           *Session
}

func newSessFixture(t *testing.T) *sessFixture {
	t.Helper()
	f := &sessFixture{t: t, ctx: context.Background(), path: filepath.Join(t.TempDir(), "p"+store.Extension)}
	st, err := store.Create(f.path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	f.st = st
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	f.img, err = st.AddImage(f.ctx, project.Image{Path: "a.jpg", SHA256: strings.Repeat("a", 64), Width: 640, Height: 480, Orientation: 1})
	must(err)
	f.img2, err = st.AddImage(f.ctx, project.Image{Path: "b.jpg", SHA256: strings.Repeat("b", 64), Width: 640, Height: 480, Orientation: 1})
	must(err)
	f.cls, err = st.AddClass(f.ctx, project.Class{Name: "buoy"})
	must(err)
	f.cls2, err = st.AddClass(f.ctx, project.Class{Name: "kayak"})
	must(err)
	f.ines, err = st.AddAnnotator(f.ctx, "Ines")
	must(err)
	f.tomas, err = st.AddAnnotator(f.ctx, "Tomas")
	must(err)
	f.check, err = store.Open(f.path)
	must(err)
	t.Cleanup(func() { f.check.Close() })
	f.s = NewSession(st, f.ines)
	return f
}

// stored is Ines's labels on an image, read through the second connection.
func (f *sessFixture) stored(imageID int64) []project.Label {
	f.t.Helper()
	ls, err := f.check.Labels(f.ctx, project.LabelFilter{ImageID: imageID, AnnotatorID: f.ines.ID})
	if err != nil {
		f.t.Fatal(err)
	}
	return ls
}

func sessBrief(l project.Label) string {
	return fmt.Sprintf("class %d %v %s by %d on %d", l.ClassID, l.Box, l.Origin, l.AnnotatorID, l.ImageID)
}

// expect asserts that the store holds exactly the boxes want for Ines on
// the image, and that the session shows the same boxes in the same rows.
func (f *sessFixture) expect(step string, imageID int64, want ...project.Box) map[int64]project.Label {
	f.t.Helper()
	got := f.stored(imageID)
	var gb []string
	for _, l := range got {
		gb = append(gb, l.Box.String())
		if l.Origin != project.OriginDrawn || l.AnnotatorID != f.ines.ID {
			f.t.Errorf("%s: stored %s", step, sessBrief(l))
		}
	}
	var wb []string
	for _, b := range want {
		wb = append(wb, b.String())
	}
	slices.Sort(gb)
	slices.Sort(wb)
	if !slices.Equal(gb, wb) {
		f.t.Fatalf("%s: the store holds %v, want %v", step, gb, wb)
	}
	boxes, err := f.s.Boxes(f.ctx, imageID)
	if err != nil {
		f.t.Fatal(err)
	}
	var shown, rows []string
	for _, l := range boxes {
		shown = append(shown, fmt.Sprintf("%d %s", l.ID, sessBrief(l)))
	}
	for _, l := range got {
		rows = append(rows, fmt.Sprintf("%d %s", l.ID, sessBrief(l)))
	}
	slices.Sort(shown)
	slices.Sort(rows)
	if !slices.Equal(shown, rows) {
		f.t.Fatalf("%s: the session shows\n  %s\nthe store holds\n  %s", step, strings.Join(shown, "\n  "), strings.Join(rows, "\n  "))
	}
	return boxes
}

func (f *sessFixture) create(imageID int64, b project.Box) int64 {
	f.t.Helper()
	k, err := f.s.Create(f.ctx, imageID, f.cls.ID, b)
	if err != nil {
		f.t.Fatalf("create %v: %v", b, err)
	}
	if k == 0 {
		f.t.Fatal("create returned key 0")
	}
	return k
}

func (f *sessFixture) move(imageID int64, k int64, dx, dy float64) error {
	return f.s.Change(f.ctx, imageID, "move", func(_ int64, l project.Label) project.Label {
		l.Box = l.Box.Translate(dx, dy)
		return l
	}, k)
}

func (f *sessFixture) undo(wantImage int64) {
	f.t.Helper()
	img, err := f.s.Undo(f.ctx)
	if err != nil || img != wantImage {
		f.t.Fatalf("undo: image %d, %v; want image %d", img, err, wantImage)
	}
}

func (f *sessFixture) redo(wantImage int64) {
	f.t.Helper()
	img, err := f.s.Redo(f.ctx)
	if err != nil || img != wantImage {
		f.t.Fatalf("redo: image %d, %v; want image %d", img, err, wantImage)
	}
}

// refuse makes the project file refuse writes to labels, as a full disk
// would; the returned func lifts it.
func (f *sessFixture) refuse(kinds ...string) func() {
	f.t.Helper()
	return faults.RefuseLabelWrites(f.t, f.path, kinds...)
}

var (
	sessA = project.Box{X0: 10, Y0: 20, X1: 110, Y1: 90}
	sessB = project.Box{X0: 300, Y0: 200, X1: 340, Y1: 260}
)

func TestSessionEditsReachTheStore(t *testing.T) {
	f := newSessFixture(t)
	theirs, err := f.st.AddLabel(f.ctx, project.Label{ImageID: f.img.ID, ClassID: f.cls.ID, AnnotatorID: f.tomas.ID, Box: sessA})
	if err != nil {
		t.Fatal(err)
	}
	f.expect("start", f.img.ID)

	k := f.create(f.img.ID, sessA)
	boxes := f.expect("create", f.img.ID, sessA)
	if l := boxes[k]; l.ClassID != f.cls.ID || l.ID == 0 {
		t.Fatalf("key %d holds %+v", k, l)
	}
	row := boxes[k].ID
	if im, _ := f.check.Image(f.ctx, f.img.ID); im.Status != project.StatusStarted {
		t.Errorf("an image with its first box is %q, want started", im.Status)
	}

	if err := f.move(f.img.ID, k, 5, -3); err != nil {
		t.Fatal(err)
	}
	moved := sessA.Translate(5, -3)
	if f.expect("move", f.img.ID, moved)[k].ID != row {
		t.Errorf("a move did not update the box's row %d", row)
	}
	if err := f.s.Change(f.ctx, f.img.ID, "change class", func(_ int64, l project.Label) project.Label {
		l.ClassID = f.cls2.ID
		return l
	}, k); err != nil {
		t.Fatal(err)
	}
	if got := f.stored(f.img.ID); len(got) != 1 || got[0].ClassID != f.cls2.ID || got[0].ID != row {
		t.Fatalf("after the class change the store holds %v", got)
	}
	// A change that changes nothing is no step.
	if err := f.move(f.img.ID, k, 0, 0); err != nil {
		t.Fatal(err)
	}
	if w := f.s.CanUndo(); w != "change class" {
		t.Errorf("after an empty change the undo names %q, want the class change", w)
	}

	if err := f.s.Delete(f.ctx, f.img.ID, "delete a box", k); err != nil {
		t.Fatal(err)
	}
	f.expect("delete", f.img.ID)
	if w := f.s.CanUndo(); w != "delete a box" {
		t.Errorf("CanUndo %q", w)
	}
	f.undo(f.img.ID)
	boxes = f.expect("undo delete", f.img.ID, moved)
	if l, ok := boxes[k]; !ok || l.ClassID != f.cls2.ID || l.Origin != project.OriginDrawn {
		t.Errorf("undo brought back %+v under key %d (present %v)", l, k, ok)
	}
	if w := f.s.CanRedo(); w != "delete a box" {
		t.Errorf("CanRedo %q", w)
	}
	f.redo(f.img.ID)
	f.expect("redo delete", f.img.ID)
	f.undo(f.img.ID)
	f.undo(f.img.ID) // the class change
	if got := f.stored(f.img.ID); len(got) != 1 || got[0].ClassID != f.cls.ID {
		t.Fatalf("undoing the class change left %v", got)
	}
	f.undo(f.img.ID)
	f.expect("undo move", f.img.ID, sessA)
	f.undo(f.img.ID)
	f.expect("undo create", f.img.ID)
	if img, err := f.s.Undo(f.ctx); img != 0 || err != nil {
		t.Errorf("undo with nothing left: %d, %v", img, err)
	}

	// Another annotator's box on the image is neither shown nor touched.
	if l, err := f.check.Label(f.ctx, theirs.ID); err != nil || l.Box != sessA || l.AnnotatorID != f.tomas.ID {
		t.Errorf("Tomas's label is now %+v, %v", l, err)
	}

	// What was written is what a new session, started later, sees.
	f.redo(f.img.ID)
	f.redo(f.img.ID)
	later := NewSession(f.check, f.ines)
	bs, err := later.Boxes(f.ctx, f.img.ID)
	if err != nil || len(bs) != 1 {
		t.Fatalf("a new session sees %v, %v", bs, err)
	}
	for _, l := range bs {
		if l.Box != moved || l.ClassID != f.cls.ID {
			t.Errorf("a new session sees %s", sessBrief(l))
		}
	}
}

func TestSessionUndoAcrossImages(t *testing.T) {
	f := newSessFixture(t)
	k1 := f.create(f.img.ID, sessA)
	f.create(f.img2.ID, sessB)
	if err := f.move(f.img.ID, k1, 7, 7); err != nil {
		t.Fatal(err)
	}
	f.expect("edits", f.img.ID, sessA.Translate(7, 7))
	f.expect("edits", f.img2.ID, sessB)

	f.undo(f.img.ID)
	f.expect("undo 1", f.img.ID, sessA)
	f.undo(f.img2.ID)
	f.expect("undo 2", f.img2.ID)
	f.expect("undo 2", f.img.ID, sessA)
	f.undo(f.img.ID)
	f.expect("undo 3", f.img.ID)

	f.redo(f.img.ID)
	f.redo(f.img2.ID)
	f.redo(f.img.ID)
	f.expect("redone", f.img.ID, sessA.Translate(7, 7))
	f.expect("redone", f.img2.ID, sessB)
}

func TestSessionNewEditClearsRedo(t *testing.T) {
	f := newSessFixture(t)
	k := f.create(f.img.ID, sessA)
	if err := f.move(f.img.ID, k, 1, 0); err != nil {
		t.Fatal(err)
	}
	f.undo(f.img.ID)
	if f.s.CanRedo() != "move" {
		t.Fatalf("CanRedo %q after an undo", f.s.CanRedo())
	}
	if err := f.move(f.img.ID, k, 0, 4); err != nil {
		t.Fatal(err)
	}
	if w := f.s.CanRedo(); w != "" {
		t.Errorf("a new edit left %q to redo", w)
	}
	if img, err := f.s.Redo(f.ctx); img != 0 || err != nil {
		t.Errorf("redo after a new edit: image %d, %v", img, err)
	}
	f.expect("after redo", f.img.ID, sessA.Translate(0, 4))
}

func TestSessionHistoryReachesBeyond200(t *testing.T) {
	f := newSessFixture(t)
	k := f.create(f.img.ID, sessA)
	const n = 250 // the screen promises at least 200 steps
	for i := 0; i < n; i++ {
		dx := 1.0
		if i%2 == 1 {
			dx = 0 // alternate directions so the box stays on the image
		}
		if err := f.move(f.img.ID, k, dx, 1-dx); err != nil {
			t.Fatal(err)
		}
	}
	f.expect("after the moves", f.img.ID, sessA.Translate(n/2, n/2))
	for i := 0; i < n; i++ {
		f.undo(f.img.ID)
		if i == n/2-1 {
			f.expect("half undone", f.img.ID, sessA.Translate(n/4+1, n/4))
		}
	}
	f.expect("all undone", f.img.ID, sessA)
	if w := f.s.CanUndo(); w != "draw a box" {
		t.Fatalf("after %d undos the next is %q, want the drawing", n, w)
	}
	f.undo(f.img.ID)
	f.expect("drawing undone", f.img.ID)
}

func TestSessionDuplicate(t *testing.T) {
	f := newSessFixture(t)
	k := f.create(f.img.ID, sessA)
	keys, err := f.s.Duplicate(f.ctx, f.img.ID, func(b project.Box) project.Box { return b.Translate(10, 10) }, k)
	if err != nil || len(keys) != 1 || keys[0] == k {
		t.Fatalf("duplicate: %v, %v", keys, err)
	}
	boxes := f.expect("duplicate", f.img.ID, sessA, sessA.Translate(10, 10))
	if boxes[keys[0]].Box != sessA.Translate(10, 10) || boxes[keys[0]].ClassID != f.cls.ID {
		t.Errorf("the copy is %s", sessBrief(boxes[keys[0]]))
	}
	f.undo(f.img.ID)
	f.expect("undo duplicate", f.img.ID, sessA)
}

func TestSessionWriteFailureKeepsEditsInOrder(t *testing.T) {
	f := newSessFixture(t)
	k1 := f.create(f.img.ID, sessA)
	del := f.create(f.img.ID, sessB)
	row1 := f.expect("before", f.img.ID, sessA, sessB)[k1].ID

	lift := f.refuse("INSERT", "UPDATE", "DELETE")
	err := f.move(f.img.ID, k1, 20, 0)
	if err == nil || !strings.Contains(err.Error(), "disk full (test)") || !strings.Contains(err.Error(), "move") {
		t.Fatalf("a refused write returned %v; want the store's reason and the edit's name", err)
	}
	if n := f.s.Unsaved(); n != 1 {
		t.Fatalf("Unsaved %d after a refused write, want 1", n)
	}
	boxes, err := f.s.Boxes(f.ctx, f.img.ID)
	if err != nil || boxes[k1].Box != sessA.Translate(20, 0) {
		t.Fatalf("the session does not show the refused edit: %v, %v", boxes[k1], err)
	}
	// Following edits queue behind it: a new box, a move of that box, a
	// deletion.
	k2, err := f.s.Create(f.ctx, f.img.ID, f.cls2.ID, project.Box{X0: 400, Y0: 50, X1: 450, Y1: 100})
	if err == nil || k2 == 0 {
		t.Fatalf("create while refused: key %d, %v", k2, err)
	}
	if err := f.move(f.img.ID, k2, 0, 30); err == nil {
		t.Fatal("a move while refused reported success")
	}
	if err := f.s.Delete(f.ctx, f.img.ID, "delete a box", del); err == nil {
		t.Fatal("a delete while refused reported success")
	}
	if n := f.s.Unsaved(); n != 4 {
		t.Fatalf("Unsaved %d, want 4", n)
	}
	boxes, _ = f.s.Boxes(f.ctx, f.img.ID)
	if len(boxes) != 2 || boxes[k2].Box != (project.Box{X0: 400, Y0: 80, X1: 450, Y1: 130}) || boxes[k1].Box != sessA.Translate(20, 0) {
		t.Fatalf("the session shows %v", boxes)
	}
	if got := f.stored(f.img.ID); len(got) != 2 || got[0].Box != sessA || got[1].Box != sessB {
		t.Fatalf("refused edits reached the store: %v", got)
	}
	if err := f.s.Flush(f.ctx); err == nil || f.s.Unsaved() != 4 {
		t.Fatalf("a flush while refused: %v, Unsaved %d", err, f.s.Unsaved())
	}

	lift()
	if err := f.s.Flush(f.ctx); err != nil {
		t.Fatalf("flush after the store accepts writes again: %v", err)
	}
	if n := f.s.Unsaved(); n != 0 {
		t.Fatalf("Unsaved %d after a good flush", n)
	}
	boxes = f.expect("flushed", f.img.ID, sessA.Translate(20, 0), project.Box{X0: 400, Y0: 80, X1: 450, Y1: 130})
	if boxes[k1].ID != row1 {
		t.Errorf("the queued move wrote row %d, the box was row %d", boxes[k1].ID, row1)
	}
	if boxes[k2].ClassID != f.cls2.ID {
		t.Errorf("the queued box has class %d, want %d", boxes[k2].ClassID, f.cls2.ID)
	}

	// Undo reaches the edits made while unsaved.
	f.undo(f.img.ID) // the deletion
	f.expect("undo delete", f.img.ID, sessA.Translate(20, 0), project.Box{X0: 400, Y0: 80, X1: 450, Y1: 130}, sessB)
	f.undo(f.img.ID) // the move of the new box
	f.undo(f.img.ID) // its drawing
	f.expect("undo the unsaved box", f.img.ID, sessA.Translate(20, 0), sessB)
	f.undo(f.img.ID)
	f.expect("undo the first refused move", f.img.ID, sessA, sessB)
}

func TestSessionUndoBeforeFailedWriteIsSaved(t *testing.T) {
	f := newSessFixture(t)
	lift := f.refuse("INSERT")
	if _, err := f.s.Create(f.ctx, f.img.ID, f.cls.ID, sessA); err == nil {
		t.Fatal("create while refused reported success")
	}
	if _, err := f.s.Undo(f.ctx); err == nil {
		t.Fatal("undo behind a refused write reported success")
	}
	if boxes, _ := f.s.Boxes(f.ctx, f.img.ID); len(boxes) != 0 || f.s.Unsaved() != 2 {
		t.Fatalf("after undo the session shows %v with %d unsaved", boxes, f.s.Unsaved())
	}
	lift()
	if err := f.s.Flush(f.ctx); err != nil {
		t.Fatal(err)
	}
	f.expect("flushed", f.img.ID)
	f.redo(f.img.ID)
	f.expect("redo", f.img.ID, sessA)
}
