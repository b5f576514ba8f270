package storetest

import (
	"errors"
	"math"
	"slices"

	"boxwright/project"
)

func init() {
	register(
		testCase{"ModelsRoundTrip", modelsRoundTrip},
		testCase{"ModelsCurrentRules", modelsCurrentRules},
		testCase{"ModelsRefusals", modelsRefusals},
	)
}

func aModel(name string) project.Model {
	return project.Model{Name: name, Architecture: "centre-heatmap/1", Classes: []string{"buoy", "kayak"}, InputSize: 512,
		TrainedOn: "Ines, 30 images", Seed: 1<<63 + 7, ValAP50: 0.81, Weights: []byte{1, 2, 3, 4, 0, 255},
		Epochs: []project.Epoch{{Epoch: 1, Loss: 3.5, ValAP50: math.NaN(), Seconds: 10}, {Epoch: 2, Loss: 2.1, ValAP50: 0.81, Seconds: 20.5}}}
}

// A model reads back as stored: its learning curve (an unknown AP50 stays
// NaN), the full 64-bit seed and its weights; Models leaves the weights
// out; names default to trained-N.
func modelsRoundTrip(e *env) {
	first, err := e.b.AddModel(e.ctx, aModel(""))
	e.fatal("add model", err)
	if first.Name != "trained-1" || !first.Current || first.ID == 0 || first.Created.IsZero() {
		e.t.Errorf("first model: %+v", first)
	}
	got, err := e.b.Model(e.ctx, "trained-1")
	e.fatal("read model", err)
	w := aModel("trained-1")
	if got.ID != first.ID || got.Architecture != w.Architecture || !slices.Equal(got.Classes, w.Classes) || got.InputSize != w.InputSize ||
		got.Seed != w.Seed || got.ValAP50 != w.ValAP50 || !slices.Equal(got.Weights, w.Weights) || got.TrainedOn != w.TrainedOn ||
		len(got.Epochs) != 2 || !math.IsNaN(got.Epochs[0].ValAP50) || got.Epochs[0].Loss != 3.5 || got.Epochs[1] != w.Epochs[1] || !got.Current {
		e.t.Errorf("read back: %+v", got)
	}
	unknown := aModel("no-ap")
	unknown.ValAP50 = math.NaN()
	if _, err := e.b.AddModel(e.ctx, unknown); err != nil {
		e.t.Fatal(err)
	}
	if m, _ := e.b.Model(e.ctx, "no-ap"); !math.IsNaN(m.ValAP50) || m.Current {
		e.t.Errorf("model without AP50: %+v (a second model is not current unless asked)", m)
	}
	second, err := e.b.AddModel(e.ctx, aModel(""))
	if err != nil || second.Name == "trained-1" || second.Name == "" || second.Current {
		e.t.Errorf("second unnamed model: %+v %v", second, err)
	}
	list, err := e.b.Models(e.ctx)
	e.fatal("list models", err)
	var names []string
	for _, m := range list {
		names = append(names, m.Name)
		if m.Weights != nil {
			e.t.Errorf("Models carries the weights of %s", m.Name)
		}
	}
	if !slices.Equal(names, []string{"trained-1", "no-ap", second.Name}) {
		e.t.Errorf("models %v, want oldest first", names)
	}
	second.Weights = []byte{9, 9}
	second.Epochs = append(second.Epochs, project.Epoch{Epoch: 3, Loss: 1.5, ValAP50: 0.9, Seconds: 30})
	second.ValAP50 = 0.9
	second.TrainedOn = "Ines, 40 images"
	e.fatal("update model", e.b.UpdateModel(e.ctx, second))
	if m, _ := e.b.Model(e.ctx, second.Name); len(m.Epochs) != 3 || m.ValAP50 != 0.9 || !slices.Equal(m.Weights, []byte{9, 9}) ||
		m.TrainedOn != "Ines, 40 images" || m.Name != second.Name {
		e.t.Errorf("after update: %+v", m)
	}
	missing := second
	missing.ID = 99999
	e.wantErr("update of a missing model", e.b.UpdateModel(e.ctx, missing), project.ErrNotFound)
	e.fatal("delete model", e.b.DeleteModel(e.ctx, "no-ap"))
	if _, err := e.b.Model(e.ctx, "no-ap"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("deleted model: %v, want ErrNotFound", err)
	}
	e.wantErr("delete a missing model", e.b.DeleteModel(e.ctx, "no-ap"), project.ErrNotFound)
	e.wantErr("read a missing model", func() error { _, err := e.b.Model(e.ctx, "ghost"); return err }(), project.ErrNotFound)
}

// One model at most is current: the first, or one added or set as
// current; deleting it leaves none.
func modelsCurrentRules(e *env) {
	if _, err := e.b.CurrentModel(e.ctx); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("current model of a new project: %v, want ErrNotFound", err)
	}
	e.b.AddModel(e.ctx, aModel("a"))
	e.b.AddModel(e.ctx, aModel("b"))
	current := func() string {
		e.t.Helper()
		m, err := e.b.CurrentModel(e.ctx)
		if errors.Is(err, project.ErrNotFound) {
			return ""
		}
		e.fatal("current model", err)
		if len(m.Weights) == 0 {
			e.t.Errorf("CurrentModel has no weights")
		}
		list, _ := e.b.Models(e.ctx)
		n := 0
		for _, x := range list {
			if x.Current {
				n++
				if x.Name != m.Name {
					e.t.Errorf("Models says %s is current, CurrentModel %s", x.Name, m.Name)
				}
			}
		}
		if n != 1 {
			e.t.Errorf("%d current models", n)
		}
		return m.Name
	}
	if c := current(); c != "a" {
		e.t.Errorf("current %q, want the first model", c)
	}
	c := aModel("c")
	c.Current = true
	if m, err := e.b.AddModel(e.ctx, c); err != nil || !m.Current {
		e.t.Errorf("add a current model: %+v %v", m, err)
	}
	if c := current(); c != "c" {
		e.t.Errorf("current %q, want c", c)
	}
	e.fatal("set current", e.b.SetCurrentModel(e.ctx, "b"))
	if c := current(); c != "b" {
		e.t.Errorf("current %q, want b", c)
	}
	before := e.snapshot()
	e.wantErr("make a missing model current", e.b.SetCurrentModel(e.ctx, "nope"), project.ErrNotFound)
	e.unchanged("a refused switch", before)
	e.fatal("delete current", e.b.DeleteModel(e.ctx, "b"))
	if _, err := e.b.CurrentModel(e.ctx); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("after deleting the current model: %v, want ErrNotFound (none is current)", err)
	}
}

func modelsRefusals(e *env) {
	e.b.AddModel(e.ctx, aModel("m"))
	before := e.snapshot()
	if _, err := e.b.AddModel(e.ctx, aModel("m")); !errors.Is(err, project.ErrDuplicate) {
		e.t.Errorf("duplicate name: %v, want ErrDuplicate", err)
	}
	for name, mut := range map[string]func(*project.Model){
		"no weights":      func(m *project.Model) { m.Weights = nil },
		"no classes":      func(m *project.Model) { m.Classes = nil },
		"no architecture": func(m *project.Model) { m.Architecture = "" },
		"no input size":   func(m *project.Model) { m.InputSize = 0 },
		"NaN loss":        func(m *project.Model) { m.Epochs[1].Loss = math.NaN() },
		"blank name":      func(m *project.Model) { m.Name = " " },
	} {
		bad := aModel("x")
		mut(&bad)
		bad.Current = true
		if _, err := e.b.AddModel(e.ctx, bad); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("model with %s: %v, want ErrInvalid", name, err)
		}
		m, _ := e.b.Model(e.ctx, "m")
		upd := aModel("m")
		upd.ID = m.ID
		mut(&upd)
		if name != "blank name" {
			if err := e.b.UpdateModel(e.ctx, upd); !errors.Is(err, project.ErrInvalid) {
				e.t.Errorf("update to %s: %v, want ErrInvalid", name, err)
			}
		}
	}
	e.unchanged("refused models", before)
}
