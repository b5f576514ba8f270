package postgres

import (
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"boxwright/project"
)

func aModel(name string) project.Model {
	return project.Model{Name: name, Architecture: "centre-heatmap/1", Classes: []string{"buoy", "kayak"}, InputSize: 512,
		TrainedOn: "Ines, 30 images", Seed: 1<<63 + 7, ValAP50: 0.81, Weights: []byte{1, 2, 3, 4},
		Epochs: []project.Epoch{{Epoch: 1, Loss: 3.5, ValAP50: math.NaN(), Seconds: 10}, {Epoch: 2, Loss: 2.1, ValAP50: 0.81, Seconds: 20}}}
}

// Models round-trip with their learning curve (an unknown AP50 stays
// NaN, a seed above 2^63 survives the signed column), the first becomes
// current, names are unique and default to trained-N, and one current
// model at most.
func TestModelsRoundTrip(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	if _, err := s.CurrentModel(bg); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("current model of a new project: %v", err)
	}
	first, err := s.AddModel(bg, aModel(""))
	if err != nil {
		t.Fatal(err)
	}
	if first.Name != "trained-1" || !first.Current || first.Created.IsZero() || first.Created.Location() != time.UTC {
		t.Errorf("first model: %+v", first)
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
		got.Seed != 1<<63+7 || got.ValAP50 != 0.81 || string(got.Weights) != "\x01\x02\x03\x04" || len(got.Epochs) != 2 ||
		!math.IsNaN(got.Epochs[0].ValAP50) || got.Epochs[1].ValAP50 != 0.81 || got.TrainedOn != "Ines, 30 images" || !got.Created.Equal(first.Created) {
		t.Errorf("read back: %+v", got)
	}
	if err := s.SetCurrentModel(bg, "trained-2"); err != nil {
		t.Fatal(err)
	}
	if cur, err := s.CurrentModel(bg); err != nil || cur.Name != "trained-2" {
		t.Errorf("current after switching: %q %v", cur.Name, err)
	}
	if err := s.SetCurrentModel(bg, "trained-2"); err != nil {
		t.Errorf("making the current model current again: %v", err)
	}
	list, err := s.Models(bg)
	if err != nil || len(list) != 2 || list[0].Current || !list[1].Current || list[0].Weights != nil {
		t.Errorf("list: %+v %v", list, err)
	}
	second.Weights = []byte{9, 9}
	second.Epochs = append(second.Epochs, project.Epoch{Epoch: 3, Loss: 1.5, ValAP50: 0.9, Seconds: 30})
	second.ValAP50 = math.NaN()
	if err := s.UpdateModel(bg, second); err != nil {
		t.Fatal(err)
	}
	if m, _ := s.Model(bg, "trained-2"); len(m.Epochs) != 3 || !math.IsNaN(m.ValAP50) || string(m.Weights) != "\x09\x09" || !m.Updated.After(m.Created) {
		t.Errorf("after update: %+v", m)
	}
	gone := second
	gone.ID = 999
	if err := s.UpdateModel(bg, gone); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("updating a missing model: %v", err)
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
	if err := s.DeleteModel(bg, "trained-1"); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("deleting it again: %v", err)
	}
	// The number follows the highest ID, as in the file backend; a
	// server's IDs may skip numbers (a refused insert uses one up), so
	// only "new and of that form" is certain.
	third, err := s.AddModel(bg, aModel(""))
	if err != nil || !strings.HasPrefix(third.Name, "trained-") || third.Name == "trained-2" {
		t.Errorf("a name after a deletion: %+v %v", third, err)
	}
}

// Damaged weights are refused with a message that says what to do, and a
// model without weights or classes is not stored.
func TestModelsRefuseDamage(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	if _, err := s.AddModel(bg, aModel("m")); err != nil {
		t.Fatal(err)
	}
	f.srv.Exec(t, "harbour", `UPDATE models SET weights = '\x01020305' WHERE name = 'm'`)
	if _, err := s.Model(bg, "m"); !errors.Is(err, project.ErrInvalid) || !strings.Contains(err.Error(), "damaged") {
		t.Errorf("damaged weights: %v", err)
	}
	for name, mutate := range map[string]func(*project.Model){
		"no weights":      func(m *project.Model) { m.Weights = nil },
		"no classes":      func(m *project.Model) { m.Classes = nil },
		"no architecture": func(m *project.Model) { m.Architecture = "" },
		"NaN loss":        func(m *project.Model) { m.Epochs[0].Loss = math.NaN() },
	} {
		bad := aModel(name)
		mutate(&bad)
		if _, err := s.AddModel(bg, bad); !errors.Is(err, project.ErrInvalid) {
			t.Errorf("%s: %v", name, err)
		}
	}
	if list, _ := s.Models(bg); len(list) != 1 {
		t.Errorf("%d models after refused ones, want 1", len(list))
	}
}

// Only reviewers and owners store or change models; an annotator reads
// them.
func TestModelsHonourRowLevelSecurity(t *testing.T) {
	f := newLabFix(t, true)
	ines, rita := f.as("ines"), f.as("rita")
	if _, err := rita.AddModel(bg, aModel("")); err != nil {
		t.Fatalf("a reviewer storing a model: %v", err)
	}
	m, err := rita.AddModel(bg, aModel("second"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ines.AddModel(bg, aModel("hers")); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator storing a model: %v", err)
	}
	if err := ines.SetCurrentModel(bg, "second"); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator choosing the current model: %v", err)
	}
	m.Weights = []byte{7}
	if err := ines.UpdateModel(bg, m); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator updating a model: %v", err)
	}
	if err := ines.DeleteModel(bg, "second"); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator deleting a model: %v", err)
	}
	if cur, err := ines.CurrentModel(bg); err != nil || cur.Name != "trained-1" || string(cur.Weights) != "\x01\x02\x03\x04" {
		t.Errorf("the annotator reading the current model: %+v %v", cur, err)
	}
	if list, _ := ines.Models(bg); len(list) != 2 {
		t.Errorf("%d models, want 2", len(list))
	}
}
