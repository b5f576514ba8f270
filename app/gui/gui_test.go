package gui

import (
	"context"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/internal/testkit"
	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
	"boxwright/store"
)

// waitDecoded opens the UI's next decode result or fails after a while.
func waitDecoded(t *testing.T, ch <-chan error) {
	t.Helper()
	select {
	case err := <-ch:
		if err != nil {
			t.Fatalf("decoding the image for display: %v", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("the image was not shown within 10 s")
	}
}

func labelsOf(t *testing.T, path string, imageIndex int, annotator string) int {
	t.Helper()
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ctx := context.Background()
	ims, _ := s.Images(ctx)
	f := project.LabelFilter{ImageID: ims[imageIndex].ID}
	if annotator != "" {
		a, err := s.AnnotatorByName(ctx, annotator)
		if err != nil {
			t.Fatal(err)
		}
		f.AnnotatorID = a.ID
	}
	ls, _ := s.Labels(ctx, f)
	return len(ls)
}

func TestWindowShowsProjectImagesAndLabels(t *testing.T) {
	path := testkit.SmallDemo(t)
	wantFirst := labelsOf(t, path, 0, "Ines")
	wantAll := labelsOf(t, path, 1, "")
	wantSecondInes := labelsOf(t, path, 1, "Ines")

	a := test.NewTempApp(t)
	u := newUI(a)
	u.annotatorFlag = "Ines"
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	u.win.Resize(fyne.NewSize(1000, 700))
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	waitDecoded(t, decoded)

	if n := u.nav.list.Length(); n != 3 {
		t.Errorf("image list has %d rows, want 3", n)
	}
	if !strings.Contains(u.win.Title(), ops.DemoProjectName) || !strings.Contains(u.win.Title(), "Ines") {
		t.Errorf("title %q does not name the project and the annotator", u.win.Title())
	}
	if got := editable(u.view.Items()); got != wantFirst || got == 0 {
		t.Errorf("first image shows %d editable boxes, want Ines's %d", got, wantFirst)
	}
	if !strings.Contains(u.summary.Text, "3 images") {
		t.Errorf("summary %q", u.summary.Text)
	}

	// Next image from the keyboard; the others' boxes are a read-only layer.
	u.win.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyPageDown})
	waitDecoded(t, decoded)
	if u.selected != 1 {
		t.Fatalf("Page Down selected image %d, want 1", u.selected)
	}
	items := u.view.Items()
	if got := editable(items); got != wantSecondInes {
		t.Errorf("second image shows %d editable boxes, want %d", got, wantSecondInes)
	}
	if len(items)-suggestionsIn(items) != wantAll {
		t.Errorf("second image shows %d boxes in all, want %d", len(items), wantAll)
	}
	for _, it := range items {
		if it.ReadOnly && !strings.Contains(it.Caption, " · Tomas") {
			t.Errorf("read-only caption %q should name the other annotator", it.Caption)
		}
	}
	if !strings.Contains(u.status.Text, "640×480") {
		t.Errorf("status line %q", u.status.Text)
	}
}

func suggestionsIn(items []canvas.Item) int {
	n := 0
	for _, it := range items {
		if it.Suggestion {
			n++
		}
	}
	return n
}

func editable(items []canvas.Item) int {
	n := 0
	for _, it := range items {
		if !it.ReadOnly && !it.Suggestion {
			n++
		}
	}
	return n
}

func TestWindowReportsUnreadableImage(t *testing.T) {
	path := testkit.SmallDemo(t)
	s, _ := store.Open(path)
	ims, _ := s.Images(context.Background())
	s.RelinkImage(context.Background(), ims[0].ID, "images/gone.jpg")
	s.Close()

	a := test.NewTempApp(t)
	u := newUI(a)
	u.annotatorFlag = "Ines"
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	select {
	case err := <-decoded:
		if err == nil {
			t.Fatal("a missing file decoded")
		}
	case <-time.After(10 * time.Second):
		t.Fatal("no decode result")
	}
	if msg := u.view.Message(); !strings.Contains(msg, "Cannot show this image") {
		t.Errorf("view message %q", msg)
	}
}

func TestWelcomeScreenWithoutProject(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	u := newUI(a)
	u.win.Resize(fyne.NewSize(900, 600))
	var buttons []string
	var walk func(o fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		if c, ok := o.(*fyne.Container); ok {
			for _, k := range c.Objects {
				walk(k)
			}
		}
		if b, ok := o.(*widget.Button); ok {
			buttons = append(buttons, b.Text)
		}
	}
	walk(u.body)
	if strings.Join(buttons, ",") != "Open project…,New project…,Make demo project…" {
		t.Errorf("welcome buttons: %v", buttons)
	}
}

// The dataset dialogs' forms turn their fields into the same jobs the
// command line runs.
func TestImportFormBuildsJob(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	u := newUI(a)
	form, read := u.importForm()
	if _, err := read(); err == nil {
		t.Errorf("an empty form was accepted")
	}
	src := form.Items[1].Widget.(*fyne.Container).Objects[0].(*widget.Entry)
	src.SetText("/data/old/labels.json")
	j, err := read()
	if err != nil || j.Annotator != "labels" || j.Layout != "json" || j.Src != "/data/old/labels.json" {
		t.Errorf("job %+v, %v", j, err)
	}
}
