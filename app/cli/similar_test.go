package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"testing"

	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/store"
	"boxwright/suggest/exemplar"
)

func TestSimilarCommandFindsAndSaves(t *testing.T) {
	path := testkit.SmallDemo(t)
	im, ex := testkit.Exemplar(t, path)
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
