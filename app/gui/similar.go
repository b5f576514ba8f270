package gui

import (
	"context"
	"fmt"
	"image"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest"
	"boxwright/suggest/exemplar"
)

// similarFloor is the lowest score a search keeps, so that the threshold
// can be lowered afterwards without searching again.
const similarFloor = 0.4

// similarRun is the last exemplar search, kept for the live threshold.
type similarRun struct {
	classID int64
	images  []int64
	found   []suggest.Proposal
	note    string // which scales were left out, "" when none
}

// similarScales reads the dialog's scales and keeps those that make sense
// for the examples ex, on an image of size exSize, searched in ims; note
// says which were left out and why ("" when none). A wrong entry gets an
// error that gives the scales that make sense.
func similarScales(text string, rotations bool, ex []project.Box, exSize image.Point, ims []project.Image) (scales []float64, note string, err error) {
	sc, parseErr := exemplar.ParseScales(text)
	plan, planErr := exemplar.PlanScales(exemplar.Options{Scales: sc, Rotations: rotations}, ex, exSize, exemplar.LargestImage(ims))
	switch {
	case parseErr != nil && planErr == nil:
		return nil, "", fmt.Errorf("find similar objects: %w; for these examples give %s", parseErr, plan.Range())
	case parseErr != nil:
		return nil, "", fmt.Errorf("find similar objects: %w", parseErr)
	case planErr != nil:
		return nil, "", fmt.Errorf("find similar objects, scales %s: %w", text, planErr)
	}
	return plan.Searched, plan.Summary(), nil
}

// askFindSimilar searches for objects like the selected box (or all the
// person's boxes of its class on this image).
func (u *ui) askFindSimilar() {
	if !u.haveProject() || !u.needAnnotator() {
		return
	}
	key := u.view.Selected()
	boxes, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		u.showError(fmt.Errorf("find similar objects: reading your boxes on this image: %w", err))
		return
	}
	sel, ok := boxes[key]
	if !ok {
		dialog.ShowInformation("Find similar objects", "Select one of your boxes first: it is the example the search looks for.", u.win)
		return
	}
	pyr := u.view.Image()
	if pyr == nil {
		return
	}
	which := widget.NewRadioGroup([]string{"the selected box", "all my boxes of this class on this image"}, nil)
	which.SetSelected("the selected box")
	where := widget.NewRadioGroup([]string{"this image", "the next images", "the whole project"}, nil)
	where.SetSelected("this image")
	next := widget.NewEntry()
	next.SetText("10")
	feature := widget.NewSelect([]string{"gray", "gradient", "color"}, nil)
	feature.SetSelected("gray")
	rotations := widget.NewCheck("Also turned by 90°, 180°, 270° (top-down images)", nil)
	scales := widget.NewEntry()
	scales.SetText("0.8:1.25:5")
	thr := widget.NewSlider(similarFloor, 0.95)
	thr.Step = 0.01
	thr.SetValue(0.6)
	thrLabel := widget.NewLabel("0.60")
	thr.OnChanged = func(v float64) { thrLabel.SetText(fmt.Sprintf("%.2f", v)) }
	cls := u.classBy[sel.ClassID]
	d := dialog.NewForm("Find objects like this "+cls.Name, "Search", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Examples", which),
		widget.NewFormItem("Search", where),
		widget.NewFormItem("Next images", next),
		widget.NewFormItem("Compare", feature),
		widget.NewFormItem("", rotations),
		widget.NewFormItem("Scales (from:to:steps)", scales),
		widget.NewFormItem("Threshold", container.NewBorder(nil, nil, nil, thrLabel, thr)),
	}, func(ok bool) {
		if !ok {
			return
		}
		feat, _ := exemplar.ParseFeature(feature.Selected)
		ex := []project.Box{sel.Box}
		if which.Selected != "the selected box" {
			ex = nil
			for _, l := range boxes {
				if l.ClassID == sel.ClassID {
					ex = append(ex, l.Box)
				}
			}
		}
		var ims []project.Image
		switch where.Selected {
		case "this image":
			ims = []project.Image{u.images[u.selected]}
		case "the next images":
			n, err := strconv.Atoi(strings.TrimSpace(next.Text))
			if err != nil || n < 1 {
				u.showError(fmt.Errorf("\"next images\" must be a whole number of at least 1"))
				return
			}
			r := u.nav.rowOf(u.selected)
			for k := 0; k <= n && r+k < len(u.nav.shown); k++ {
				ims = append(ims, u.images[u.nav.shown[r+k]])
			}
		default:
			ims = append(ims, u.images...)
		}
		exImg := pyr.Level(0)
		sc, note, err := similarScales(scales.Text, rotations.Checked, ex, exImg.Bounds().Size(), ims)
		if err != nil {
			u.showError(err)
			return
		}
		u.findSimilar(sel.ClassID, ex, exImg, ims, exemplar.Options{Threshold: similarFloor, Scales: sc, Rotations: rotations.Checked, Feature: feat}, thr.Value, note)
	}, u.win)
	d.Resize(fyne.NewSize(560, 520))
	d.Show()
}

// findSimilar runs the search as a background job, which the job's Cancel
// button stops within moments, and stores what scores at least threshold
// as pending suggestions of source "exemplar"; note (which scales were left
// out) goes on the results panel.
func (u *ui) findSimilar(classID int64, ex []project.Box, exImg image.Image, ims []project.Image, opt exemplar.Options, threshold float64, note string) {
	st := u.st
	m := &exemplar.Matcher{ClassID: classID, Exemplars: ex, ExemplarImage: exImg, ExemplarImageID: u.imageID, Options: opt,
		Load: func(ctx context.Context, im project.Image) (image.Image, error) {
			if p, err := u.cache.Get(ctx, im.ID, st.ImagePath(im)); err == nil {
				return p.Level(0), nil
			}
			return ops.DecodeProjectImage(st, im)
		},
		Existing: func(imageID int64) ([]project.Box, error) {
			ls, err := st.Labels(context.Background(), project.LabelFilter{ImageID: imageID, ClassID: classID})
			var out []project.Box
			for _, l := range ls {
				out = append(out, l.Box)
			}
			return out, err
		}}
	classes := u.classes
	var found []suggest.Proposal
	u.runJob("Looking for similar objects", func(ctx context.Context, progress func(float64)) error {
		var err error
		found, err = m.Suggest(ctx, ims, classes, func(done, total int) { progress(float64(done) / float64(total)) })
		return err
	}, func() {
		run := &similarRun{classID: classID, found: found, note: note}
		for _, im := range ims {
			run.images = append(run.images, im.ID)
		}
		u.similar = run
		n, err := u.applySimilarThreshold(threshold)
		if err != nil {
			u.showError(err)
			return
		}
		u.showSimilarPanel(threshold, n)
	})
}

// applySimilarThreshold stores the last search's finds scoring at least
// threshold, replacing its earlier pending suggestions on those images.
func (u *ui) applySimilarThreshold(threshold float64) (int, error) {
	run := u.similar
	if run == nil || u.st == nil {
		return 0, nil
	}
	var gs []project.Suggestion
	for _, p := range run.found {
		if p.Score >= threshold {
			gs = append(gs, project.Suggestion{ImageID: p.ImageID, ClassID: run.classID, Box: p.Box, Score: ops.ClampScore(p.Score), Source: exemplar.Source, State: project.SuggestionPending})
		}
	}
	if _, err := u.st.ReplaceSuggestionsOn(context.Background(), exemplar.Source, run.images, gs); err != nil {
		return 0, err
	}
	u.reloadSuggestions()
	u.refreshBoxes()
	return len(gs), nil
}

// showSimilarPanel is a small window whose slider moves the threshold,
// with the suggestions on screen following it.
func (u *ui) showSimilarPanel(threshold float64, n int) {
	if u.similarWin != nil {
		u.similarWin.Close()
	}
	w := u.app.NewWindow("Boxwright — similar objects")
	count := widget.NewLabel("")
	say := func(n int, t float64) {
		count.SetText(fmt.Sprintf("%s at NCC ≥ %.2f on %s, pending review as source %q.", ops.Plural(n, "suggestion"), t, ops.Plural(len(u.similar.images), "image"), exemplar.Source))
	}
	say(n, threshold)
	s := widget.NewSlider(similarFloor, 0.95)
	s.Step = 0.01
	s.SetValue(threshold)
	s.OnChangeEnded = func(v float64) {
		n, err := u.applySimilarThreshold(v)
		if err != nil {
			dialog.ShowError(err, w)
			return
		}
		say(n, v)
	}
	box := container.NewVBox(
		widget.NewLabel("Move the threshold: the suggestions follow. Review them as any others (A, Z, Shift+A)."),
		s, count)
	if u.similar.note != "" {
		note := widget.NewLabel(strings.ToUpper(u.similar.note[:1]) + u.similar.note[1:] + ".")
		note.Wrapping = fyne.TextWrapWord
		box.Add(note)
	}
	box.Add(widget.NewButton("Close", w.Close))
	w.SetContent(container.NewPadded(box))
	w.SetOnClosed(func() { u.similarWin = nil })
	h := float32(180)
	if u.similar.note != "" {
		h = 260
	}
	w.Resize(fyne.NewSize(520, h))
	u.similarWin = w
	w.Show()
}
