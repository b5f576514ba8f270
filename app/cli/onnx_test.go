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

// modelRunJSON is what detect --model --json prints, in part.
type modelRunJSON struct {
	Source     string           `json:"source"`
	Layout     string           `json:"layout"`
	Images     int              `json:"images"`
	Classes    []string         `json:"classes"`
	Detections []map[string]any `json:"detections"`
	Dropped    int              `json:"dropped_unknown_class"`
	Created    []string         `json:"classes_created"`
}

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

	var rep modelRunJSON
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
	rep = modelRunJSON{}
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

// A detector trained here, exported as ONNX (models export) and run back
// through ONNX Runtime (detect --model FILE.onnx) gives the suggestions of
// its own pass (detect): the same boxes within 1e-3 px and scores within
// 1e-5, class by class, on the demo images. The export refuses to write
// over a file and sizes that are not multiples of 32.
func TestExportedDetectorRunsBack(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a network")
	}
	lib := onnxtest.Runtime(t)
	path := testkit.SmallDemo(t)
	mustCLI(t, "train", path, "--annotator", "Ines", "--epochs", "3", "--threads", "1", "--json")
	out := filepath.Join(t.TempDir(), "harbour.onnx")
	if code, _, errs := cli(t, "models", path, "export", "--out", out, "--input", "100x64"); code != 2 || !strings.Contains(errs, "multiples of 32") {
		t.Errorf("--input 100x64: exit %d, %q", code, errs)
	}
	var exp struct {
		Width, Height int
		Frame         string
	}
	json.Unmarshal([]byte(mustCLI(t, "models", path, "export", "--out", out, "--json")), &exp)
	if exp.Width == 0 || exp.Width%32 != 0 || !strings.Contains(exp.Frame, "640×480 (3 of 3 images)") {
		t.Errorf("export: %+v", exp)
	}
	if code, _, errs := cli(t, "models", path, "export", "--out", out); code != 1 || !strings.Contains(errs, "exists already") {
		t.Errorf("export over an existing file: exit %d, %q", code, errs)
	}
	type det struct {
		Image, Class          string
		X0, Y0, X1, Y1, Score float64
	}
	var own, back struct {
		Detections []det `json:"detections"`
	}
	json.Unmarshal([]byte(mustCLI(t, "detect", path, "--images", "all", "--min-score", "0.05", "--json")), &own)
	json.Unmarshal([]byte(mustCLI(t, "detect", path, "--model", out, "--onnxruntime", lib, "--images", "all", "--min-score", "0.05", "--json")), &back)
	if len(own.Detections) == 0 || len(own.Detections) != len(back.Detections) {
		t.Fatalf("own pass %d detections, the exported file %d", len(own.Detections), len(back.Detections))
	}
	for i, a := range own.Detections {
		b := back.Detections[i]
		worst := 0.0
		for _, d := range []float64{a.X0 - b.X0, a.Y0 - b.Y0, a.X1 - b.X1, a.Y1 - b.Y1} {
			worst = max(worst, d, -d)
		}
		if a.Image != b.Image || a.Class != b.Class || worst > 1e-3 || a.Score-b.Score > 1e-5 || b.Score-a.Score > 1e-5 {
			t.Errorf("detection %d: own %+v, exported %+v", i, a, b)
		}
	}
}
