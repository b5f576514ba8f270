package gui

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest/onnx"
)

// Suggestions ▸ Run a model…: the team's own detector, an ONNX file, over
// this image, the next N, the unlabelled images or every image, its boxes
// stored as pending suggestions of a source named after the file.

const (
	layoutAutoChoice = "from the output shapes"
	fromModel        = "from the model"
)

// modelRunForm is the dialog's fields.
type modelRunForm struct {
	path, names, input, next, minScore, nms *widget.Entry
	letterbox, describe                     *widget.Check
	layout, where                           *widget.Select
	found                                   *widget.Label
}

// runModelLastPath remembers the model of the last run for the next.
var runModelLastPath string

func (u *ui) askRunModel() {
	if !u.haveProject() {
		return
	}
	f, items := u.newModelRunForm()
	d := dialog.NewForm("Run a model", "Run", "Cancel", items, func(ok bool) {
		if ok {
			u.startModelRun(f)
		}
	}, u.win)
	d.Resize(fyne.NewSize(720, 600))
	d.Show()
}

// newModelRunForm makes the dialog's fields, filled from the last run.
func (u *ui) newModelRunForm() (*modelRunForm, []*widget.FormItem) {
	f := &modelRunForm{path: widget.NewEntry(), names: widget.NewEntry(), input: widget.NewEntry(), next: widget.NewEntry(),
		minScore: widget.NewEntry(), nms: widget.NewEntry(), found: widget.NewLabel("")}
	f.path.SetPlaceHolder("an ONNX model file (.onnx)")
	f.path.SetText(runModelLastPath)
	f.names.SetPlaceHolder("optional: one class name per line, if the model does not say")
	f.input.SetPlaceHolder(fromModel + " (or WxH, e.g. 640x640)")
	f.letterbox = widget.NewCheck("Keep the aspect ratio and pad (letterbox); otherwise stretch", nil)
	f.letterbox.SetChecked(true)
	f.describe = widget.NewCheck("Keep these settings in the description file beside the model", nil)
	layouts := append([]string{layoutAutoChoice}, onnx.Layouts...)
	f.layout = widget.NewSelect(layouts, nil)
	f.layout.SetSelected(layoutAutoChoice)
	f.where = widget.NewSelect([]string{whereThis, whereNextN, whereUnlabelled, whereAll}, nil)
	f.where.SetSelected(whereUnlabelled)
	f.next.SetText("10")
	f.minScore.SetPlaceHolder("from the description (0.25)")
	f.nms.SetPlaceHolder("from the description (0.5); off for none")
	f.found.Wrapping = fyne.TextWrapWord
	f.found.SetText("Choose a model file; Check shows what Boxwright reads from it.")
	// A description beside the model fills the fields.
	fill := func(path string) {
		d, err := onnx.ReadDescription(onnx.DescriptionPath(path))
		if err != nil {
			return
		}
		if d.Input.Width > 0 {
			f.input.SetText(fmt.Sprintf("%dx%d", d.Input.Width, d.Input.Height))
		}
		f.letterbox.SetChecked(d.Input.Resize == "letterbox")
		if d.Output.Layout != onnx.LayoutAuto {
			f.layout.SetSelected(d.Output.Layout)
		}
		f.minScore.SetText(strconv.FormatFloat(d.MinScore, 'g', -1, 64))
		if d.NMSIoU <= 0 {
			f.nms.SetText("off")
		} else {
			f.nms.SetText(strconv.FormatFloat(d.NMSIoU, 'g', -1, 64))
		}
	}
	f.path.OnSubmitted = fill
	browse := widget.NewButtonWithIcon("", theme.FolderOpenIcon(), func() {
		showFileOpen(u.win, "Choose an ONNX model", []string{".onnx"}, func(p string) { f.path.SetText(p); fill(p) })
	})
	browseNames := widget.NewButtonWithIcon("", theme.FolderOpenIcon(), func() {
		showFileOpen(u.win, "Choose a names file", nil, func(p string) { f.names.SetText(p) })
	})
	check := widget.NewButton("Check", nil)
	check.OnTapped = func() {
		path, opt, err := f.modelToOpen()
		if err != nil {
			f.found.SetText("Cannot run it: " + err.Error())
			return
		}
		f.found.SetText("Reading the model…")
		check.Disable()
		classes := u.classes
		go func() {
			text := ""
			if m, err := onnx.Open(path, opt); err != nil {
				text = "Cannot run it: " + err.Error()
			} else {
				text = modelSummary(m, classes)
				m.Close()
			}
			fyne.Do(func() { f.found.SetText(text); check.Enable() })
		}()
	}
	caution := widget.NewLabel("A model's suggestions carry its mistakes: each is pending until a person accepts, corrects or rejects it.")
	caution.Wrapping = fyne.TextWrapWord
	items := []*widget.FormItem{
		widget.NewFormItem("Model", container.NewBorder(nil, nil, nil, browse, f.path)),
		widget.NewFormItem("Class names", container.NewBorder(nil, nil, nil, browseNames, f.names)),
		widget.NewFormItem("Input size", f.input),
		widget.NewFormItem("", f.letterbox),
		widget.NewFormItem("Output layout", f.layout),
		widget.NewFormItem("Run on", container.NewBorder(nil, nil, nil, container.NewHBox(widget.NewLabel("N ="), f.next), f.where)),
		widget.NewFormItem("Minimum score", f.minScore),
		widget.NewFormItem("NMS IoU", f.nms),
		widget.NewFormItem("", f.describe),
		widget.NewFormItem("", container.NewBorder(nil, nil, nil, check, f.found)),
		widget.NewFormItem("", caution),
	}
	if runModelLastPath != "" {
		fill(runModelLastPath)
	}
	return f, items
}

const whereNextN = "the next N images"

// modelSummary says what was read from a model, in a sentence or two.
func modelSummary(m *onnx.Model, classes []project.Class) string {
	have := map[string]bool{}
	for _, c := range classes {
		have[c.Name] = true
	}
	var missing []string
	for _, c := range m.Classes {
		if !have[c] {
			missing = append(missing, c)
		}
	}
	s := fmt.Sprintf("Layout %s, input %d×%d (%s), %s from %s: %s. ONNX Runtime %s.",
		m.Desc.Output.Layout, m.Desc.Input.Width, m.Desc.Input.Height, m.Desc.Input.Resize, ops.Plural(len(m.Classes), "class"),
		m.ClassesFrom, strings.Join(m.Classes, ", "), onnx.RuntimeVersion())
	if len(missing) > 0 {
		s += fmt.Sprintf(" The project lacks %s; Run asks what to do with them.", strings.Join(missing, ", "))
	}
	return s
}

// description is the description file (or the defaults) with the
// dialog's fields on top.
func (f *modelRunForm) description() (onnx.Description, error) {
	path := strings.TrimSpace(f.path.Text)
	d, err := onnx.DescriptionOf(path)
	if err != nil {
		return d, err
	}
	if v := strings.TrimSpace(f.input.Text); v != "" && v != fromModel {
		w, h, ok := strings.Cut(strings.ToLower(v), "x")
		wi, e1 := strconv.Atoi(strings.TrimSpace(w))
		hi, e2 := strconv.Atoi(strings.TrimSpace(h))
		if !ok || e1 != nil || e2 != nil || wi < 1 || hi < 1 || wi > 16384 || hi > 16384 {
			return d, fmt.Errorf("the input size must be WIDTHxHEIGHT in pixels, e.g. 640x640, not %q", v)
		}
		d.Input.Width, d.Input.Height = wi, hi
	}
	d.Input.Resize = "stretch"
	if f.letterbox.Checked {
		d.Input.Resize = "letterbox"
	}
	d.Output.Layout = onnx.LayoutAuto
	if f.layout.Selected != layoutAutoChoice {
		d.Output.Layout = f.layout.Selected
	}
	if v := strings.TrimSpace(f.minScore.Text); v != "" {
		ms, err := strconv.ParseFloat(v, 64)
		if err != nil || !(ms >= 0 && ms <= 1) {
			return d, fmt.Errorf("the minimum score must be a number from 0 to 1, not %q", v)
		}
		d.MinScore = ms
	}
	switch v := strings.TrimSpace(f.nms.Text); v {
	case "":
	case "off":
		d.NMSIoU = -1
	default:
		iou, err := strconv.ParseFloat(v, 64)
		if err != nil || !(iou > 0 && iou <= 1) {
			return d, fmt.Errorf("the NMS IoU must be a number above 0 and at most 1, or off, not %q", v)
		}
		d.NMSIoU = iou
	}
	return d, d.Check("the settings")
}

// modelToOpen reads the form (on the Fyne goroutine): the model's path
// and how to open it.
func (f *modelRunForm) modelToOpen() (string, onnx.OpenOptions, error) {
	path := strings.TrimSpace(f.path.Text)
	if path == "" {
		return "", onnx.OpenOptions{}, fmt.Errorf("choose the model file (.onnx)")
	}
	d, err := f.description()
	if err != nil {
		return "", onnx.OpenOptions{}, err
	}
	opt := onnx.OpenOptions{Desc: &d}
	if n := strings.TrimSpace(f.names.Text); n != "" {
		if opt.Names, err = onnx.ReadNames(n); err != nil {
			return "", opt, err
		}
		opt.NamesFile = n
	}
	return path, opt, nil
}

// runTargets are the images the form's choice names; nil: the images
// without labels.
func (u *ui) runTargets(f *modelRunForm) ([]project.Image, error) {
	switch f.where.Selected {
	case whereThis:
		if u.selected >= 0 && u.selected < len(u.images) {
			return []project.Image{u.images[u.selected]}, nil
		}
		return nil, fmt.Errorf("no image is shown: choose one, or another set of images")
	case whereNextN:
		n, err := strconv.Atoi(strings.TrimSpace(f.next.Text))
		if err != nil || n < 1 {
			return nil, fmt.Errorf("N must be a whole number of images, 1 or more, not %q", f.next.Text)
		}
		from := max(u.selected+1, 0)
		ims := append([]project.Image{}, u.images[min(from, len(u.images)):min(from+n, len(u.images))]...)
		if len(ims) == 0 {
			return nil, fmt.Errorf("there is no image after this one")
		}
		return ims, nil
	case whereAll:
		return append([]project.Image{}, u.images...), nil
	}
	return nil, nil
}

// startModelRun checks the form and the model, asks about the classes
// the project lacks, then runs.
func (u *ui) startModelRun(f *modelRunForm) {
	ims, err := u.runTargets(f)
	if err != nil {
		u.showError(err)
		return
	}
	path, opt, err := f.modelToOpen()
	if err != nil {
		u.showError(err)
		return
	}
	describe := f.describe.Checked
	var m *onnx.Model
	u.runJob("Reading the model", func(ctx context.Context, _ func(float64)) error {
		if m, err = onnx.Open(path, opt); err != nil {
			return err
		}
		if ctx.Err() != nil {
			m.Close() // cancelled while it was read: nothing runs it
			return ctx.Err()
		}
		if describe {
			keep := m.Desc
			keep.Classes = m.Classes
			if err := keep.Write(onnx.DescriptionPath(m.Path)); err != nil {
				m.Close()
				return err
			}
		}
		return nil
	}, func() { u.runOpenedModel(m, ims) })
}

// runOpenedModel asks about the model's classes the project lacks, then
// runs it.
func (u *ui) runOpenedModel(m *onnx.Model, ims []project.Image) {
	runModelLastPath = m.Path
	have := map[string]bool{}
	for _, c := range u.classes {
		have[c.Name] = true
	}
	missing := map[string]string{}
	for _, c := range m.Classes {
		if !have[c] {
			missing[c] = c
		}
	}
	if len(missing) == 0 {
		u.runModel(m, ims, ops.UnknownClassRule{})
		return
	}
	u.askClassRules("Run", missing, func(r ops.UnknownClassRule) { u.runModel(m, ims, r) }, m.Close)
}

// runModel runs an opened model as a background job (closing it after)
// and stores its boxes as pending suggestions.
func (u *ui) runModel(m *onnx.Model, ims []project.Image, rule ops.UnknownClassRule) {
	st := u.st
	var rep ops.ModelRunReport
	u.runJob("Running "+m.Source(), func(ctx context.Context, progress func(float64)) error {
		defer m.Close()
		var err error
		rep, err = ops.RunModel(ctx, st, ops.ModelRunJob{Model: m, Images: ims, Unknown: rule, Save: true,
			Progress: func(done, total int) { progress(float64(done) / float64(total)) }})
		return err
	}, func() {
		u.showNewSuggestions()
		msg := fmt.Sprintf("%s on %s, pending review as source %q.", ops.Plural(len(rep.Detections), "suggestion"), ops.Plural(rep.Images, "image"), rep.Source)
		if rep.Images == 0 && len(rep.Failed) == 0 {
			msg = "Every image has labels or is skipped, so there was nothing to run on: choose this image, the next N or every image."
		}
		if rep.Dropped > 0 {
			msg += fmt.Sprintf(" %s of classes you chose to drop were left out.", ops.Plural(rep.Dropped, "box"))
		}
		if len(rep.ClassesCreated) > 0 {
			msg += " New classes: " + strings.Join(rep.ClassesCreated, ", ") + "."
		}
		if len(rep.Failed) > 0 {
			msg += fmt.Sprintf(" %s could not be read: %s", ops.Plural(len(rep.Failed), "image"), rep.Failed[0])
		}
		dialog.ShowInformation("Suggestions from "+m.Path, msg, u.win)
	})
}
