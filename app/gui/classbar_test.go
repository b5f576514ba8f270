package gui

import (
	"context"
	"errors"
	"image/color"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/store"
)

// classBarFixture is a bar on a real, empty project in a test window.
type classBarFixture struct {
	st      *store.Store
	bar     *classBar
	win     fyne.Window
	changed int
	picked  []int64
}

func newClassBarFixture(t *testing.T) *classBarFixture {
	t.Helper()
	test.NewTempApp(t)
	st, err := store.Create(filepath.Join(t.TempDir(), "p"+store.Extension))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	f := &classBarFixture{st: st}
	f.win = test.NewTempWindow(t, widget.NewLabel(""))
	f.bar = newClassBar(f.win, func() backend.Project {
		if f.st == nil { // a nil *store.Store in the interface would not be nil
			return nil
		}
		return f.st
	}, func() { f.changed++ },
		func(id int64) { f.picked = append(f.picked, id) })
	f.win.SetContent(f.bar.Object())
	f.win.Resize(fyne.NewSize(600, 500))
	return f
}

func (f *classBarFixture) class(t *testing.T, name string) project.Class {
	t.Helper()
	c, err := f.st.AddClass(context.Background(), project.Class{Name: name})
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func (f *classBarFixture) classes(t *testing.T) []project.Class {
	t.Helper()
	cs, err := f.st.Classes(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return cs
}

// labels gives class c n boxes on one image, drawn by one annotator.
func (f *classBarFixture) labels(t *testing.T, c project.Class, n int) {
	t.Helper()
	ctx := context.Background()
	im, err := f.st.ImageBySHA256(ctx, strings.Repeat("a", 64))
	if err != nil {
		im, err = f.st.AddImage(ctx, project.Image{Path: "a.jpg", SHA256: strings.Repeat("a", 64), Width: 640, Height: 480, Orientation: 1})
		if err != nil {
			t.Fatal(err)
		}
	}
	a, err := f.st.AnnotatorByName(ctx, "ana")
	if err != nil {
		if a, err = f.st.AddAnnotator(ctx, "ana"); err != nil {
			t.Fatal(err)
		}
	}
	for i := range n {
		x := float64(10 * i)
		if _, err := f.st.AddLabel(ctx, project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, Box: project.Box{X0: x, Y0: 0, X1: x + 5, Y1: 5}}); err != nil {
			t.Fatal(err)
		}
	}
}

func (f *classBarFixture) labelsOf(t *testing.T, classID int64) int {
	t.Helper()
	ls, err := f.st.Labels(context.Background(), project.LabelFilter{ClassID: classID})
	if err != nil {
		t.Fatal(err)
	}
	return len(ls)
}

func TestClassBarSetDataRendersRowsAndPicks(t *testing.T) {
	f := newClassBarFixture(t)
	car, person := f.class(t, "car"), f.class(t, "a rather long class name that will not fit the panel")
	f.bar.SetData([]project.Class{car, person}, map[int64]int{car.ID: 1}, map[int64]int{car.ID: 2}, map[int64]int{car.ID: 7, person.ID: 3}, person.ID, "Ines")

	if len(f.bar.rows) != 2 {
		t.Fatalf("%d rows, want 2", len(f.bar.rows))
	}
	want := []struct{ key, name, counts string }{
		{"1", "car", "1 Ines's · 2 all here\n7 in the project"},
		{"2", person.Name, "0 here\n3 in the project"},
	}
	for i, w := range want {
		r := f.bar.rows[i]
		if r.key.Text != w.key || r.name.Text != w.name || r.counts.Text != w.counts {
			t.Errorf("row %d shows %q %q %q, want %q %q %q", i, r.key.Text, r.name.Text, r.counts.Text, w.key, w.name, w.counts)
		}
		if r.name.Truncation != fyne.TextTruncateEllipsis {
			t.Errorf("row %d: long names must be truncated with an ellipsis", i)
		}
	}
	if f.bar.rows[0].name.TextStyle.Bold || !f.bar.rows[1].name.TextStyle.Bold {
		t.Error("only the current class should be bold")
	}
	if w := f.bar.Object().MinSize().Width; w < classBarMinWidth {
		t.Errorf("panel min width %v, want at least %v", w, classBarMinWidth)
	}
	for _, bt := range f.bar.buttons {
		if bt.Disabled() {
			t.Errorf("%q disabled while there are classes", bt.Text)
		}
	}

	test.Tap(f.bar.rows[0])
	test.Tap(f.bar.rows[1])
	if len(f.picked) != 2 || f.picked[0] != car.ID || f.picked[1] != person.ID {
		t.Errorf("picked %v, want [%d %d]", f.picked, car.ID, person.ID)
	}

	// A new SetData replaces the rows; with no classes the buttons that act
	// on the current class are off.
	f.bar.SetData(nil, nil, nil, nil, 0, "")
	if len(f.bar.rows) != 0 {
		t.Errorf("%d rows after clearing", len(f.bar.rows))
	}
	for _, bt := range f.bar.buttons {
		if !bt.Disabled() {
			t.Errorf("%q enabled with no classes", bt.Text)
		}
	}
}

func TestClassBarAddRenameRecolour(t *testing.T) {
	f := newClassBarFixture(t)
	if err := f.bar.add("car"); err != nil {
		t.Fatal(err)
	}
	if f.changed != 1 {
		t.Errorf("changed called %d times, want 1", f.changed)
	}
	cs := f.classes(t)
	if len(cs) != 1 || cs[0].Name != "car" || cs[0].HotKey != "1" || cs[0].Color != project.Palette[0] {
		t.Fatalf("after add: %+v", cs)
	}
	car := cs[0]

	for _, bad := range []string{"car", "", " car", "a\tb"} {
		err := f.bar.add(bad)
		if err == nil {
			t.Errorf("add(%q) succeeded", bad)
		}
		if bad == "car" && !errors.Is(err, project.ErrDuplicate) {
			t.Errorf("add duplicate: %v, want ErrDuplicate", err)
		}
		if bad != "car" && !errors.Is(err, project.ErrInvalid) {
			t.Errorf("add(%q): %v, want ErrInvalid", bad, err)
		}
	}
	if n := len(f.classes(t)); n != 1 || f.changed != 1 {
		t.Errorf("refused adds changed something: %d classes, changed %d", n, f.changed)
	}

	if err := f.bar.rename(car.ID, "lorry"); err != nil {
		t.Fatal(err)
	}
	if c, _ := f.st.Class(context.Background(), car.ID); c.Name != "lorry" || f.changed != 2 {
		t.Errorf("after rename: %+v, changed %d", c, f.changed)
	}
	f.class(t, "bus")
	if err := f.bar.rename(car.ID, "bus"); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("rename onto an existing name: %v, want ErrDuplicate", err)
	}
	if err := f.bar.rename(car.ID, ""); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("rename to empty: %v, want ErrInvalid", err)
	}

	pink := color.NRGBA{0xff, 0x10, 0x80, 0x40}
	if err := f.bar.recolour(car.ID, pink); err != nil {
		t.Fatal(err)
	}
	c, _ := f.st.Class(context.Background(), car.ID)
	if want := (color.NRGBA{0xff, 0x10, 0x80, 0xff}); c.Color != want || c.Name != "lorry" || c.HotKey != "1" {
		t.Errorf("after recolour: %+v, want colour %v, name and key kept", c, want)
	}
	if f.changed != 3 {
		t.Errorf("changed called %d times, want 3", f.changed)
	}
}

func TestClassBarMergeAndRemove(t *testing.T) {
	f := newClassBarFixture(t)
	car, van, bus, tram := f.class(t, "car"), f.class(t, "van"), f.class(t, "bus"), f.class(t, "tram")
	f.labels(t, car, 3)
	f.labels(t, van, 2)
	f.labels(t, bus, 1)

	if err := f.bar.merge(van.ID, car.ID); err != nil {
		t.Fatal(err)
	}
	if n := f.labelsOf(t, car.ID); n != 5 {
		t.Errorf("car has %d labels after merge, want 5", n)
	}
	if _, err := f.st.Class(context.Background(), van.ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("van still there after merge: %v", err)
	}
	if err := f.bar.merge(car.ID, car.ID); err == nil {
		t.Error("merging a class into itself succeeded")
	}
	if f.changed != 1 {
		t.Errorf("changed called %d times, want 1", f.changed)
	}

	if err := f.bar.remove(bus.ID, project.DeleteClassOptions{}); !errors.Is(err, project.ErrInUse) {
		t.Errorf("delete of a class in use: %v, want ErrInUse", err)
	}
	if f.changed != 1 || f.labelsOf(t, bus.ID) != 1 {
		t.Error("refused delete changed something")
	}
	if err := f.bar.remove(bus.ID, project.DeleteClassOptions{MoveTo: car.ID}); err != nil {
		t.Fatal(err)
	}
	if n := f.labelsOf(t, car.ID); n != 6 {
		t.Errorf("car has %d labels after moving bus's, want 6", n)
	}
	if err := f.bar.remove(tram.ID, project.DeleteClassOptions{}); err != nil {
		t.Errorf("delete of an unused class: %v", err)
	}
	if err := f.bar.remove(car.ID, project.DeleteClassOptions{DeleteLabels: true}); err != nil {
		t.Fatal(err)
	}
	if cs := f.classes(t); len(cs) != 0 {
		t.Errorf("classes left: %+v", cs)
	}
	if n := f.labelsOf(t, 0); n != 0 {
		t.Errorf("%d labels left after deleting with labels", n)
	}
	if f.changed != 4 {
		t.Errorf("changed called %d times, want 4", f.changed)
	}
}

func TestClassBarWithoutProject(t *testing.T) {
	f := newClassBarFixture(t)
	f.st = nil
	if err := f.bar.add("car"); err == nil || f.changed != 0 {
		t.Errorf("add without a project: %v, changed %d", err, f.changed)
	}
}

// The Add button's dialog goes through add: typing a name and pressing
// Enter stores the class.
func TestClassBarAddDialog(t *testing.T) {
	f := newClassBarFixture(t)
	f.bar.SetData(nil, nil, nil, nil, 0, "")
	var add *widget.Button
	for _, o := range test.LaidOutObjects(f.bar.Object()) {
		if b, ok := o.(*widget.Button); ok && b.Text == "Add…" {
			add = b
		}
	}
	if add == nil {
		t.Fatal("no Add… button")
	}
	test.Tap(add)
	top := f.win.Canvas().Overlays().Top()
	if top == nil {
		t.Fatal("Add… opened no dialog")
	}
	var entry *widget.Entry
	for _, o := range test.LaidOutObjects(top) {
		if e, ok := o.(*widget.Entry); ok {
			entry = e
		}
	}
	if entry == nil {
		t.Fatal("the Add dialog has no entry")
	}
	test.Type(entry, "forklift")
	entry.TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	cs := f.classes(t)
	if len(cs) != 1 || cs[0].Name != "forklift" || f.changed != 1 {
		t.Errorf("after the dialog: %+v, changed %d", cs, f.changed)
	}
}

// The Delete dialog of a class in use offers to move its labels, and does.
func TestClassBarDeleteDialogMovesLabels(t *testing.T) {
	f := newClassBarFixture(t)
	car, van := f.class(t, "car"), f.class(t, "van")
	f.labels(t, car, 4)
	f.bar.SetData([]project.Class{car, van}, nil, nil, map[int64]int{car.ID: 4}, car.ID, "")
	f.bar.showDelete()
	top := f.win.Canvas().Overlays().Top()
	if top == nil {
		t.Fatal("Delete… opened no dialog")
	}
	var confirm *widget.Button
	for _, o := range test.LaidOutObjects(top) {
		if b, ok := o.(*widget.Button); ok && b.Text == "Delete class" {
			confirm = b
		}
	}
	if confirm == nil {
		t.Fatal("the Delete dialog has no confirm button")
	}
	test.Tap(confirm)
	if cs := f.classes(t); len(cs) != 1 || cs[0].ID != van.ID {
		t.Errorf("classes after delete: %+v, want only van", cs)
	}
	if n := f.labelsOf(t, van.ID); n != 4 || f.changed != 1 {
		t.Errorf("van has %d labels, changed %d; want 4, 1", n, f.changed)
	}
}
