package main

import (
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"fyne.io/fyne/v2"
	fyneapp "fyne.io/fyne/v2/app"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/canvas"
	"boxwright/project"
	"boxwright/store"
	"boxwright/store/imagefile"
)

// displayMaxSide bounds the copy of an image kept for showing it whole, so
// that a 50-megapixel photo never becomes a 50-megapixel texture.
const displayMaxSide = 2048

// runGUI opens the main window, with the project at path if it is not
// empty, and returns when the window closes.
func runGUI(path string, stderr io.Writer) int {
	a := fyneapp.NewWithID("app.boxwright.desktop")
	u := newUI(a)
	if path != "" {
		if err := u.openProject(path); err != nil {
			fmt.Fprintf(stderr, "boxwright: %v\n", err)
			return 1
		}
	}
	u.win.ShowAndRun()
	u.closeProject()
	return 0
}

// ui is the main window and the open project.
type ui struct {
	app fyne.App
	win fyne.Window

	st      *store.Store
	images  []project.Image
	perImg  map[int64]project.ImageCounts
	classes map[int64]project.Class

	list       *widget.List
	view       *canvas.View
	who        *widget.Select // whose labels the view shows
	annotators []project.Annotator
	summary    *widget.Label
	status     *widget.Label
	body       *fyne.Container // the screen shown in the window: welcome or project

	selected     int
	cancelDecode context.CancelFunc
	// decoded, when set, receives each image the view shows (for tests).
	decoded func(id int64, err error)
}

func newUI(a fyne.App) *ui {
	u := &ui{app: a, win: a.NewWindow("Boxwright"), selected: -1}
	u.view = canvas.NewView()
	u.summary = widget.NewLabel("")
	u.summary.Wrapping = fyne.TextWrapWord
	u.status = widget.NewLabel("")
	u.status.Truncation = fyne.TextTruncateEllipsis
	u.list = widget.NewList(func() int { return len(u.images) }, u.newRow, u.updateRow)
	u.list.OnSelected = func(i widget.ListItemID) { u.showImage(i) }
	u.who = widget.NewSelect(nil, func(string) { u.showLabels() })
	u.body = container.NewStack(u.welcome())
	u.win.SetContent(u.body)
	u.win.SetMainMenu(u.menu())
	u.win.Resize(fyne.NewSize(1280, 820))
	u.addShortcuts()
	return u
}

func (u *ui) menu() *fyne.MainMenu {
	file := fyne.NewMenu("Project",
		fyne.NewMenuItem("New project…", u.askNew),
		fyne.NewMenuItem("Open project…", u.askOpen),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Add image folder…", u.askAddFolder),
		fyne.NewMenuItem("Add image files…", u.askAddFile),
		fyne.NewMenuItem("Find moved images…", u.askRelink),
	)
	images := fyne.NewMenu("Images",
		fyne.NewMenuItem("Next image", func() { u.step(1) }),
		fyne.NewMenuItem("Previous image", func() { u.step(-1) }),
		fyne.NewMenuItem("First image", func() { u.selectIndex(0) }),
		fyne.NewMenuItem("Last image", func() { u.selectIndex(len(u.images) - 1) }),
	)
	data := fyne.NewMenu("Dataset",
		fyne.NewMenuItem("Import labels…", u.askImport),
		fyne.NewMenuItem("Export dataset…", u.askExport),
	)
	help := fyne.NewMenu("Help",
		fyne.NewMenuItem("Keys and mouse", u.showKeys),
		fyne.NewMenuItem("Cautions", u.showCautions),
		fyne.NewMenuItem("About Boxwright", u.showAbout),
	)
	return fyne.NewMainMenu(file, images, data, help)
}

// Keys of the main window; documented in showKeys and the README.
func (u *ui) addShortcuts() {
	c := u.win.Canvas()
	ctrl := fyne.KeyModifierShortcutDefault
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyO, Modifier: ctrl}, func(fyne.Shortcut) { u.askOpen() })
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyN, Modifier: ctrl}, func(fyne.Shortcut) { u.askNew() })
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyI, Modifier: ctrl}, func(fyne.Shortcut) { u.askAddFolder() })
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyL, Modifier: ctrl}, func(fyne.Shortcut) { u.askImport() })
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyE, Modifier: ctrl}, func(fyne.Shortcut) { u.askExport() })
	c.SetOnTypedKey(func(e *fyne.KeyEvent) {
		switch e.Name {
		case fyne.KeyPageDown, fyne.KeySpace:
			u.step(1)
		case fyne.KeyPageUp, fyne.KeyBackspace:
			u.step(-1)
		case fyne.KeyHome:
			u.selectIndex(0)
		case fyne.KeyEnd:
			u.selectIndex(len(u.images) - 1)
		case fyne.KeyF1:
			u.showKeys()
		}
	})
}

func (u *ui) welcome() fyne.CanvasObject {
	title := widget.NewLabelWithStyle("Boxwright", fyne.TextAlignCenter, fyne.TextStyle{Bold: true})
	intro := widget.NewLabel("Draw and check bounding boxes for object-detector datasets.\nOpen a project file (.boxw), start a new one, or try the invented harbour demo.")
	intro.Alignment = fyne.TextAlignCenter
	buttons := container.NewHBox(
		widget.NewButtonWithIcon("Open project…", theme.FolderOpenIcon(), u.askOpen),
		widget.NewButtonWithIcon("New project…", theme.DocumentCreateIcon(), u.askNew),
		widget.NewButtonWithIcon("Make demo project…", theme.MediaPhotoIcon(), u.askDemo),
	)
	caution := widget.NewLabel(cautionShort)
	caution.Wrapping = fyne.TextWrapWord
	caution.Alignment = fyne.TextAlignCenter
	return container.NewCenter(container.NewVBox(title, intro, container.NewCenter(buttons), widget.NewSeparator(),
		container.NewGridWrap(fyne.NewSize(640, 120), caution)))
}

func (u *ui) projectScreen() fyne.CanvasObject {
	left := container.NewBorder(u.summary, nil, nil, nil, u.list)
	bar := container.NewHBox(widget.NewLabel("Show labels of"), u.who)
	split := container.NewHSplit(left, container.NewBorder(bar, nil, nil, nil, u.view))
	split.Offset = 0.24
	return container.NewBorder(nil, u.status, nil, nil, split)
}

func (u *ui) newRow() fyne.CanvasObject {
	name := widget.NewLabelWithStyle("harbour-000.jpg", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	name.Truncation = fyne.TextTruncateEllipsis
	detail := widget.NewLabel("reviewed · 00 labels · 00 pending")
	detail.Truncation = fyne.TextTruncateEllipsis
	return container.New(layout.NewCustomPaddedVBoxLayout(-2*theme.Padding()), name, detail)
}

func (u *ui) updateRow(i widget.ListItemID, o fyne.CanvasObject) {
	if i >= len(u.images) {
		return
	}
	im := u.images[i]
	box := o.(*fyne.Container)
	box.Objects[0].(*widget.Label).SetText(filepath.Base(im.Path))
	box.Objects[1].(*widget.Label).SetText(rowDetail(im, u.perImg[im.ID]))
}

func rowDetail(im project.Image, c project.ImageCounts) string {
	s := fmt.Sprintf("%s · %s", im.Status, plural(c.Labels, "label"))
	if c.Pending > 0 {
		s += fmt.Sprintf(" · %d pending", c.Pending)
	}
	return s
}

func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// openProject closes any open project and shows the one at path.
func (u *ui) openProject(path string) error {
	s, err := store.Open(path)
	if err != nil {
		return err
	}
	u.closeProject()
	u.st = s
	u.win.SetTitle("Boxwright — " + filepath.Base(path))
	if err := u.reload(); err != nil {
		return err
	}
	u.body.Objects = []fyne.CanvasObject{u.projectScreen()}
	u.body.Refresh()
	if len(u.images) > 0 {
		u.selectIndex(0)
	} else {
		u.view.SetMessage("This project has no images yet: Project ▸ Add image folder… (Ctrl+I)")
	}
	u.reportMissing()
	return nil
}

func (u *ui) closeProject() {
	if u.cancelDecode != nil {
		u.cancelDecode()
	}
	if u.st != nil {
		u.st.Close()
		u.st = nil
	}
}

// reload reads the image list, classes and counts again.
func (u *ui) reload() error {
	ctx := context.Background()
	ims, err := u.st.Images(ctx)
	if err != nil {
		return err
	}
	per, err := u.st.CountsByImage(ctx)
	if err != nil {
		return err
	}
	cs, err := u.st.Classes(ctx)
	if err != nil {
		return err
	}
	counts, err := u.st.Counts(ctx)
	if err != nil {
		return err
	}
	as, err := u.st.Annotators(ctx)
	if err != nil {
		return err
	}
	u.images, u.perImg, u.annotators = ims, per, as
	opts := []string{everyone}
	for _, a := range as {
		opts = append(opts, a.Name)
	}
	u.who.SetOptions(opts)
	if u.who.Selected == "" || !slices.Contains(opts, u.who.Selected) {
		// One annotator at a time by default: several people's boxes on
		// the same objects hide each other.
		if len(as) > 0 {
			u.who.SetSelected(as[0].Name)
		} else {
			u.who.SetSelected(everyone)
		}
	}
	u.classes = map[int64]project.Class{}
	for _, c := range cs {
		u.classes[c.ID] = c
	}
	var parts []string
	for _, st := range project.ImageStatuses {
		if n := counts.ImagesBy[st]; n > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", n, st))
		}
	}
	u.summary.SetText(fmt.Sprintf("%s, %s, %d pending suggestions\n%s", plural(counts.Images, "image"), plural(counts.Labels, "label"),
		counts.Suggestions[project.SuggestionPending], strings.Join(parts, " · ")))
	u.list.Refresh()
	return nil
}

func (u *ui) step(d int) {
	if u.selected < 0 {
		u.selectIndex(0)
		return
	}
	u.selectIndex(u.selected + d)
}

func (u *ui) selectIndex(i int) {
	if i < 0 || i >= len(u.images) {
		return
	}
	u.list.Select(i) // calls showImage through OnSelected
	u.list.ScrollTo(i)
}

// showImage decodes the i-th image in the background and then shows it
// with its labels.
func (u *ui) showImage(i int) {
	if i < 0 || i >= len(u.images) || u.st == nil {
		return
	}
	u.selected = i
	im := u.images[i]
	if u.cancelDecode != nil {
		u.cancelDecode()
	}
	ctx, cancel := context.WithCancel(context.Background())
	u.cancelDecode = cancel
	u.view.SetMessage("Loading " + filepath.Base(im.Path) + "…")
	path := u.st.ImagePath(im)
	go func() {
		img, _, err := imagefile.Decode(path, imagefile.DefaultMaxPixels)
		var shown image.Image
		if err == nil {
			shown = imagefile.Thumbnail(img, displayMaxSide)
		}
		fyne.Do(func() {
			if ctx.Err() != nil {
				return // the user moved on
			}
			if err != nil {
				u.status.SetText(fmt.Sprintf("%s — %d×%d px, %s", im.Path, im.Width, im.Height, im.Status))
				if errors.Is(err, fs.ErrNotExist) {
					u.view.SetMessage(fmt.Sprintf("Cannot show this image: %s is missing. Project ▸ Find moved images… looks for it.", filepath.Base(im.Path)))
				} else {
					u.view.SetMessage(fmt.Sprintf("Cannot show this image: %v", err))
				}
			} else {
				u.view.SetImage(shown, im.Width, im.Height)
				u.showLabels()
			}
			if u.decoded != nil {
				u.decoded(im.ID, err)
			}
		})
	}()
}

// everyone is the choice that shows all annotators' labels at once.
const everyone = "everyone"

// showLabels draws the selected image's labels of the chosen annotator
// and updates the status line.
func (u *ui) showLabels() {
	if u.st == nil || u.selected < 0 || u.selected >= len(u.images) {
		return
	}
	im := u.images[u.selected]
	f := project.LabelFilter{ImageID: im.ID}
	names := map[int64]string{}
	for _, a := range u.annotators {
		names[a.ID] = a.Name
		if a.Name == u.who.Selected {
			f.AnnotatorID = a.ID
		}
	}
	labels, err := u.st.Labels(context.Background(), f)
	if err != nil {
		u.showError(err)
		return
	}
	overlays := make([]canvas.Overlay, 0, len(labels))
	for _, l := range labels {
		c := u.classes[l.ClassID]
		caption := c.Name
		if f.AnnotatorID == 0 {
			caption += " · " + names[l.AnnotatorID]
		}
		overlays = append(overlays, canvas.Overlay{Box: l.Box, Color: c.Color, Caption: caption})
	}
	u.view.SetOverlays(overlays)
	whose := "everyone's"
	if f.AnnotatorID != 0 {
		whose = u.who.Selected + "'s"
	}
	u.status.SetText(fmt.Sprintf("%s — %d×%d px, orientation %d, %s — showing %s %s",
		im.Path, im.Width, im.Height, im.Orientation, im.Status, whose, plural(len(labels), "label")))
}

// reportMissing offers to look for moved image files by their content.
func (u *ui) reportMissing() {
	missing, err := u.st.MissingImages(context.Background())
	if err != nil || len(missing) == 0 {
		return
	}
	msg := fmt.Sprintf("%s of this project cannot be found where the project expects them (for example %s).\n\nLook for them in a folder? Files are matched by their content, so renamed files are found too.",
		plural(len(missing), "image file"), missing[0].Path)
	dialog.ShowConfirm("Images missing", msg, func(ok bool) {
		if ok {
			u.askRelink()
		}
	}, u.win)
}

func (u *ui) showError(err error) { dialog.ShowError(err, u.win) }

// haveProject says whether a project is open, and tells the user to open
// one when it is not.
func (u *ui) haveProject() bool {
	if u.st == nil {
		dialog.ShowInformation("No project", "Open or create a project first.", u.win)
	}
	return u.st != nil
}

func (u *ui) askOpen() {
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err != nil || r == nil {
			return
		}
		r.Close()
		if err := u.openProject(r.URI().Path()); err != nil {
			u.showError(err)
		}
	}, u.win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{store.Extension}))
	d.Show()
}

func (u *ui) askNew() {
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil || w == nil {
			return
		}
		path := w.URI().Path()
		w.Close()
		os.Remove(path) // the dialog made an empty file; Create refuses to overwrite
		if !strings.HasSuffix(path, store.Extension) {
			path += store.Extension
		}
		s, err := store.Create(path)
		if err != nil {
			u.showError(err)
			return
		}
		s.Close()
		if err := u.openProject(path); err != nil {
			u.showError(err)
		}
	}, u.win)
	d.SetFileName("project" + store.Extension)
	d.Show()
}

func (u *ui) askDemo() {
	dialog.ShowFolderOpen(func(l fyne.ListableURI, err error) {
		if err != nil || l == nil {
			return
		}
		dir := filepath.Join(l.Path(), "boxwright-demo")
		path := filepath.Join(dir, demoProjectName)
		if _, err := os.Stat(path); err == nil {
			if err := u.openProject(path); err != nil {
				u.showError(err)
			}
			return
		}
		u.runJob("Making the demo project", func(ctx context.Context, progress func(float64)) error {
			return makeDemo(ctx, dir, demoDefaults, func(done, total int) { progress(float64(done) / float64(total)) })
		}, func() {
			if err := u.openProject(path); err != nil {
				u.showError(err)
			}
		})
	}, u.win)
}

func (u *ui) askAddFolder() {
	if !u.haveProject() {
		return
	}
	dialog.ShowFolderOpen(func(l fyne.ListableURI, err error) {
		if err == nil && l != nil {
			u.intake([]string{l.Path()}, false)
		}
	}, u.win)
}

func (u *ui) askAddFile() {
	if !u.haveProject() {
		return
	}
	d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
		if err == nil && r != nil {
			r.Close()
			u.intake([]string{r.URI().Path()}, false)
		}
	}, u.win)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".jpg", ".jpeg", ".png", ".gif", ".bmp", ".tif", ".tiff", ".webp"}))
	d.Show()
}

func (u *ui) askRelink() {
	if u.st == nil {
		return
	}
	dialog.ShowFolderOpen(func(l fyne.ListableURI, err error) {
		if err == nil && l != nil {
			u.intake([]string{l.Path()}, true)
		}
	}, u.win)
}

// intake adds (or, with relinkOnly, finds) images as a background job and
// shows the summary.
func (u *ui) intake(paths []string, relinkOnly bool) {
	st := u.st
	var rep store.IntakeReport
	title := "Adding images"
	if relinkOnly {
		title = "Looking for moved images"
	}
	u.runJob(title, func(ctx context.Context, progress func(float64)) error {
		var err error
		rep, err = st.AddImages(ctx, paths, store.IntakeOptions{RelinkOnly: relinkOnly,
			Progress: func(done, total int) { progress(float64(done) / float64(total)) }})
		return err
	}, func() {
		if err := u.reload(); err != nil {
			u.showError(err)
		}
		if u.selected < 0 && len(u.images) > 0 {
			u.selectIndex(0)
		}
		msg := fmt.Sprintf("Added %d, already known %d, relinked %d, skipped %d.", rep.Added, rep.Duplicates, rep.Relinked, len(rep.Failed))
		for i, f := range rep.Failed {
			if i == 10 {
				msg += fmt.Sprintf("\n… and %d more", len(rep.Failed)-10)
				break
			}
			msg += fmt.Sprintf("\n• %s: %s", filepath.Base(f.Path), f.Error)
		}
		dialog.ShowInformation(title, msg, u.win)
	})
}

// runJob runs work in the background behind a progress dialog with a
// Cancel button; done runs on the Fyne goroutine when work succeeded.
func (u *ui) runJob(title string, work func(ctx context.Context, progress func(float64)) error, done func()) {
	ctx, cancel := context.WithCancel(context.Background())
	// A moving bar until the job reports how far it is.
	bar := widget.NewProgressBar()
	busy := widget.NewProgressBarInfinite()
	bar.Hide()
	d := dialog.NewCustom(title, "Cancel", container.NewVBox(widget.NewLabel(title+"…"), container.NewStack(busy, bar)), u.win)
	d.SetOnClosed(cancel)
	d.Show()
	go func() {
		err := work(ctx, func(f float64) {
			fyne.Do(func() {
				if !busy.Hidden {
					busy.Stop()
					busy.Hide()
					bar.Show()
				}
				bar.SetValue(f)
			})
		})
		fyne.Do(busy.Stop)
		fyne.Do(func() {
			cancelled := ctx.Err() != nil
			d.SetOnClosed(nil)
			d.Hide()
			cancel()
			switch {
			case err != nil && !cancelled:
				u.showError(err)
			case cancelled:
				if err := u.reload(); err == nil && u.st != nil {
					dialog.ShowInformation(title, "Cancelled. Everything finished before the cancel is kept.", u.win)
				}
			default:
				done()
			}
		})
	}()
}

func (u *ui) showKeys() {
	dialog.ShowInformation("Keys and mouse", keysHelp, u.win)
}

func (u *ui) showCautions() {
	dialog.ShowInformation("Cautions", cautionLong, u.win)
}

func (u *ui) showAbout() {
	dialog.ShowInformation("About Boxwright", "Boxwright — a workbench for bounding-box datasets.\nProjects are single SQLite files (.boxw); everything runs offline.", u.win)
}

const keysHelp = `Ctrl+O  open a project
Ctrl+N  new project
Ctrl+I  add an image folder
Ctrl+L  import labels (corner/size JSON, per-image XML, centre-normalised text)
Ctrl+E  export a dataset with a train/val/test split
Page Down or Space  next image
Page Up or Backspace  previous image
Home / End  first / last image
Up / Down in the list  move through images
F1  this help`

const cautionShort = "Images of people or vehicles can hold personal data (faces, number plates). Follow your organisation's rules and local law when storing and sharing them."

const cautionLong = `Personal data: images of people or vehicles can hold personal data (faces, number plates) that data-protection law governs. Follow your organisation's rules and local law on storing and sharing them.

Agreement figures: the verbal bands shown beside agreement figures are conventions from the literature, not acceptance criteria.

Safety: datasets for safety-relevant detectors need the validation that their field's standards require; Boxwright's figures do not replace it.`
