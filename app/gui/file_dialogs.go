package gui

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
)

// lastFolder is the folder a file dialog last returned; projectFolder is
// the open project's. Dialogs start in the first of them that exists.
var lastFolder, projectFolder string

// startFolder is where the next file dialog opens.
func startFolder() string {
	for _, d := range []string{lastFolder, projectFolder} {
		if fi, err := os.Stat(d); d != "" && err == nil && fi.IsDir() {
			return d
		}
	}
	if wd, err := os.Getwd(); err == nil {
		return wd
	}
	return ""
}

// remember keeps the folder of a chosen path for the next dialog.
func remember(path string, isDir bool) {
	if path == "" {
		return
	}
	if !isDir {
		path = filepath.Dir(path)
	}
	lastFolder = path
}

// prepareFileDialog titles a file dialog by what it does, names its
// button, starts it in startFolder and sizes it to the window (the
// toolkit's default shows four to six rows and says "Save File").
func prepareFileDialog(d *dialog.FileDialog, win fyne.Window, title, confirm string) {
	d.SetTitleText(title)
	if confirm != "" {
		d.SetConfirmText(confirm)
	}
	if dir := startFolder(); dir != "" {
		if l, err := storage.ListerForURI(storage.NewFileURI(dir)); err == nil {
			d.SetLocation(l)
		}
	}
	d.Resize(dialogSize(win))
}

// dialogSize is most of the window, so that a file list shows many rows.
func dialogSize(win fyne.Window) fyne.Size {
	s := win.Canvas().Size()
	return fyne.NewSize(max(480, s.Width*0.85), max(360, s.Height*0.85))
}

// showFileOpen and showFolderOpen are the toolkit's dialogs, prepared.
func showFileOpen(win fyne.Window, title string, exts []string, chosen func(path string)) {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil || r == nil {
			return
		}
		r.Close()
		remember(r.URI().Path(), false)
		chosen(r.URI().Path())
	}, win)
	if len(exts) > 0 {
		d.SetFilter(storage.NewExtensionFileFilter(exts))
	}
	prepareFileDialog(d, win, title, "Open")
	d.Show()
}

func showFolderOpen(win fyne.Window, title, confirm string, chosen func(path string)) {
	d := dialog.NewFolderOpen(func(l fyne.ListableURI, err error) {
		if err != nil || l == nil {
			return
		}
		remember(l.Path(), true)
		chosen(l.Path())
	}, win)
	prepareFileDialog(d, win, title, confirm)
	d.Show()
}

// askNew asks for the new project's file: a full path may be typed, or a
// folder chosen; a mistake is said, not swallowed.
func (u *ui) askNew() {
	e := widget.NewEntry()
	e.SetText(filepath.Join(startFolder(), "project"+backend.Extension))
	browse := widget.NewButton("Folder…", func() {
		showFolderOpen(u.win, "Folder for the new project", "Choose", func(dir string) {
			name := filepath.Base(strings.TrimSpace(e.Text))
			if name == "." || name == string(filepath.Separator) {
				name = "project" + backend.Extension
			}
			e.SetText(filepath.Join(dir, name))
		})
	})
	hint := widget.NewLabel("A project is one file (" + backend.Extension + "). Type a full path, or choose the folder and type the name.")
	hint.Wrapping = fyne.TextWrapWord
	d := dialog.NewForm("New project", "Create", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Project file", container.NewBorder(nil, nil, nil, browse, e)),
		widget.NewFormItem("", hint)}, func(ok bool) {
		if !ok {
			return
		}
		if err := u.createProject(e.Text); err != nil {
			u.showError(err)
		}
	}, u.win)
	d.Resize(fyne.NewSize(min(720, dialogSize(u.win).Width), 220))
	d.Show()
	u.win.Canvas().Focus(e)
}

// createProject makes a new project file at path (the extension added if
// missing) and opens it.
func (u *ui) createProject(path string) error {
	path = strings.TrimSpace(path)
	if path == "" {
		return fmt.Errorf("no file name given for the new project")
	}
	if strings.HasPrefix(path, "~"+string(filepath.Separator)) {
		if home, err := os.UserHomeDir(); err == nil {
			path = filepath.Join(home, path[2:])
		}
	}
	if !filepath.IsAbs(path) {
		path = filepath.Join(startFolder(), path)
	}
	if !strings.HasSuffix(path, backend.Extension) {
		path += backend.Extension
	}
	if fi, err := os.Stat(filepath.Dir(path)); err != nil || !fi.IsDir() {
		return fmt.Errorf("cannot make the project %s: the folder %s does not exist", path, filepath.Dir(path))
	}
	s, err := backend.Create(path)
	if err != nil {
		return err
	}
	s.Close()
	remember(path, false)
	return u.openProject(path)
}
