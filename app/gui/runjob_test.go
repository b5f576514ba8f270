package gui

import (
	"context"
	"errors"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/test"
)

// A background job reports progress, hands its result back once, and a
// finished job's dialog closes without cancelling or crashing.
func TestRunJobFinishesAndCancels(t *testing.T) {
	u := newUI(test.NewTempApp(t))
	done := make(chan struct{}, 1)
	u.runJob("Testing", func(ctx context.Context, progress func(float64)) error {
		progress(0.5)
		return nil
	}, func() { done <- struct{}{} })
	select {
	case <-done:
	case <-time.After(10 * time.Second):
		t.Fatal("the job's result never came back")
	}
	// A job that fails shows the error and does not call done.
	called := false
	finished := make(chan struct{})
	u.runJob("Failing", func(ctx context.Context, progress func(float64)) error {
		defer close(finished)
		return errors.New("disk on fire (test)")
	}, func() { called = true })
	<-finished
	time.Sleep(100 * time.Millisecond)
	if called {
		t.Errorf("done ran after a failed job")
	}
}

// Keys typed while a dialog is open are the dialog's: Enter must not mark
// the image behind it done, nor a digit change the class.
func TestKeysDoNotReachTheImageUnderADialog(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	status := u.images[u.selected].Status
	current := u.current
	dialog.ShowInformation("A question", "Something to read", u.win)
	u.win.Canvas().Focus(u.view)
	u.view.TypedKey(&fyne.KeyEvent{Name: fyne.KeyReturn})
	u.view.TypedRune('2')
	if u.images[u.selected].Status != status || u.current != current {
		t.Errorf("keys went through the dialog: status %s → %s, class %d → %d", status, u.images[u.selected].Status, current, u.current)
	}
}

// A name from the command line is for that run; one chosen in the window
// is remembered.
func TestAnnotatorFromTheCommandLineIsNotRemembered(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	if got := u.app.Preferences().String(annotatorPref); got != "" {
		t.Errorf("the command line's name was remembered: %q", got)
	}
	if err := u.setAnnotator("Tomas"); err != nil {
		t.Fatal(err)
	}
	if got := u.app.Preferences().String(annotatorPref); got != "Tomas" {
		t.Errorf("a name chosen in the window was not remembered: %q", got)
	}
}
