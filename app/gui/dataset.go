package gui

import (
	"context"
	"fmt"
	"path/filepath"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/project/formats"
)

// layoutChoices are the interchange layouts by what they are.
var layoutChoices = []struct {
	label  string
	layout formats.Layout
}{
	{"Corner/size JSON (one file)", formats.LayoutJSON},
	{"Per-image XML (a folder of .xml)", formats.LayoutXML},
	{"Centre-normalised text (a folder of .txt + class names)", formats.LayoutText},
}

func layoutLabels() []string {
	var out []string
	for _, c := range layoutChoices {
		out = append(out, c.label)
	}
	return out
}

func layoutOf(label string) formats.Layout {
	for _, c := range layoutChoices {
		if c.label == label {
			return c.layout
		}
	}
	return ""
}

// pathField is an entry with a button that fills it from a file or folder
// dialog.
func (u *ui) pathField(files, folders bool, placeholder string) (*widget.Entry, fyne.CanvasObject) {
	e := widget.NewEntry()
	e.SetPlaceHolder(placeholder)
	buttons := container.NewHBox()
	if files {
		buttons.Add(widget.NewButton("File…", func() {
			showFileOpen(u.win, "Choose a file", nil, e.SetText)
		}))
	}
	if folders {
		buttons.Add(widget.NewButton("Folder…", func() {
			showFolderOpen(u.win, "Choose a folder", "Choose", e.SetText)
		}))
	}
	return e, container.NewBorder(nil, nil, nil, buttons, e)
}

// importForm builds the import dialog's form; submit runs the import.
func (u *ui) importForm() (*widget.Form, func() (ops.ImportJob, error)) {
	layout := widget.NewSelect(layoutLabels(), nil)
	layout.SetSelected(layoutChoices[0].label)
	src, srcRow := u.pathField(true, true, "labels file, or a folder of them")
	classes, classesRow := u.pathField(true, false, "classes.txt (text layout; found beside the labels if empty)")
	images, imagesRow := u.pathField(false, true, "optional: add the images from this folder first")
	annotator := widget.NewEntry()
	annotator.SetPlaceHolder("default: named after the labels file")
	create := widget.NewCheck("create classes the project lacks", nil)
	strict := widget.NewCheck("refuse boxes outside their image (otherwise clip them)", nil)
	skip := widget.NewCheck("skip records whose image is not in the project (otherwise they stop the import)", nil)
	form := widget.NewForm(
		widget.NewFormItem("Layout", layout),
		widget.NewFormItem("Labels", srcRow),
		widget.NewFormItem("Class names", classesRow),
		widget.NewFormItem("Images", imagesRow),
		widget.NewFormItem("Annotator", annotator),
		widget.NewFormItem("", create),
		widget.NewFormItem("", strict),
		widget.NewFormItem("", skip),
	)
	return form, func() (ops.ImportJob, error) {
		j := ops.ImportJob{Layout: layoutOf(layout.Selected), Src: strings.TrimSpace(src.Text), ClassesFile: strings.TrimSpace(classes.Text),
			ImagesDir: strings.TrimSpace(images.Text), Annotator: strings.TrimSpace(annotator.Text), Create: create.Checked, Strict: strict.Checked,
			SkipUnmatched: skip.Checked}
		if j.Src == "" {
			return j, fmt.Errorf("choose the labels file or folder to import")
		}
		if j.Annotator == "" {
			j.Annotator = strings.TrimSuffix(filepath.Base(j.Src), filepath.Ext(j.Src))
		}
		return j, nil
	}
}

func (u *ui) askImport() {
	if !u.haveProject() {
		return
	}
	form, read := u.importForm()
	d := dialog.NewCustomConfirm("Import labels", "Import", "Cancel", container.NewGridWrap(fyne.NewSize(640, form.MinSize().Height), form), func(ok bool) {
		if !ok {
			return
		}
		j, err := read()
		if err != nil {
			u.showError(err)
			return
		}
		st := u.st
		var res ops.ImportResult
		u.runJob("Importing labels", func(ctx context.Context, progress func(float64)) error {
			var err error
			res, err = ops.RunImport(ctx, st, j)
			return err
		}, func() {
			if err := u.reload(); err != nil {
				u.showError(err)
			}
			u.loadOthers()
			u.refreshBoxes()
			msg := fmt.Sprintf("Imported %s on %s for %s; clipped %d boxes to their image.", ops.Plural(res.Labels, "label"), ops.Plural(res.Images, "image"), res.Annotator, res.Clipped)
			if len(res.ClassesCreated) > 0 {
				msg += "\nNew classes: " + strings.Join(res.ClassesCreated, ", ")
			}
			if n := len(res.Unmatched); n > 0 {
				msg += fmt.Sprintf("\nskipped %d records that match no project image, for example:\n%s", n, res.Unmatched[0])
			}
			dialog.ShowInformation("Import labels", msg, u.win)
		})
	}, u.win)
	d.Show()
}

func (u *ui) askExport() {
	if !u.haveProject() {
		return
	}
	layout := widget.NewSelect(layoutLabels(), nil)
	layout.SetSelected(layoutChoices[0].label)
	names := u.annotatorNames()
	who := widget.NewSelect(names, nil)
	if len(names) > 0 {
		who.SetSelected(names[0])
	}
	out, outRow := u.pathField(false, true, "a new or empty folder")
	split := widget.NewEntry()
	split.SetText("80/10/10")
	seed := widget.NewEntry()
	seed.SetText("1")
	images := widget.NewSelect([]string{string(formats.ImagesCopy), string(formats.ImagesLink), string(formats.ImagesNone)}, nil)
	images.SetSelected(string(formats.ImagesCopy))
	form := widget.NewForm(
		widget.NewFormItem("Layout", layout),
		widget.NewFormItem("Labels of", who),
		widget.NewFormItem("Into folder", outRow),
		widget.NewFormItem("Train/val/test %", split),
		widget.NewFormItem("Split seed", seed),
		widget.NewFormItem("Image files", images),
	)
	d := dialog.NewCustomConfirm("Export dataset", "Export", "Cancel", container.NewGridWrap(fyne.NewSize(560, form.MinSize().Height), form), func(ok bool) {
		if !ok {
			return
		}
		ratios, err := formats.ParseRatios(split.Text)
		if err != nil {
			u.showError(err)
			return
		}
		sd, err := strconv.ParseInt(strings.TrimSpace(seed.Text), 10, 64)
		if err != nil {
			u.showError(fmt.Errorf("split seed %q is not a whole number", seed.Text))
			return
		}
		if strings.TrimSpace(out.Text) == "" || who.Selected == "" {
			u.showError(fmt.Errorf("choose whose labels to export and a folder to export into"))
			return
		}
		st, dir := u.st, strings.TrimSpace(out.Text)
		var rep formats.ExportReport
		var classes []string
		u.runJob("Exporting dataset", func(ctx context.Context, progress func(float64)) error {
			var err error
			rep, classes, err = ops.RunExport(ctx, st, who.Selected, dir, formats.ExportOptions{Layout: layoutOf(layout.Selected), Ratios: ratios, Seed: sd,
				Images: formats.ImageMode(images.Selected), Progress: func(done, total int) { progress(float64(done) / float64(total)) }})
			return err
		}, func() {
			var b strings.Builder
			ops.PrintExportReport(&b, rep, classes)
			text := widget.NewLabel(b.String())
			text.TextStyle = fyne.TextStyle{Monospace: true}
			dialog.ShowCustom("Export dataset", "Close", container.NewVBox(widget.NewLabel("Wrote "+dir+" (report.json inside)"), text), u.win)
		})
	}, u.win)
	d.Show()
}
