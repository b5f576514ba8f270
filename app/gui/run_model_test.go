package gui

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/backend"
	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxtest"
)

// Suggestions ▸ Run a model…: the form's fields become the description
// (bad values named), Check-style opening reports what the model says, and
// a run over every image stores pending suggestions of the model's source
// in the project's classes (a names file maps the model's outputs to
// them), which the window then shows.
func TestRunModelDialog(t *testing.T) {
	lib := onnxtest.Runtime(t)
	if _, err := onnx.LoadRuntime(lib); err != nil {
		t.Fatal(err)
	}
	dir, _ := onnxtest.Models(t)
	path := testkit.SmallDemo(t)
	runModelLastPath = ""
	u := openPathAs(t, path, "Ines")
	f, _ := u.newModelRunForm()

	if _, _, err := f.modelToOpen(); err == nil || !strings.Contains(err.Error(), "choose the model file") {
		t.Errorf("no model: %v", err)
	}
	f.path.SetText(filepath.Join(dir, "corners_scores_ids.onnx"))
	for field, bad := range map[string]func(){
		"the input size":    func() { f.input.SetText("64") },
		"the minimum score": func() { f.minScore.SetText("1.5") },
		"the NMS IoU":       func() { f.nms.SetText("0") },
	} {
		bad()
		if _, _, err := f.modelToOpen(); err == nil || !strings.Contains(err.Error(), field) {
			t.Errorf("%s: %v", field, err)
		}
		f.input.SetText("")
		f.minScore.SetText("")
		f.nms.SetText("")
	}
	// The model names no classes: a names file gives the project's own.
	p, opt, _ := f.modelToOpen()
	if _, err := onnx.Open(p, opt); err == nil || !strings.Contains(err.Error(), "names no classes") {
		t.Errorf("no names: %v", err)
	}
	names := filepath.Join(t.TempDir(), "names.txt")
	os.WriteFile(names, []byte("sailboat\nmotorboat\nbuoy\n"), 0o644)
	f.names.SetText(names)
	f.where.SetSelected(whereAll)
	f.minScore.SetText("0.3")
	p, opt, err := f.modelToOpen()
	if err != nil {
		t.Fatal(err)
	}
	m, err := onnx.Open(p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if s := modelSummary(m, u.classes); !strings.Contains(s, "Layout corners-scores, input 96×64 (letterbox), 3 classes from names file") || strings.Contains(s, "lacks") {
		t.Errorf("summary: %s", s)
	}
	m.Close()

	u.startModelRun(f)
	st, err := backend.OpenForReading(path)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var stored []project.Suggestion
	waitFor(t, "the run's suggestions", func() bool {
		stored, _ = st.Suggestions(context.Background(), project.SuggestionFilter{State: project.SuggestionPending})
		for _, g := range stored {
			if strings.HasPrefix(g.Source, "onnx:corners_scores_ids.onnx@") {
				return true
			}
		}
		return false
	})
	classes := map[int64]bool{}
	for _, c := range u.classes {
		classes[c.ID] = true
	}
	for _, g := range stored {
		if strings.HasPrefix(g.Source, "onnx:") && (!classes[g.ClassID] || g.Score < 0.3) {
			t.Fatalf("a suggestion of class %d scoring %v", g.ClassID, g.Score)
		}
	}
}
