package gui

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/project"
)

// dupIoUPref keeps the duplicate warning's IoU between sessions.
const dupIoUPref = "duplicateIoU"

// overlapChoice is one answer to an overlap question.
type overlapChoice struct {
	label string
	do    func()
}

// overlapQuestion asks what to do with a box that nearly repeats one of
// the person's own: two boxes on one object both go into training.
type overlapQuestion struct {
	message string
	choices []overlapChoice
	d       dialog.Dialog
}

// choose answers the question with the choice of that label.
func (q *overlapQuestion) choose(label string) bool {
	for _, c := range q.choices {
		if c.label == label {
			q.d.Hide()
			c.do()
			return true
		}
	}
	return false
}

// askOverlap shows the question; Cancel (or Esc) does nothing.
func (u *ui) askOverlap(title, message string, choices ...overlapChoice) {
	q := &overlapQuestion{message: message, choices: choices}
	text := widget.NewLabel(message)
	text.Wrapping = fyne.TextWrapWord
	buttons := container.NewHBox()
	for i, c := range choices {
		b := widget.NewButton(c.label, func() { q.choose(c.label) })
		if i == 0 {
			b.Importance = widget.HighImportance
		}
		buttons.Add(b)
	}
	q.d = dialog.NewCustom(title, "Cancel (Esc)", container.NewVBox(text, buttons), u.win)
	u.escClosable(q.d)
	q.d.SetOnClosed(func() {
		if u.escDialog == q.d {
			u.escDialog = nil
		}
		if u.overlapAsk == q {
			u.overlapAsk = nil
		}
	})
	u.overlapAsk = q
	q.d.Resize(fyne.NewSize(min(620, u.win.Canvas().Size().Width-40), 200))
	q.d.Show()
}

// ownCover is the person's own box on the image on screen that b of the
// class would repeat, if any (skip: b's own key).
func (u *ui) ownCover(b project.Box, classID, skip int64) (ops.Cover, bool) {
	if u.sess == nil || u.imageID == 0 {
		return ops.Cover{}, false
	}
	own, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		u.showError(err)
		return ops.Cover{}, false
	}
	return ops.BestCover(b, classID, own, u.dupIoU, skip)
}

// decideChecked accepts suggestion g, unless it repeats one of the
// person's own boxes: then it asks whether the suggestion replaces that
// box, both stay, or the suggestion is rejected.
func (u *ui) decideChecked(g project.Suggestion) {
	c, found := u.ownCover(g.Box, g.ClassID, 0)
	if !found {
		u.review("accept a suggestion", []project.Decision{decisionFor(g, true)})
		return
	}
	name := u.classBy[g.ClassID].Name
	img := u.imageID
	u.askOverlap("This suggestion repeats one of your boxes",
		fmt.Sprintf("The suggested %s overlaps your own %s box by IoU %.2f (the warning starts at %.2f: Suggestions ▸ Duplicate warning…). Two boxes on one object both go into the training set.", name, name, c.IoU, u.dupIoU),
		overlapChoice{"Reject the suggestion", func() {
			if u.imageID == img {
				u.review("reject a suggestion", []project.Decision{decisionFor(g, false)})
			}
		}},
		overlapChoice{"Replace my box", func() {
			if u.imageID != img {
				return
			}
			if u.review("accept a suggestion", []project.Decision{decisionFor(g, true)}) == nil {
				u.afterEdit(u.sess.Delete(context.Background(), img, "remove the box the suggestion replaced", c.Key))
				u.status.SetText("Accepted the suggestion in place of your box; Ctrl+Z twice undoes both.")
			}
		}},
		overlapChoice{"Keep both", func() {
			if u.imageID == img {
				u.review("accept a suggestion", []project.Decision{decisionFor(g, true)})
			}
		}},
	)
}

// checkDrawn asks about a box just drawn (key k) that repeats an own box.
func (u *ui) checkDrawn(k int64, b project.Box, classID int64) {
	c, found := u.ownCover(b, classID, k)
	if !found {
		return
	}
	name := u.classBy[classID].Name
	img := u.imageID
	u.askOverlap("The new box repeats one of yours",
		fmt.Sprintf("The %s you drew overlaps your own %s box by IoU %.2f (the warning starts at %.2f). Two boxes on one object both go into the training set.", name, name, c.IoU, u.dupIoU),
		overlapChoice{"Discard the new box", func() {
			if u.imageID == img {
				u.afterEdit(u.sess.Delete(context.Background(), img, "discard a repeated box", k))
			}
		}},
		overlapChoice{"Replace the old box", func() {
			if u.imageID == img {
				u.afterEdit(u.sess.Delete(context.Background(), img, "remove the box the new one replaced", c.Key))
				u.view.Select(k)
			}
		}},
		overlapChoice{"Keep both", func() {}},
	)
}

// coveredHere maps each pending suggestion on screen (as edited) that an
// own box already covers to that cover.
func (u *ui) coveredHere() map[int64]ops.Cover {
	if u.sess == nil || u.imageID == 0 || len(u.suggestions) == 0 {
		return map[int64]ops.Cover{}
	}
	own, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		return map[int64]ops.Cover{}
	}
	return u.coveredBy(own)
}

// coveredBy is coveredHere with the person's boxes on screen given.
func (u *ui) coveredBy(own map[int64]project.Label) map[int64]ops.Cover {
	out := map[int64]ops.Cover{}
	for _, g := range u.suggestions {
		g, _ = u.suggestion(g.ID)
		if c, ok := ops.BestCover(g.Box, g.ClassID, own, u.dupIoU, 0); ok {
			out[g.ID] = c
		}
	}
	return out
}

// coveredInProject are the pending suggestions of the whole project that
// the person's own labels already cover, with the edits made on screen.
func (u *ui) coveredInProject() ([]project.Suggestion, error) {
	ctx := context.Background()
	if err := u.sess.Flush(ctx); err != nil {
		return nil, fmt.Errorf("your last edits are not saved yet: %w", err)
	}
	gs, err := u.st.Suggestions(ctx, project.SuggestionFilter{State: project.SuggestionPending})
	if err != nil {
		return nil, err
	}
	for i, g := range gs {
		if e, ok := u.suggestionEdits[g.ID]; ok {
			gs[i] = e
		}
	}
	own, err := u.st.Labels(ctx, project.LabelFilter{AnnotatorID: u.me.ID})
	if err != nil {
		return nil, err
	}
	cov := ops.CoveredSuggestions(gs, own, u.dupIoU)
	var out []project.Suggestion
	for _, g := range gs {
		if _, ok := cov[g.ID]; ok {
			out = append(out, g)
		}
	}
	return out, nil
}

// askRejectCovered rejects, as one undoable step, every pending suggestion
// that one of the person's own boxes already covers.
func (u *ui) askRejectCovered() {
	if !u.haveProject() || !u.needAnnotator() {
		return
	}
	gs, err := u.coveredInProject()
	if err != nil {
		u.showError(err)
		return
	}
	if len(gs) == 0 {
		dialog.ShowInformation("Nothing to reject", fmt.Sprintf("No pending suggestion overlaps one of %s's boxes of its class by IoU %.2f or more.", u.me.Name, u.dupIoU), u.win)
		return
	}
	images := map[int64]bool{}
	for _, g := range gs {
		images[g.ImageID] = true
	}
	dialog.ShowConfirm("Reject covered suggestions",
		fmt.Sprintf("Reject %s on %s that %s's own boxes of the same class already cover (IoU ≥ %.2f)? Ctrl+Z undoes it.", ops.Plural(len(gs), "pending suggestion"), ops.Plural(len(images), "image"), u.me.Name, u.dupIoU),
		func(ok bool) {
			if ok {
				if err := u.rejectCovered(gs); err != nil {
					u.showError(err)
				}
			}
		}, u.win)
}

// rejectCovered rejects gs as one step and brings the screen up to date.
func (u *ui) rejectCovered(gs []project.Suggestion) error {
	if err := u.mayDecide(); err != nil {
		return err
	}
	ds := make([]project.Decision, len(gs))
	for i, g := range gs {
		ds[i] = decisionFor(g, false)
	}
	if err := u.sess.Decide(context.Background(), u.imageID, fmt.Sprintf("reject %s covered by own boxes", ops.Plural(len(ds), "suggestion")), ds); err != nil {
		return err
	}
	if err := u.reload(); err != nil {
		return err
	}
	u.afterReview(len(ds), nil)
	return nil
}

// askDupIoU sets the overlap at which the duplicate warning starts.
func (u *ui) askDupIoU() {
	e := widget.NewEntry()
	e.SetText(strconv.FormatFloat(u.dupIoU, 'g', 3, 64))
	dialog.ShowForm("Duplicate warning", "Set", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Ask when a box overlaps one of my own of its class by IoU ≥", e)}, func(ok bool) {
		if !ok {
			return
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(e.Text), 64)
		if err != nil || !(v > 0 && v <= 1) {
			dialog.ShowError(fmt.Errorf("the IoU must be a number above 0 and at most 1, not %q", e.Text), u.win)
			return
		}
		u.dupIoU = v
		u.app.Preferences().SetFloat(dupIoUPref, v)
		u.refreshBoxes()
	}, u.win)
}
