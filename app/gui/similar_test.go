package gui

import (
	"context"
	"image"
	"slices"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/suggest/exemplar"
)

// A search from the window stores its finds as pending suggestions, and
// the live threshold replaces them.
func TestFindSimilarInTheWindow(t *testing.T) {
	u, path := openDemoAs(t, "Ines")
	im, ex := testkit.Exemplar(t, path)
	u.selectImageID(im.ID)
	pyr, err := u.cache.Get(context.Background(), im.ID, u.st.ImagePath(im))
	if err != nil {
		t.Fatal(err)
	}
	u.findSimilar(ex.ClassID, []project.Box{ex.Box}, pyr.Level(0), []project.Image{im}, exemplar.Options{Threshold: similarFloor, Scales: exemplar.DefaultScales()}, 0.5, "")
	// The job hands its result back through fyne.Do, which the test
	// driver runs on the job's goroutine; wait for it.
	for i := 0; u.similar == nil; i++ {
		if i == 600 {
			t.Fatal("the search did not finish within 30 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
	n, err := u.applySimilarThreshold(0.5)
	if err != nil {
		t.Fatal(err)
	}
	high, err := u.applySimilarThreshold(0.9)
	if err != nil || high > n {
		t.Errorf("threshold 0.9 kept %d of %d (%v)", high, n, err)
	}
	gs, _ := u.st.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source, ImageID: im.ID})
	if len(gs) != high {
		t.Errorf("%d stored after raising the threshold, want %d", len(gs), high)
	}
}

// The window's search keeps to the scales that make sense, as the command
// line does: scales that cannot are refused with the range that can (the
// window searched 0.001 and proposed three-pixel boxes, issue 14), and
// those left out are named on the results panel.
func TestFindSimilarScalesInTheWindow(t *testing.T) {
	u, path := openDemoAs(t, "Ines")
	im, ex := testkit.Exemplar(t, path)
	exs := []project.Box{ex.Box}
	size := image.Pt(im.Width, im.Height)
	for _, bad := range []string{"0.001:0.001:1", "2:1:3", "nan:1:3", "1:2:5000", "300,400"} {
		if _, _, err := similarScales(bad, false, exs, size, []project.Image{im}); err == nil || !strings.Contains(err.Error(), "scales from") {
			t.Errorf("%s: err %v, want one giving the scales that make sense", bad, err)
		}
	}
	sc, note, err := similarScales("0.01:1:3", false, exs, size, []project.Image{im})
	if err != nil || !slices.Equal(sc, []float64{1}) || !strings.Contains(note, "searched 1 of 3 scales") {
		t.Fatalf("0.01:1:3: scales %v, note %q, err %v", sc, note, err)
	}
	u.selectImageID(im.ID)
	pyr, err := u.cache.Get(context.Background(), im.ID, u.st.ImagePath(im))
	if err != nil {
		t.Fatal(err)
	}
	u.findSimilar(ex.ClassID, exs, pyr.Level(0), []project.Image{im}, exemplar.Options{Threshold: similarFloor, Scales: sc}, 0.5, note)
	for i := 0; u.similarWin == nil; i++ {
		if i == 600 {
			t.Fatal("the search did not finish within 30 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
	var texts []string
	for _, o := range test.LaidOutObjects(u.similarWin.Content()) {
		if l, ok := o.(*widget.Label); ok {
			texts = append(texts, l.Text)
		}
	}
	if !slices.ContainsFunc(texts, func(s string) bool { return strings.Contains(s, "Searched 1 of 3 scales") }) {
		t.Errorf("the panel says %q, nothing about the scales left out", texts)
	}
	gs, _ := u.st.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source})
	for _, g := range gs {
		if g.Box.Width() < exemplar.MinTemplateSide || g.Box.Height() < exemplar.MinTemplateSide {
			t.Errorf("suggestion %v is under %d px", g.Box, exemplar.MinTemplateSide)
		}
	}
}

// The search job's Cancel button stops a long search: the job ends as
// cancelled, with nothing stored and no results panel.
func TestFindSimilarCancelledInTheWindow(t *testing.T) {
	u, path := openDemoAs(t, "Ines")
	im, ex := testkit.Exemplar(t, path)
	u.selectImageID(im.ID)
	pyr, err := u.cache.Get(context.Background(), im.ID, u.st.ImagePath(im))
	if err != nil {
		t.Fatal(err)
	}
	sc, _, err := similarScales("0.5:12:100", true, []project.Box{ex.Box}, image.Pt(im.Width, im.Height), []project.Image{im})
	if err != nil {
		t.Fatal(err)
	}
	u.findSimilar(ex.ClassID, []project.Box{ex.Box}, pyr.Level(0), []project.Image{im}, exemplar.Options{Threshold: similarFloor, Scales: sc, Rotations: true}, 0.5, "")
	var cancel *widget.Button
	for _, o := range test.LaidOutObjects(u.win.Canvas().Overlays().Top()) {
		if b, ok := o.(*widget.Button); ok && b.Text == "Cancel" {
			cancel = b
		}
	}
	if cancel == nil {
		t.Fatal("the search job shows no Cancel button")
	}
	test.Tap(cancel)
	// runJob tells of the cancel in an information dialog once the job
	// has returned.
	said := func() bool {
		top := u.win.Canvas().Overlays().Top()
		if top == nil {
			return false
		}
		for _, o := range test.LaidOutObjects(top) {
			if l, ok := o.(*widget.Label); ok && strings.HasPrefix(l.Text, "Cancelled.") {
				return true
			}
		}
		return false
	}
	for i := 0; !said(); i++ {
		if i == 1200 { // a hang, not a slow machine
			t.Fatal("the search had not stopped a minute after Cancel")
		}
		time.Sleep(50 * time.Millisecond)
	}
	if u.similar != nil || u.similarWin != nil {
		t.Error("a cancelled search showed results")
	}
	if gs, _ := u.st.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source}); len(gs) != 0 {
		t.Errorf("%d suggestions stored by a cancelled search", len(gs))
	}
}
