package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/store"
)

// predictionsCSV writes a CSV of predictions on the demo's first image:
// n boxes of class name, each with a near duplicate scored 0.1 lower.
func predictionsCSV(t *testing.T, path string, class string, n int) (string, string) {
	t.Helper()
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	ims, _ := s.Images(context.Background())
	s.Close()
	var b strings.Builder
	b.WriteString("image,class,x0,y0,x1,y1,score\n")
	for i := 0; i < n; i++ {
		x := float64(10 + 40*i)
		fmt.Fprintf(&b, "%s,%s,%g,20,%g,60,%.2f\n", ims[0].Path, class, x, x+30, 0.9-0.01*float64(i))
		fmt.Fprintf(&b, "%s,%s,%g,21,%g,61,%.2f\n", ims[0].Path, class, x+1, x+31, 0.8-0.01*float64(i))
	}
	return writeFile(t, "preds.csv", b.String()), ims[0].Path
}

func importJSON(t *testing.T, args ...string) ops.SuggestionResult {
	t.Helper()
	out := mustCLI(t, append([]string{"suggestions", "import", "--json"}, args...)...)
	var r ops.SuggestionResult
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	return r
}

func TestSuggestionsImportRules(t *testing.T) {
	path := testkit.SmallDemo(t)
	preds, _ := predictionsCSV(t, path, "buoy", 5)
	// NMS at 0.6 drops each near duplicate (IoU of the pair ≈ 0.91).
	r := importJSON(t, path, preds, "--source", "det-v7", "--nms", "0.6")
	if r.Read != 10 || r.Suppressed != 5 || r.Added != 5 {
		t.Fatalf("import: %+v", r)
	}
	// A minimum score drops what scores below it.
	r = importJSON(t, path, preds, "--source", "det-v7", "--min-score", "0.85")
	if r.BelowScore != 5+0 || r.ReplacedPending != 5 {
		t.Errorf("re-import with a minimum score: %+v", r)
	}
	// Review one, then re-import: the reviewed one stays, pending ones are replaced.
	s, _ := store.Open(path)
	gs, _ := s.Suggestions(context.Background(), project.SuggestionFilter{Source: "det-v7", State: project.SuggestionPending})
	a, _ := s.EnsureAnnotator(context.Background(), "Ines")
	if _, err := s.Decide(context.Background(), a.ID, []project.Decision{{SuggestionID: gs[0].ID, Accept: false}}); err != nil {
		t.Fatal(err)
	}
	s.Close()
	r = importJSON(t, path, preds, "--source", "det-v7")
	if r.KeptReviewed != 1 || r.ReplacedPending != len(gs)-1 || r.Added != 10 {
		t.Errorf("re-import after a review: %+v", r)
	}

	// Unknown classes: an error naming them, nothing stored, unless a rule says what to do.
	unk, _ := predictionsCSV(t, path, "dinghy", 2)
	code, _, stderr := cli(t, "suggestions", "import", path, unk, "--source", "other")
	if code == 0 || !strings.Contains(stderr, `"dinghy" (4 boxes)`) || !strings.Contains(stderr, "nothing was imported") {
		t.Errorf("unknown class: exit %d, %s", code, stderr)
	}
	if r := importJSON(t, path, unk, "--source", "other", "--drop-unknown"); r.Dropped != 4 || r.Added != 0 {
		t.Errorf("--drop-unknown: %+v", r)
	}
	if r := importJSON(t, path, unk, "--source", "other", "--map", "dinghy=kayak"); r.Added != 4 {
		t.Errorf("--map: %+v", r)
	}
	if r := importJSON(t, path, unk, "--source", "third", "--create-classes"); r.Added != 4 || len(r.ClassesCreated) != 1 {
		t.Errorf("--create-classes: %+v", r)
	}
	// A bad line: its position named, nothing imported.
	bad := writeFile(t, "bad.csv", "image,class,x0,y0,x1,y1,score\nimages/harbour-001.jpg,buoy,10,10,5,20,0.5\n")
	code, _, stderr = cli(t, "suggestions", "import", path, bad, "--source", "bad")
	if code == 0 || !strings.Contains(stderr, "bad.csv:2") {
		t.Errorf("bad line: exit %d, %s", code, stderr)
	}
	for _, args := range [][]string{{"suggestions", "import", path, preds}, {"suggestions", "import", path, preds, "--source", "x", "--nms", "2"}, {"suggestions", "frobnicate", path}} {
		if code, _, _ := cli(t, args...); code != 2 {
			t.Errorf("%v: exit %d, want 2", args, code)
		}
	}
}

func TestSuggestionsStatsCountsDecisionsOnly(t *testing.T) {
	path := testkit.SmallDemo(t)
	preds, _ := predictionsCSV(t, path, "buoy", 4)
	importJSON(t, path, preds, "--source", "det-v7")
	s, _ := store.Open(path)
	ctx := context.Background()
	gs, _ := s.Suggestions(ctx, project.SuggestionFilter{Source: "det-v7"})
	a, _ := s.EnsureAnnotator(ctx, "Ines")
	// Accept two, correct one, reject one; the other four stay pending.
	ds := []project.Decision{{SuggestionID: gs[0].ID, Accept: true}, {SuggestionID: gs[1].ID, Accept: true},
		{SuggestionID: gs[2].ID, Accept: true, Box: gs[2].Box.Translate(0, 0).Intersect(project.Rect(0, 0, gs[2].Box.X1, (gs[2].Box.Y0+gs[2].Box.Y1)/2)), ClassID: gs[2].ClassID},
		{SuggestionID: gs[3].ID, Accept: false}}
	if _, err := s.Decide(ctx, a.ID, ds); err != nil {
		t.Fatal(err)
	}
	s.Close()
	out := mustCLI(t, "suggestions", "stats", path, "--source", "det-v7", "--json")
	var m struct {
		Sources []struct {
			Source  string
			Classes []map[string]any
		}
	}
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatal(err)
	}
	c := m.Sources[0].Classes[0]
	if c["in"].(float64) != 8 || c["accepted"].(float64) != 2 || c["corrected"].(float64) != 1 || c["rejected"].(float64) != 1 || c["pending"].(float64) != 4 {
		t.Errorf("counts %v", c)
	}
	// The corrected box keeps the top half: IoU 0.5 (worked by hand).
	nearJSON(t, "mean IoU of corrections", c["mean_corrected_iou"], 0.5, 1e-9)
	text := mustCLI(t, "suggestions", "stats", path)
	if !strings.Contains(text, "never counted") {
		t.Errorf("the text report should say pending suggestions do not count")
	}
	// Four decisions are too few for a threshold: the text says so and
	// gives the Wilson interval, as the window does.
	if !strings.Contains(text, "Not enough evidence") && !strings.Contains(text, "No score of det-v7") || !strings.Contains(text, "Wilson interval") {
		t.Errorf("the text report offers advice on 4 decisions: %q", text)
	}
}
