package cli

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/backend"
	"boxwright/app/internal/testkit"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxtest"
)

func suggestionCount(t *testing.T, path string) (int, int) {
	t.Helper()
	s, err := backend.OpenForReading(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	c, err := s.Counts(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	total := 0
	for _, n := range c.Suggestions {
		total += n
	}
	return total, len(c.LabelsByClass)
}

// detect --model FILE.onnx on a demo project: the model's classes the
// project lacks stop the run before any image is read (project
// untouched) unless mapped, created or dropped; --save stores pending
// suggestions of a source named after the file and its digest; --describe
// writes the description beside the model and a second run reads it; bad
// models and flags are refused with the project untouched.
func TestDetectWithModelFile(t *testing.T) {
	lib := onnxtest.Runtime(t)
	dir, _ := onnxtest.Models(t)
	path := testkit.SmallDemo(t)
	model := filepath.Join(t.TempDir(), "centre_scores.onnx")
	b, err := os.ReadFile(filepath.Join(dir, "centre_scores.onnx"))
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(model, b, 0o644)
	before, classesBefore := suggestionCount(t, path)
	base := []string{"detect", path, "--model", model, "--onnxruntime", lib, "--images", "all"}
	with := func(extra ...string) []string { return append(append([]string{}, base...), extra...) }

	code, _, errs := cli(t, with("--save")...)
	if code != 1 || !strings.Contains(errs, `the model names classes the project does not have: "beacon", "crate", "rover"`) || !strings.Contains(errs, "no image was read") {
		t.Errorf("unknown classes: exit %d, %q", code, errs)
	}
	for _, bad := range [][]string{
		with("--input", "64"),
		with("--layout", "sideways"),
		with("--create-classes", "--drop-unknown"),
		with("--source", "mine"),
		{"detect", path, "--layout", "auto"}, // a stored model's run
	} {
		if code, _, errs := cli(t, bad...); code != 2 {
			t.Errorf("%v: exit %d, want 2 (%s)", bad, code, errs)
		}
	}
	notModel := filepath.Join(t.TempDir(), "notes.onnx")
	os.WriteFile(notModel, []byte("not a model"), 0o644)
	if code, _, errs := cli(t, "detect", path, "--model", notModel, "--onnxruntime", lib); code != 1 || !strings.Contains(errs, "not an ONNX model") {
		t.Errorf("not a model: exit %d, %q", code, errs)
	}
	names := filepath.Join(t.TempDir(), "names.txt")
	os.WriteFile(names, []byte("a\nb\n"), 0o644)
	if code, _, errs := cli(t, with("--names", names, "--layout", "centre-scores")...); code != 1 || !strings.Contains(errs, "names file "+names+" names 2 classes, but its outputs") {
		t.Errorf("names of the wrong count: exit %d, %q", code, errs)
	}
	if n, _ := suggestionCount(t, path); n != before {
		t.Fatalf("refused runs changed the suggestions: %d → %d", before, n)
	}

	var rep struct {
		Source     string           `json:"source"`
		Layout     string           `json:"layout"`
		Images     int              `json:"images"`
		Classes    []string         `json:"classes"`
		Detections []map[string]any `json:"detections"`
		Dropped    int              `json:"dropped_unknown_class"`
		Created    []string         `json:"classes_created"`
	}
	out := mustCLI(t, with("--map", "rover=sailboat", "--drop-unknown", "--json")...)
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatalf("%v in %s", err, out)
	}
	if rep.Layout != onnx.LayoutCentreScores || rep.Images != 3 || len(rep.Detections) == 0 || rep.Dropped == 0 || strings.Join(rep.Classes, ",") != "rover,crate,beacon" {
		t.Errorf("mapped and dropped: %+v", rep)
	}
	for _, d := range rep.Detections {
		if d["class"] != "sailboat" {
			t.Fatalf("a detection of class %v; rover maps to sailboat and the rest are dropped", d["class"])
		}
	}
	if n, _ := suggestionCount(t, path); n != before {
		t.Errorf("a run without --save stored suggestions")
	}

	out = mustCLI(t, with("--create-classes", "--save", "--limit", "2", "--describe", "--json")...)
	rep = struct {
		Source     string           `json:"source"`
		Layout     string           `json:"layout"`
		Images     int              `json:"images"`
		Classes    []string         `json:"classes"`
		Detections []map[string]any `json:"detections"`
		Dropped    int              `json:"dropped_unknown_class"`
		Created    []string         `json:"classes_created"`
	}{}
	json.Unmarshal([]byte(out), &rep)
	if rep.Images != 2 || len(rep.Created) != 3 || !strings.HasPrefix(rep.Source, "onnx:centre_scores.onnx@") {
		t.Errorf("created and saved: %+v", rep)
	}
	after, classesAfter := suggestionCount(t, path)
	if after != before+len(rep.Detections) || classesAfter != classesBefore+3 {
		t.Errorf("stored %d suggestions (had %d, found %d) and %d classes (had %d)", after, before, len(rep.Detections), classesAfter, classesBefore)
	}
	d, err := onnx.ReadDescription(onnx.DescriptionPath(model))
	if err != nil || d.Output.Layout != onnx.LayoutCentreScores || d.Input.Width != 96 || len(d.Classes) != 3 {
		t.Fatalf("the description written: %+v %v", d, err)
	}
	// The description is read back: a minimum score set in it applies.
	d.MinScore = 0.99
	if err := d.Write(onnx.DescriptionPath(model)); err != nil {
		t.Fatal(err)
	}
	out = mustCLI(t, with("--create-classes", "--json")...)
	json.Unmarshal([]byte(out), &rep)
	for _, det := range rep.Detections {
		if det["score"].(float64) < 0.99 {
			t.Fatalf("a detection scoring %v under the description's minimum 0.99", det["score"])
		}
	}
	// A second --save replaces the source's pending suggestions rather
	// than adding to them.
	mustCLI(t, with("--create-classes", "--save", "--limit", "2", "--min-score", "0.25")...)
	if again, _ := suggestionCount(t, path); again != after {
		t.Errorf("a second run stored %d suggestions; the first left %d", again, after)
	}
}

func TestMain(m *testing.M) {
	code := m.Run()
	onnxtest.Cleanup()
	os.Exit(code)
}
