package gui

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"

	"fyne.io/fyne/v2/storage"
)

// A save the dialog hands over (the file already created or emptied, as
// Fyne's save dialog does) that fails half-way leaves no file that looks
// saved; one that succeeds leaves the whole content and nothing beside.
func TestSaveChosenWholeOrNothing(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "decisions.csv")
	w, err := storage.Writer(storage.NewFileURI(path))
	if err != nil {
		t.Fatal(err)
	}
	where, err := saveChosen(w, func(out io.Writer) error {
		io.WriteString(out, "source,score\nmodel,0.") // half a table
		return errors.New("no space left on device (test)")
	})
	if err == nil || where != path {
		t.Fatalf("failed save: %q %v", where, err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("a failed save left %v", entries)
	}
	w, err = storage.Writer(storage.NewFileURI(path))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := saveChosen(w, func(out io.Writer) error { _, err := io.WriteString(out, "a,b\n1,2\n"); return err }); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "a,b\n1,2\n" {
		t.Errorf("saved %q", b)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("after saving: %v", entries)
	}
}
