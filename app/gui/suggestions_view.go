package gui

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
)

// Suggestions share the view with labels; their keys lie far below the
// negative keys of other annotators' labels.
const suggestionKeyBase = int64(1) << 40

func suggestionKey(id int64) int64 { return -suggestionKeyBase - id }

func suggestionOf(key int64) (int64, bool) {
	if key <= -suggestionKeyBase {
		return -key - suggestionKeyBase, true
	}
	return 0, false
}

// defaultSuggestionThreshold is the score above which "accept all on this
// image" takes suggestions until the person sets another.
const defaultSuggestionThreshold = 0.5

// loadSuggestions reads the pending suggestions of the image on screen.
func (u *ui) loadSuggestions() {
	u.suggestions, u.suggestionEdits = nil, map[int64]project.Suggestion{}
	if u.st == nil || u.imageID == 0 {
		return
	}
	gs, err := u.st.Suggestions(context.Background(), project.SuggestionFilter{ImageID: u.imageID, State: project.SuggestionPending})
	if err != nil {
		u.showError(err)
		return
	}
	u.suggestions = gs
}

// reloadSuggestions reads the pending suggestions of the image on screen
// again and moves the image list's pending count by the change, never
// below zero. Every change of suggestions on screen goes through it.
func (u *ui) reloadSuggestions() {
	before := len(u.suggestions)
	u.loadSuggestions()
	c, ok := u.perImg[u.imageID]
	if !ok && len(u.suggestions) == before {
		return
	}
	c.Pending = max(0, c.Pending+len(u.suggestions)-before)
	u.perImg[u.imageID] = c
	u.updateSummary()
}

// suggestion is a pending suggestion as the person has edited it so far.
func (u *ui) suggestion(id int64) (project.Suggestion, bool) {
	if g, ok := u.suggestionEdits[id]; ok {
		return g, true
	}
	for _, g := range u.suggestions {
		if g.ID == id {
			return g, true
		}
	}
	return project.Suggestion{}, false
}

// suggestionItems are the pending suggestions as view items.
// own are the person's boxes on screen, for the covered mark (refreshBoxes
// has just read them; reading again would cost a query per edit).
func (u *ui) suggestionItems(own map[int64]project.Label) []canvas.Item {
	if !u.showSuggestions.Checked {
		return nil
	}
	var out []canvas.Item
	covered := u.coveredBy(own)
	for _, g := range u.suggestions {
		g, _ = u.suggestion(g.ID)
		c := u.classBy[g.ClassID]
		caption := fmt.Sprintf("suggested %s %.2f", c.Name, g.Score)
		if _, edited := u.suggestionEdits[g.ID]; edited {
			caption += " (edited)"
		}
		cv, isCovered := covered[g.ID]
		if isCovered {
			caption += fmt.Sprintf(" · covered by yours (IoU %.2f)", cv.IoU)
		}
		out = append(out, canvas.Item{Key: suggestionKey(g.ID), Box: g.Box, Color: c.Color, Caption: caption, Short: fmt.Sprintf("%.2f", g.Score), Suggestion: true, Covered: isCovered})
	}
	return out
}

// editSuggestion keeps a change to a suggestion's box or class in memory
// until it is accepted (then as a corrected label) or rejected.
func (u *ui) editSuggestion(id int64, f func(*project.Suggestion)) {
	g, ok := u.suggestion(id)
	if !ok {
		return
	}
	f(&g)
	u.suggestionEdits[id] = g
	u.refreshBoxes()
}

func (u *ui) selectedSuggestion() (project.Suggestion, bool) {
	id, ok := suggestionOf(u.view.Selected())
	if !ok {
		return project.Suggestion{}, false
	}
	return u.suggestion(id)
}

// decisionFor is the decision to accept g as it stands now.
func decisionFor(g project.Suggestion, accept bool) project.Decision {
	d := project.Decision{SuggestionID: g.ID, Accept: accept}
	if accept {
		d.Box, d.ClassID = g.Box, g.ClassID
	}
	return d
}

func (u *ui) acceptSuggestion() {
	if g, ok := u.selectedSuggestion(); ok && u.needAnnotator() {
		u.decideChecked(g)
	}
}

func (u *ui) rejectSuggestion() {
	if g, ok := u.selectedSuggestion(); ok && u.needAnnotator() {
		u.review("reject a suggestion", []project.Decision{decisionFor(g, false)})
	}
}

// acceptAllAbove accepts every pending suggestion on the image with a
// score at or above the threshold; those that repeat one of the person's
// own boxes are asked about first.
func (u *ui) acceptAllAbove() {
	if !u.needAnnotator() {
		return
	}
	covered := u.coveredHere()
	var fresh, repeats []project.Decision
	for _, g := range u.suggestions {
		g, _ = u.suggestion(g.ID)
		if g.Score < u.suggestionThreshold {
			continue
		}
		if _, ok := covered[g.ID]; ok {
			repeats = append(repeats, decisionFor(g, true))
		} else {
			fresh = append(fresh, decisionFor(g, true))
		}
	}
	if len(fresh)+len(repeats) == 0 {
		u.status.SetText(fmt.Sprintf("No pending suggestion on this image scores %.2f or more.", u.suggestionThreshold))
		return
	}
	what := func(n int) string {
		return fmt.Sprintf("accept %s scoring ≥ %.2f", ops.Plural(n, "suggestion"), u.suggestionThreshold)
	}
	if len(repeats) == 0 {
		u.review(what(len(fresh)), fresh)
		return
	}
	img := u.imageID
	rejects := make([]project.Decision, len(repeats))
	for i, d := range repeats {
		rejects[i] = project.Decision{SuggestionID: d.SuggestionID}
	}
	u.askOverlap("Some suggestions repeat your boxes",
		fmt.Sprintf("%s of the %d scoring %.2f or more overlap one of your own boxes of their class by IoU %.2f or more. Two boxes on one object both go into the training set.",
			ops.Plural(len(repeats), "suggestion"), len(fresh)+len(repeats), u.suggestionThreshold, u.dupIoU),
		overlapChoice{fmt.Sprintf("Accept %d, reject the %d repeats", len(fresh), len(repeats)), func() {
			if u.imageID == img {
				u.review(fmt.Sprintf("accept %d, reject %d repeating own boxes", len(fresh), len(repeats)), append(append([]project.Decision(nil), fresh...), rejects...))
			}
		}},
		overlapChoice{fmt.Sprintf("Accept %d, leave the repeats pending", len(fresh)), func() {
			if u.imageID == img && len(fresh) > 0 {
				u.review(what(len(fresh)), fresh)
			}
		}},
		overlapChoice{"Accept all, keep both", func() {
			if u.imageID == img {
				u.review(what(len(fresh)+len(repeats)), append(append([]project.Decision(nil), fresh...), repeats...))
			}
		}},
	)
}

// review stores decisions as one undoable step and redraws.
func (u *ui) review(what string, ds []project.Decision) error {
	if err := u.mayDecide(); err != nil {
		return err
	}
	err := u.sess.Decide(context.Background(), u.imageID, what, ds)
	u.afterReview(len(ds), err)
	return err
}

func (u *ui) afterReview(n int, err error) {
	if err != nil {
		dialog.ShowError(err, u.win)
	}
	u.reloadSuggestions()
	u.recount()
	u.refreshBoxes()
	u.updateUndo()
	if err == nil {
		u.savedNow()
		u.status.SetText(fmt.Sprintf("Decided %s; Ctrl+Z undoes it.", ops.Plural(n, "suggestion")))
	}
}

// askSuggestionThreshold sets the score used by "accept all on this image".
func (u *ui) askSuggestionThreshold() {
	e := widget.NewEntry()
	e.SetText(strconv.FormatFloat(u.suggestionThreshold, 'g', 3, 64))
	dialog.ShowForm("Suggestion score threshold", "Set", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Accept all on an image (Shift+A) takes scores ≥", e)}, func(ok bool) {
		if !ok {
			return
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(e.Text), 64)
		if err != nil || v < 0 || v > 1 {
			dialog.ShowError(fmt.Errorf("the threshold must be a number from 0 to 1, not %q", e.Text), u.win)
			return
		}
		u.suggestionThreshold = v
	}, u.win)
}

// askBulkReview accepts or rejects many suggestions at once, after
// saying how many it touches.
func (u *ui) askBulkReview() {
	if !u.haveProject() || !u.needAnnotator() {
		return
	}
	classes := []string{"every class"}
	for _, c := range u.classes {
		classes = append(classes, c.Name)
	}
	action := widget.NewRadioGroup([]string{"accept those scoring at least", "reject those scoring below"}, nil)
	action.SetSelected("accept those scoring at least")
	score := widget.NewEntry()
	score.SetText(strconv.FormatFloat(u.suggestionThreshold, 'g', 3, 64))
	class := widget.NewSelect(classes, nil)
	class.SetSelected("every class")
	scope := widget.NewRadioGroup([]string{"this image", "the whole project"}, nil)
	scope.SetSelected("the whole project")
	preview := widget.NewLabel("")
	skipCovered := widget.NewCheck("leave pending those my own boxes already cover", nil)
	skipCovered.SetChecked(true)
	query := func() (project.SuggestionQuery, error) {
		v, err := strconv.ParseFloat(strings.TrimSpace(score.Text), 64)
		if err != nil || v < 0 || v > 1 {
			return project.SuggestionQuery{}, fmt.Errorf("the score must be a number from 0 to 1")
		}
		q := project.SuggestionQuery{State: project.SuggestionPending}
		if action.Selected == "accept those scoring at least" {
			q.MinScore = v
		} else {
			q.MaxScore = v
			if v == 0 {
				q.MaxScore = -1 // below 0: nothing
			}
		}
		for _, c := range u.classes {
			if c.Name == class.Selected {
				q.ClassID = c.ID
			}
		}
		if scope.Selected == "this image" {
			q.ImageID = u.imageID
		}
		return q, nil
	}
	update := func() {
		q, err := query()
		if err != nil {
			preview.SetText(err.Error())
			return
		}
		if q.MaxScore < 0 {
			preview.SetText("This touches no suggestion.")
			return
		}
		n, err := u.st.CountSuggestions(context.Background(), q)
		if err != nil {
			preview.SetText(err.Error())
			return
		}
		preview.SetText(fmt.Sprintf("This touches %s (pending ones only). Ctrl+Z undoes it.", ops.Plural(n, "suggestion")))
	}
	action.OnChanged = func(string) { update() }
	score.OnChanged = func(string) { update() }
	class.OnChanged = func(string) { update() }
	scope.OnChanged = func(string) { update() }
	update()
	d := dialog.NewForm("Accept or reject many suggestions", "Do it", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Action", action), widget.NewFormItem("Score", score), widget.NewFormItem("Class", class),
		widget.NewFormItem("Where", scope), widget.NewFormItem("Repeats", skipCovered), widget.NewFormItem("", preview)}, func(ok bool) {
		if !ok {
			return
		}
		q, err := query()
		if err != nil {
			u.showError(err)
			return
		}
		if q.MaxScore < 0 {
			return
		}
		accept := action.Selected == "accept those scoring at least"
		if err := u.bulkReview(q, accept, accept && skipCovered.Checked); err != nil {
			u.showError(err)
		}
	}, u.win)
	d.Resize(fyne.NewSize(520, 380))
	d.Show()
}

// bulkReview decides every suggestion the query selects, as one step;
// skipCovered leaves those an own box already covers pending.
func (u *ui) bulkReview(q project.SuggestionQuery, accept, skipCovered bool) error {
	if err := u.mayDecide(); err != nil {
		return err
	}
	gs, err := u.st.QuerySuggestions(context.Background(), q)
	if err != nil {
		return err
	}
	for i, g := range gs {
		if e, ok := u.suggestionEdits[g.ID]; ok {
			gs[i] = e
		}
	}
	skipped := 0
	if skipCovered {
		if err := u.sess.Flush(context.Background()); err != nil {
			return fmt.Errorf("your last edits are not saved yet: %w", err)
		}
		own, err := u.st.Labels(context.Background(), project.LabelFilter{AnnotatorID: u.me.ID})
		if err != nil {
			return err
		}
		cov := ops.CoveredSuggestions(gs, own, u.dupIoU)
		kept := gs[:0]
		for _, g := range gs {
			if _, ok := cov[g.ID]; !ok {
				kept = append(kept, g)
			}
		}
		skipped, gs = len(gs)-len(kept), kept
	}
	ds := make([]project.Decision, len(gs))
	for i, g := range gs {
		ds[i] = decisionFor(g, accept)
	}
	verb := "reject"
	if accept {
		verb = "accept"
	}
	err = u.sess.Decide(context.Background(), u.imageID, fmt.Sprintf("%s %s", verb, ops.Plural(len(ds), "suggestion")), ds)
	if err != nil {
		return err
	}
	if q.ImageID == 0 {
		if err := u.reload(); err != nil {
			return err
		}
	}
	u.afterReview(len(ds), nil)
	if skipped > 0 {
		u.status.SetText(fmt.Sprintf("Decided %s; left %d pending that your own boxes already cover. Ctrl+Z undoes it.", ops.Plural(len(ds), "suggestion"), skipped))
	}
	return nil
}

// suggestionsChanged brings the main window up to date after decisions
// made in a review window: the suggestions and labels of the image on
// screen (its counts follow on the next reload).
func (u *ui) suggestionsChanged() {
	if u.st == nil || u.imageID == 0 {
		return
	}
	if u.sess != nil {
		u.sess.Forget(u.imageID)
	}
	u.reloadSuggestions()
	u.loadOthers()
	u.recount()
	u.refreshBoxes()
}
