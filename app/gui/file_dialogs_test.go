package gui

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// texts are the label texts under o.
func texts(o fyne.CanvasObject) []string {
	var out []string
	var walk func(fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		switch x := o.(type) {
		case *widget.Label:
			out = append(out, x.Text)
		case *widget.Button:
			out = append(out, x.Text)
		case *fyne.Container:
			for _, c := range x.Objects {
				walk(c)
			}
			return
		}
		if w, ok := o.(fyne.Widget); ok {
			for _, c := range test.WidgetRenderer(w).Objects() {
				walk(c)
			}
		}
	}
	walk(o)
	return out
}

// A new project's full path can be typed; a missing folder is said.
func TestNewProjectFromATypedPath(t *testing.T) {
	u := newUI(test.NewTempApp(t))
	u.win.Resize(fyne.NewSize(1000, 700))
	t.Cleanup(u.closeProject)
	dir := t.TempDir()
	if err := u.createProject(filepath.Join(dir, "harbour survey")); err != nil {
		t.Fatal(err)
	}
	if want := filepath.Join(dir, "harbour survey.boxw"); u.path != want {
		t.Errorf("opened %q, want %q", u.path, want)
	}
	err := u.createProject(filepath.Join(dir, "no such folder", "p.boxw"))
	if err == nil || !strings.Contains(err.Error(), "does not exist") {
		t.Errorf("missing folder: %v", err)
	}
	if err := u.createProject("  "); err == nil {
		t.Error("an empty name was accepted")
	}
}

// File dialogs are titled by what they do, start in the last folder used
// (else the project's) and fill most of the window.
func TestFileDialogsTitledSizedAndPlaced(t *testing.T) {
	u := newUI(test.NewTempApp(t))
	u.win.Resize(fyne.NewSize(1000, 700))
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "marker.boxw"), nil, 0o644)
	lastFolder, projectFolder = dir, ""
	t.Cleanup(func() { lastFolder, projectFolder = "", "" })
	if startFolder() != dir {
		t.Fatalf("start folder %q, want %q", startFolder(), dir)
	}
	showFileOpen(u.win, "Open a project", []string{".boxw"}, func(string) {})
	top := u.win.Canvas().Overlays().Top()
	if top == nil {
		t.Fatal("no dialog shown")
	}
	all := strings.Join(texts(top), "|")
	if !strings.Contains(all, "Open a project") || strings.Contains(all, "Open File") {
		t.Errorf("dialog texts %q", all)
	}
	if !strings.Contains(all, "|marker|") || !strings.Contains(all, filepath.Base(dir)) {
		t.Errorf("dialog does not list the last folder: %q", all)
	}
	if s := top.Size(); s.Width < 800 || s.Height < 550 {
		t.Errorf("dialog %v in a 1000×700 window", s)
	}
	remember(filepath.Join(dir, "sub", "x.json"), false)
	if lastFolder != filepath.Join(dir, "sub") {
		t.Errorf("remembered %q", lastFolder)
	}
}

// Menu items show their Ctrl shortcuts (the toolkit prints them beside
// the label when the item carries one).
func TestMenusShowShortcuts(t *testing.T) {
	u := newUI(test.NewTempApp(t))
	want := map[string]fyne.KeyName{"New project…": fyne.KeyN, "Open project…": fyne.KeyO, "Add image folder…": fyne.KeyI,
		"Import labels…": fyne.KeyL, "Export dataset…": fyne.KeyE, "Undo": fyne.KeyZ}
	for _, m := range u.win.MainMenu().Items {
		for _, it := range m.Items {
			k, ok := want[it.Label]
			if !ok {
				continue
			}
			delete(want, it.Label)
			sc, isCustom := it.Shortcut.(*desktop.CustomShortcut)
			if !isCustom || sc.KeyName != k || sc.Modifier&fyne.KeyModifierShortcutDefault == 0 {
				t.Errorf("%s: shortcut %v, want Ctrl+%s", it.Label, it.Shortcut, k)
			}
		}
	}
	if len(want) > 0 {
		t.Errorf("menu items missing: %v", want)
	}
}
