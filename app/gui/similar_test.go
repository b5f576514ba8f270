package gui

import (
	"context"
	"testing"
	"time"

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
	u.findSimilar(ex.ClassID, []project.Box{ex.Box}, pyr.Level(0), []project.Image{im}, exemplar.Options{Threshold: similarFloor, Scales: exemplar.DefaultScales()}, 0.5)
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
