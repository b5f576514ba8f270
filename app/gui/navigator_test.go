package gui

import (
	"context"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/store"
)

// The image filters select the same images as a direct query of the store.
func TestNavigatorFiltersMatchTheStore(t *testing.T) {
	path := testkit.SmallDemo(t)
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	ims, _ := s.Images(ctx)
	tomas, _ := s.AnnotatorByName(ctx, "Tomas")
	kayak, _ := s.ClassByName(ctx, "kayak")
	want := map[string]int{}
	for _, im := range ims {
		want["status "+statusWord(im.Status)]++
		ls, _ := s.Labels(ctx, project.LabelFilter{ImageID: im.ID})
		var k, kt, tm bool
		for _, l := range ls {
			k = k || l.ClassID == kayak.ID
			kt = kt || (l.ClassID == kayak.ID && l.AnnotatorID == tomas.ID)
			tm = tm || l.AnnotatorID == tomas.ID
		}
		want["kayak"] += b2i(k)
		want["kayak by Tomas"] += b2i(kt)
		want["Tomas"] += b2i(tm)
	}
	s.Close()

	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = "Ines"
	u.win.Resize(fyne.NewSize(1200, 800))
	for _, im := range ims {
		u.nav.thumbs[im.ID] = nil // no thumbnail work in this test
	}
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	n := u.nav
	check := func(what string, want int) {
		t.Helper()
		if got := n.list.Length(); got != want {
			t.Errorf("%s: %d rows, want %d", what, got, want)
		}
	}
	check("no filter", len(ims))
	n.class.SetSelected("with kayak")
	check("with kayak", want["kayak"])
	n.who.SetSelected("labelled by Tomas")
	check("kayak by Tomas", want["kayak by Tomas"])
	n.class.SetSelected(anyClass)
	check("by Tomas", want["Tomas"])
	n.ClearFilters()
	st := statusWord(ims[0].Status)
	n.status.SetSelected(st)
	check("status "+st, want["status "+st])
	// Stepping moves through the filtered rows only; a hidden image asked
	// for by index clears the filters.
	n.status.SetSelected(statusWord(project.StatusSkipped))
	check("skipped", want["status skipped"])
	u.selectIndex(len(ims) - 1)
	check("after selecting a hidden image", len(ims))
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}
