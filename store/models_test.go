package store

import (
	"errors"
	"math"
	"strings"
	"testing"

	"boxwright/project"
)

func aModel(name string) project.Model {
	return project.Model{Name: name, Architecture: "centre-heatmap/1", Classes: []string{"buoy", "kayak"}, InputSize: 512,
		TrainedOn: "Ines, 30 images", Seed: 7, ValAP50: 0.81, Weights: []byte{1, 2, 3, 4},
		Epochs: []project.Epoch{{Epoch: 1, Loss: 3.5, ValAP50: math.NaN(), Seconds: 10}, {Epoch: 2, Loss: 2.1, ValAP50: 0.81, Seconds: 20}}}
}

// Models round-trip with their learning curve (an unknown AP50 stays
// NaN), the first becomes current, names are unique and default to
// trained-N, and one current model at most.
func TestModelsRoundTrip(t *testing.T) {
	s := newStore(t)
	if _, err := s.CurrentModel(bg); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("current model of a new project: %v", err)
	}
	first, err := s.AddModel(bg, aModel(""))
	if err != nil {
		t.Fatal(err)
	}
	if first.Name != "trained-1" || !first.Current {
		t.Errorf("first model: %q current %v", first.Name, first.Current)
	}
	if _, err := s.AddModel(bg, aModel("trained-1")); !errors.Is(err, project.ErrDuplicate) {
		t.Errorf("duplicate name: %v", err)
	}
	second, err := s.AddModel(bg, aModel(""))
	if err != nil || second.Name != "trained-2" || second.Current {
		t.Fatalf("second model: %+v %v", second, err)
	}
	got, err := s.Model(bg, "trained-1")
	if err != nil {
		t.Fatal(err)
	}
	if got.Architecture != "centre-heatmap/1" || len(got.Classes) != 2 || got.Classes[1] != "kayak" || got.InputSize != 512 ||
		got.Seed != 7 || got.ValAP50 != 0.81 || string(got.Weights) != "\x01\x02\x03\x04" || len(got.Epochs) != 2 ||
		!math.IsNaN(got.Epochs[0].ValAP50) || got.Epochs[1].ValAP50 != 0.81 || got.TrainedOn != "Ines, 30 images" {
		t.Errorf("read back: %+v", got)
	}
	if err := s.SetCurrentModel(bg, "trained-2"); err != nil {
		t.Fatal(err)
	}
	if cur, err := s.CurrentModel(bg); err != nil || cur.Name != "trained-2" {
		t.Errorf("current after switching: %q %v", cur.Name, err)
	}
	list, err := s.Models(bg)
	if err != nil || len(list) != 2 || list[0].Current || !list[1].Current || list[0].Weights != nil {
		t.Errorf("list: %+v %v", list, err)
	}
	second.Weights = []byte{9, 9}
	second.Epochs = append(second.Epochs, project.Epoch{Epoch: 3, Loss: 1.5, ValAP50: 0.9, Seconds: 30})
	second.ValAP50 = 0.9
	if err := s.UpdateModel(bg, second); err != nil {
		t.Fatal(err)
	}
	if m, _ := s.Model(bg, "trained-2"); len(m.Epochs) != 3 || m.ValAP50 != 0.9 || string(m.Weights) != "\x09\x09" {
		t.Errorf("after update: %+v", m)
	}
	if err := s.SetCurrentModel(bg, "nope"); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("unknown model made current: %v", err)
	}
	if err := s.DeleteModel(bg, "trained-1"); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Model(bg, "trained-1"); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("deleted model: %v", err)
	}
}

// Damaged weights are refused with a message that says what to do, and a
// model without weights or classes is not stored.
func TestModelsRefuseDamage(t *testing.T) {
	s := newStore(t)
	if _, err := s.AddModel(bg, aModel("m")); err != nil {
		t.Fatal(err)
	}
	if _, err := s.db.Exec("UPDATE models SET weights = X'01020305' WHERE name = 'm'"); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Model(bg, "m"); !errors.Is(err, project.ErrInvalid) || !strings.Contains(err.Error(), "damaged") {
		t.Errorf("damaged weights: %v", err)
	}
	bad := aModel("x")
	bad.Weights = nil
	if _, err := s.AddModel(bg, bad); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("no weights: %v", err)
	}
	bad = aModel("y")
	bad.Classes = nil
	if _, err := s.AddModel(bg, bad); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("no classes: %v", err)
	}
	if list, _ := s.Models(bg); len(list) != 1 {
		t.Errorf("%d models after refused ones, want 1", len(list))
	}
}

func TestMigrationAddsModels(t *testing.T) {
	s := newStore(t)
	var n int
	if err := s.db.QueryRow("SELECT count(*) FROM sqlite_master WHERE type = 'index' AND name = 'models_one_current'").Scan(&n); err != nil || n != 1 {
		t.Fatalf("models_one_current index: %d, %v", n, err)
	}
	if v, _ := s.SchemaVersion(bg); v < 3 {
		t.Errorf("schema version %d, want at least 3", v)
	}
}
