package main

import (
	"context"
	"encoding/json"
	"fmt"
	"testing"
	"time"

	"boxwright/project"
	"boxwright/store"
	"boxwright/suggest/exemplar"
)

// anExemplar is one of Ines's buoys on the demo's first image.
func anExemplar(t *testing.T, path string) (project.Image, project.Label) {
	t.Helper()
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ctx := context.Background()
	ims, _ := s.Images(ctx)
	ines, _ := s.AnnotatorByName(ctx, "Ines")
	buoy, _ := s.ClassByName(ctx, "sailboat")
	for _, im := range ims {
		ls, _ := s.Labels(ctx, project.LabelFilter{ImageID: im.ID, AnnotatorID: ines.ID, ClassID: buoy.ID})
		for _, l := range ls {
			if l.Box.Width() >= 16 && l.Box.Height() >= 16 {
				return im, l
			}
		}
	}
	t.Fatal("the demo has no sailboat of Ines to use as an example")
	return project.Image{}, project.Label{}
}

func TestSimilarCommandFindsAndSaves(t *testing.T) {
	path := smallDemo(t)
	im, ex := anExemplar(t, path)
	b := ex.Box
	corners := fmt.Sprintf("%g,%g,%g,%g", b.X0, b.Y0, b.X1, b.Y1)
	out := mustCLI(t, "similar", path, "--image", im.Path, "--exemplar", corners, "--threshold", "0.5", "--json")
	var m struct {
		Matches []struct{ X0, Y0, X1, Y1, Score, Scale float64 }
	}
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	for i, mt := range m.Matches {
		if project.Rect(mt.X0, mt.Y0, mt.X1, mt.Y1).IoU(b) > 0.5 {
			t.Errorf("match %d is the example itself", i)
		}
		if i > 0 && mt.Score > m.Matches[i-1].Score {
			t.Errorf("matches not best first")
		}
		if mt.Score < 0.5 {
			t.Errorf("match %d scores %.3f below the threshold", i, mt.Score)
		}
	}
	mustCLI(t, "similar", path, "--image", im.Path, "--exemplar", corners, "--threshold", "0.5", "--class", "sailboat", "--save")
	s, _ := store.Open(path)
	gs, _ := s.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source})
	s.Close()
	if len(gs) != len(m.Matches) {
		t.Errorf("%d suggestions stored for %d matches", len(gs), len(m.Matches))
	}
	for _, bad := range [][]string{
		{"similar", path, "--image", im.Path},
		{"similar", path, "--image", im.Path, "--exemplar", "1,2,3"},
		{"similar", path, "--image", im.Path, "--exemplar", corners, "--save"},
		{"similar", path, "--image", "nowhere.jpg", "--exemplar", corners},
		{"similar", path, "--image", im.Path, "--exemplar", "0,0,5000,10"},
	} {
		if code, _, _ := cli(t, bad...); code == 0 {
			t.Errorf("%v succeeded", bad)
		}
	}
}

// A search from the window stores its finds as pending suggestions, and
// the live threshold replaces them.
func TestFindSimilarInTheWindow(t *testing.T) {
	u, path := openDemoAs(t, "Ines")
	im, ex := anExemplar(t, path)
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
