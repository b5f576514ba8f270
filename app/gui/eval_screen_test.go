package gui

import (
	"strings"
	"testing"
	"time"
)

// The evaluation window scores the demo detector against Ines's labels,
// draws its charts, lists the boxes behind a confusion cell and opens one
// in the main window.
func TestEvaluationScreen(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	s := newEvalScreen(u)
	s.truth.SetSelected("Ines")
	if s.source.Selected == "" {
		t.Fatal("no source offered")
	}
	computeAndWait(t, "the evaluation did not finish", &s.done, s.compute)
	if !strings.Contains(s.headline.Text, "mAP") || s.prChart.Plot() == nil || s.confChart.Plot() == nil {
		t.Fatalf("headline %q, charts %v %v", s.headline.Text, s.prChart.Plot() != nil, s.confChart.Plot() != nil)
	}
	// The diagonal cell of the first class: true positives with both boxes.
	s.cellRow.SetSelectedIndex(0)
	s.cellCol.SetSelectedIndex(0)
	if len(s.cell) == 0 {
		t.Fatalf("no boxes behind the first diagonal cell")
	}
	s.openCell(0)
	if u.compare == nil || u.compareBar.Hidden {
		t.Fatalf("the pair was not opened in the main window")
	}
	// The image may still be decoding: its boxes are shown when it is.
	marked := func() int {
		n := 0
		for _, it := range u.view.Items() {
			if it.Marked {
				n++
			}
		}
		return n
	}
	waitFor(t, "the pair's 2 boxes ringed", func() bool { return marked() == 2 })
}

// computeAndWait starts a report window's computation (compute, which
// reports through *done) and fails the test with fail if it does not end
// within 30 s or ends in an error.
func computeAndWait(t *testing.T, fail string, done *func(error), compute func()) {
	t.Helper()
	ch := make(chan error, 1)
	*done = func(err error) { ch <- err }
	compute()
	select {
	case err := <-ch:
		if err != nil {
			t.Fatal(err)
		}
	case <-time.After(30 * time.Second):
		t.Fatal(fail)
	}
}
