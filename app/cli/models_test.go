package cli

import (
	"context"
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/backend"
	"boxwright/project"
)

func TestModelsCommandListsStoredModels(t *testing.T) {
	p := filepath.Join(t.TempDir(), "p.boxw")
	mustCLI(t, "new", p)
	if out := mustCLI(t, "models", p); !strings.Contains(out, "no trained models") {
		t.Errorf("empty project: %q", out)
	}
	s, err := backend.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	_, err = s.AddModel(context.Background(), project.Model{Architecture: "centre-heatmap/1", Classes: []string{"buoy"}, InputSize: 384,
		TrainedOn: "Ines", Weights: []byte{1}, ValAP50: math.NaN(),
		Epochs: []project.Epoch{{Epoch: 1, Loss: 2.5, ValAP50: math.NaN(), Seconds: 3}}})
	s.Close()
	if err != nil {
		t.Fatal(err)
	}
	var recs []map[string]any
	if err := json.Unmarshal([]byte(mustCLI(t, "models", p, "--json")), &recs); err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1 || recs[0]["name"] != "trained-1" || recs[0]["current"] != true || recs[0]["val_ap50"] != nil {
		t.Errorf("models --json: %+v", recs)
	}
	if out := mustCLI(t, "models", p); !strings.Contains(out, "trained-1") || !strings.Contains(out, "384 px") {
		t.Errorf("models: %q", out)
	}
	if code, _, errs := cli(t, "models", p, "--use", "nope"); code != 1 || !strings.Contains(errs, "nope") {
		t.Errorf("--use of an unknown model: exit %d, %q", code, errs)
	}
	if code, _, _ := cli(t, "models"); code != 2 {
		t.Errorf("models without a project: exit %d, want 2", code)
	}
}
