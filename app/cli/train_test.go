package cli

import (
	"encoding/json"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
)

// train, models and detect on a small demo: one epoch stores a current
// model with its learning curve; detect --save turns its boxes into
// pending suggestions of the model's name; bad flags are usage errors.
func TestTrainDetectModels(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a network")
	}
	path := testkit.SmallDemo(t)
	for _, bad := range [][]string{
		{"train", path},
		{"train", path, "--annotator", "Ines"},
		{"train", path, "--annotator", "Ines", "--epochs", "1", "--validation", "2"},
		{"train", path, "--annotator", "Ines", "--minutes", "NaN"},
		{"detect", path, "--min-score", "2"},
		{"detect", path, "--images", "some"},
	} {
		if code, _, _ := cli(t, bad...); code != 2 {
			t.Errorf("%v: exit %d, want 2", bad, code)
		}
	}
	if code, _, errs := cli(t, "detect", path); code != 1 || !strings.Contains(errs, "train one first") {
		t.Errorf("detect without a model: exit %d, %q", code, errs)
	}
	if code, _, errs := cli(t, "train", path, "--annotator", "Ines", "--classes", "sailboat,yacht", "--epochs", "1"); code != 1 || !strings.Contains(errs, `"yacht"`) {
		t.Errorf("unknown class: exit %d, %q", code, errs)
	}
	var rep struct {
		Model       string `json:"model"`
		Epochs      []map[string]any
		TrainImages int `json:"train_images"`
		ValImages   int `json:"val_images"`
		InputSize   int `json:"input_size"`
	}
	out := mustCLI(t, "train", path, "--annotator", "Ines", "--epochs", "1", "--validation", "0.34", "--threads", "1", "--json")
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatalf("%v in %s", err, out)
	}
	if rep.Model != "trained-1" || len(rep.Epochs) != 1 || rep.TrainImages+rep.ValImages != 3 || rep.ValImages != 1 || rep.InputSize == 0 {
		t.Errorf("train --json: %+v", rep)
	}
	var models []map[string]any
	json.Unmarshal([]byte(mustCLI(t, "models", path, "--json")), &models)
	if len(models) != 1 || models[0]["current"] != true || len(models[0]["epochs"].([]any)) != 1 {
		t.Errorf("models: %+v", models)
	}
	var det struct {
		Model      string           `json:"model"`
		Source     string           `json:"source"`
		Images     int              `json:"images"`
		Detections []map[string]any `json:"detections"`
	}
	out = mustCLI(t, "detect", path, "--images", "all", "--min-score", "0", "--save", "--json")
	if err := json.Unmarshal([]byte(out), &det); err != nil {
		t.Fatal(err)
	}
	if det.Model != "trained-1" || det.Source != "trained-1" || det.Images != 3 || len(det.Detections) == 0 {
		t.Errorf("detect: model %q source %q on %d images, %d detections", det.Model, det.Source, det.Images, len(det.Detections))
	}
	// Every image of the small demo has labels: the default target is
	// empty, and the command says what to do instead.
	if out := mustCLI(t, "detect", path); !strings.Contains(out, "0 images") || !strings.Contains(out, "--images all") {
		t.Errorf("detect with no image unlabelled: %q", out)
	}
	var info struct {
		Suggestions map[string]int `json:"suggestions"`
	}
	json.Unmarshal([]byte(mustCLI(t, "info", path, "--json")), &info)
	if info.Suggestions["pending"] < len(det.Detections) {
		t.Errorf("pending suggestions %d after saving %d detections", info.Suggestions["pending"], len(det.Detections))
	}
	mustCLI(t, "classes", path, "rename", "sailboat", "yacht")
	if code, _, errs := cli(t, "detect", path); code != 1 || !strings.Contains(errs, "no longer has (sailboat)") || !strings.Contains(errs, "retrain") {
		t.Errorf("detect after a class was renamed: exit %d, %q", code, errs)
	}
}
