package gui

import (
	"sync/atomic"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// After a click on a toolbar check or a list filter, the single keys work
// at once (they used to go to the check until the image was clicked).
func TestKeysWorkAfterClickingAToolbarCheck(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	// Each step decodes the next image in the background, and the test
	// driver delivers it on that goroutine: wait for it before going on.
	var shown atomic.Int64
	shown.Store(u.imageID)
	u.decoded = func(id int64, _ error) { shown.Store(id) }
	c := u.win.Canvas()
	for i, w := range []fyne.Focusable{u.showSuggestions, u.others, u.guides} {
		before := u.selected
		test.Tap(w.(fyne.Tappable))
		if c.Focused() == w {
			t.Errorf("check %d keeps the keyboard", i)
		}
		key, want := "n", before+1 // the small demo has few images: go back and forth
		if i%2 == 1 {
			key, want = "b", before-1
		}
		test.TypeOnCanvas(c, key)
		if u.selected != want {
			t.Errorf("after check %d: %s moved from image %d to %d", i, key, before, u.selected)
		}
		waitFor(t, "the next image shown", func() bool { return shown.Load() == u.imageID })
	}
	u.nav.status.SetSelected(u.nav.status.Options[0])
	if _, isSelect := c.Focused().(*widget.Select); isSelect {
		t.Error("the status filter keeps the keyboard")
	}
}

// The keys overlay closes with Esc and with H; an overlap question with Esc.
func TestKeysOverlayClosesWithEscAndH(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	c := u.win.Canvas()
	for _, key := range []string{"esc", "h"} {
		u.showKeys()
		if c.Overlays().Top() == nil {
			t.Fatal("no keys overlay")
		}
		if key == "esc" {
			test.TypeOnCanvas(c, "") // nothing
			u.typedKeyTop(&fyne.KeyEvent{Name: fyne.KeyEscape})
		} else {
			test.TypeOnCanvas(c, "h")
		}
		if c.Overlays().Top() != nil {
			t.Errorf("%s did not close the keys overlay", key)
		}
	}
	u.askOverlap("q", "m", overlapChoice{"x", func() {}})
	test.TypeOnCanvas(c, "") // focus stays off the view
	u.typedKeyTop(&fyne.KeyEvent{Name: fyne.KeyEscape})
	if c.Overlays().Top() != nil || u.overlapAsk != nil {
		t.Error("Esc did not close the overlap question")
	}
}

// Secondary windows have a Close button and close on Esc.
func TestSecondaryWindowCloses(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	for name, w := range map[string]fyne.Window{
		"crop grid": newCropGrid(u, nil).win, "agreement": newAgreeScreen(u).win,
		"evaluation": newEvalScreen(u).win, "review queue": newReviewQueue(u).win, "training": newTrainScreen(u).win, "statistics": u.newStatsWindow().win,
	} {
		w.Show()
		closed := false
		w.SetOnClosed(func() { closed = true })
		found := false
		for _, s := range texts(w.Content()) {
			if s == "Close" {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: no Close button", name)
		}
		w.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyEscape})
		if !closed {
			t.Errorf("%s: Esc did not close the window", name)
		}
	}
}
