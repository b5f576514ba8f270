package gui

import (
	"context"
	"math"
	"strings"
	"testing"
	"time"

	"boxwright/project"
)

// The training window checks its form, draws the learning curve as epochs
// arrive, and its pause holds the training goroutine until resumed or
// cancelled.
func TestTrainingWindow(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.showTraining()
	s := u.training
	if s == nil || s.annotator.Selected != "Ines" || len(s.classes.Selected) != len(u.classes) {
		t.Fatalf("window: %+v", s)
	}
	s.minutes.SetText("0")
	if _, err := s.job(); err == nil || !strings.Contains(err.Error(), "minutes") {
		t.Errorf("0 minutes accepted: %v", err)
	}
	s.minutes.SetText("2.5")
	s.validation.SetText("1.5")
	if _, err := s.job(); err == nil || !strings.Contains(err.Error(), "validation") {
		t.Errorf("validation 1.5 accepted: %v", err)
	}
	s.validation.SetText("0.25")
	s.classes.SetSelected([]string{u.classes[2].Name, u.classes[0].Name})
	j, err := s.job()
	if err != nil {
		t.Fatal(err)
	}
	if j.Annotator != "Ines" || j.Budget != 150*time.Second || j.Validation != 0.25 || len(j.Classes) != 2 || j.Classes[0] != u.classes[0].Name {
		t.Errorf("job %+v", j)
	}

	s.curve = []project.Epoch{{Epoch: 1, Loss: 4, ValAP50: math.NaN(), Seconds: 10}, {Epoch: 2, Loss: 2, ValAP50: 0.4, Seconds: 20}}
	s.showCurve()
	if s.lossChart.Plot() == nil || s.apChart.Plot() == nil || len(s.epochs.rows) != 2 {
		t.Errorf("curve not shown: %v %v %d rows", s.lossChart.Plot() != nil, s.apChart.Plot() != nil, len(s.epochs.rows))
	}

	// Pause blocks the gate; resume releases it; cancel ends it.
	s.running = true
	s.resume = make(chan struct{})
	s.togglePause()
	released := make(chan error, 1)
	ctx, cancel := context.WithCancel(context.Background())
	go func() { released <- s.gate(ctx) }()
	select {
	case <-released:
		t.Fatal("the gate let a paused run through")
	case <-time.After(100 * time.Millisecond):
	}
	s.togglePause()
	if err := <-released; err != nil {
		t.Errorf("resumed gate: %v", err)
	}
	s.togglePause()
	go func() { released <- s.gate(ctx) }()
	cancel()
	if err := <-released; err == nil {
		t.Error("a cancelled paused run went on")
	}
	s.running = false

	// Where the model looks: this image, the next ten, all, or (nil) the
	// unlabelled ones.
	u.selectIndex(1)
	if got := s.targets(whereThis); len(got) != 1 || got[0].ID != u.images[1].ID {
		t.Errorf("this image: %+v", got)
	}
	if got := s.targets(whereNext); len(got) != len(u.images)-2 || (len(got) > 0 && got[0].ID != u.images[2].ID) {
		t.Errorf("next images: %d from %+v", len(got), got)
	}
	if got := s.targets(whereAll); len(got) != len(u.images) {
		t.Errorf("all: %d", len(got))
	}
	if got := s.targets(whereUnlabelled); got != nil {
		t.Errorf("unlabelled: %+v", got)
	}
	s.win.Close()
	if u.training != nil {
		t.Error("closing the window did not forget it")
	}
}
