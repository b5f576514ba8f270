package ops

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxtest"
)

func TestMain(m *testing.M) {
	code := m.Run()
	onnxtest.Cleanup()
	os.Exit(code)
}

// A model run cancelled part way keeps what it stored: every image whose
// boxes were found before the cancel has them as pending suggestions, and
// the report says how many; the classes created stay with them.
func TestModelRunCancelledKeepsFinishedImages(t *testing.T) {
	lib := onnxtest.Runtime(t)
	if _, err := onnx.LoadRuntime(lib); err != nil {
		t.Fatal(err)
	}
	dir, _ := onnxtest.Models(t)
	ctx := context.Background()
	pdir := t.TempDir()
	if err := MakeDemo(ctx, pdir, demo.Config{Seed: 3, Images: 6, Width: 320, Height: 240}, nil); err != nil {
		t.Fatal(err)
	}
	st, err := backend.Open(filepath.Join(pdir, DemoProjectName))
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	m, err := onnx.Open(filepath.Join(dir, "centre_scores.onnx"), onnx.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	run, cancel := context.WithCancel(ctx)
	defer cancel()
	rep, err := RunModel(run, st, ModelRunJob{Model: m, All: true, Save: true, Unknown: UnknownClassRule{Create: true},
		Progress: func(done, total int) {
			if done == 2 {
				cancel()
			}
		}})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled run: %v", err)
	}
	gs, err := st.Suggestions(ctx, project.SuggestionFilter{Source: m.Source(), State: project.SuggestionPending})
	if err != nil {
		t.Fatal(err)
	}
	on := map[int64]bool{}
	for _, g := range gs {
		on[g.ImageID] = true
	}
	if rep.Stored < 2 || rep.Stored == 6 || rep.Stored != rep.Images || len(on) != rep.Stored || len(gs) != len(rep.Detections) || len(rep.ClassesCreated) != 3 {
		t.Errorf("after the cancel: %d images stored (%d reported), %d suggestions on %d images (%d found), classes created %v",
			rep.Stored, rep.Images, len(gs), len(on), len(rep.Detections), rep.ClassesCreated)
	}
}
