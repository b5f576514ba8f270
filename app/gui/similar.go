package gui

import (
	"cmp"
	"context"
	"fmt"
	"image"
	"math"
	"slices"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
	"boxwright/suggest"
	"boxwright/suggest/exemplar"
)

// similarFloor is the lowest score a search keeps, so that the threshold
// can be lowered afterwards without searching again.
const similarFloor = 0.4

// similarMaxPerImage is the most matches one image gives, best first: a
// search over a busy texture (wave glints) finds thousands, and a review
// queue of thousands helps nobody. The panel says when it cut some off.
const similarMaxPerImage = exemplar.DefaultMaxResults

// The choices of the panel's radio groups and feature list.
const (
	similarSelected = "the selected box"
	similarAllMine  = "all my boxes of this class on this image"
	similarThis     = "this image"
	similarNext     = "the next images"
	similarAll      = "the whole project"
)

// similarFeatures are the "Compare" choices, in the order shown.
var similarFeatures = []exemplar.Feature{exemplar.FeatureGray, exemplar.FeatureGradient, exemplar.FeatureColor}

// similarFeatureName is a feature as the panel names it.
func similarFeatureName(f exemplar.Feature) string {
	switch f {
	case exemplar.FeatureGradient:
		return "edges (gradient)"
	case exemplar.FeatureColor:
		return "colour"
	}
	return "gray"
}

// similarScoreHint says what a feature's score measures and where its
// default comes from.
func similarScoreHint(f exemplar.Feature) string {
	var what string
	switch f {
	case exemplar.FeatureGradient:
		what = "Score: gradient NCC, the zero-mean normalised cross-correlation of the edge strength (Sobel gradient magnitude); it ignores flat colour and follows outlines."
	case exemplar.FeatureColor:
		what = "Score: colour NCC, the mean of the zero-mean normalised cross-correlations of the red, green and blue planes."
	default:
		what = "Score: NCC, the zero-mean normalised cross-correlation of the gray values."
	}
	return fmt.Sprintf("%s 1 is the same pattern, 0 no likeness. Default %.2f, chosen on the demo for few false matches; lower it to find more, raise it for fewer.",
		what, exemplar.DefaultThresholdFor(f))
}

// similarRun is the find-similar panel: its settings, the last search and
// its preview, which nothing stores until Keep.
type similarRun struct {
	u       *ui
	w       fyne.Window
	classID int64
	imageID int64             // the exemplars' image
	sel     project.Box       // the selected box
	mine    []project.Box     // the person's boxes of the class on that image
	pyr     *canvas.Pyramid   // the exemplars' image, decoded
	images  []int64           // the images last searched
	names   map[int64]string  // image file names, for the list
	result  *exemplar.Result  // the last search; nil before one or after Discard
	note    string            // which scales were left out, "" when none
	rows    []similarImageRow // the preview, one row per image with hits
	kept    bool              // the preview as shown is stored

	which, where       *widget.RadioGroup
	next, scales       *widget.Entry
	feature            *widget.Select
	rotations          *widget.Check
	thr                *widget.Slider
	thrName, thrValue  *widget.Label
	hint, status, cap_ *widget.Label
	noteLabel          *widget.Label
	list               *widget.List
	search             *widget.Button
	keep, discard      *widget.Button
	top                *fyne.Container // settings and counts, laid out again as notes come and go
}

// similarImageRow is one image of the preview.
type similarImageRow struct {
	imageID int64
	n       int
	best    float64
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

// askFindSimilar opens the find-similar panel for the selected box: a
// window of its own, so that the labelling screen's menu, toolbar and keys
// stay free while it is open.
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
	r := &similarRun{u: u, classID: sel.ClassID, imageID: u.imageID, sel: sel.Box, pyr: pyr, names: map[int64]string{}}
	for _, l := range boxes {
		if l.ClassID == sel.ClassID {
			r.mine = append(r.mine, l.Box)
		}
	}
	// A fixed order: the exemplars' order names them in the matches.
	slices.SortFunc(r.mine, func(a, b project.Box) int { return cmp.Or(cmp.Compare(a.Y0, b.Y0), cmp.Compare(a.X0, b.X0)) })
	for _, im := range u.images {
		r.names[im.ID] = im.Path
	}
	u.showSimilarPanel(r)
}

// showSimilarPanel opens the panel's window for r, in place of one already
// open, and hands the keyboard back to the labelling screen: the panel
// takes it only when a person clicks into it.
func (u *ui) showSimilarPanel(r *similarRun) {
	if u.similarWin != nil {
		u.similarWin.Close()
	}
	w := u.app.NewWindow("Boxwright — similar objects")
	r.w = w
	r.build()
	w.SetOnClosed(func() {
		if u.similar == r {
			u.similar, u.similarWin = nil, nil
		}
	})
	w.Resize(fyne.NewSize(640, 760))
	u.similar, u.similarWin = r, w
	w.Show()
	u.win.RequestFocus()
}

// build lays out the panel: the settings, Search, then the preview.
func (r *similarRun) build() {
	u := r.u
	cls := u.classBy[r.classID]
	r.which = widget.NewRadioGroup([]string{similarSelected, similarAllMine}, nil)
	r.which.SetSelected(similarSelected)
	r.where = widget.NewRadioGroup([]string{similarThis, similarNext, similarAll}, nil)
	r.where.SetSelected(similarThis)
	r.next = widget.NewEntry()
	r.next.SetText("10")
	var names []string
	for _, f := range similarFeatures {
		names = append(names, similarFeatureName(f))
	}
	r.feature = widget.NewSelect(names, nil)
	r.rotations = widget.NewCheck("Also turned by 90°, 180°, 270° (top-down images)", nil)
	r.scales = widget.NewEntry()
	r.scales.SetText("0.8:1.25:5")
	r.thr = widget.NewSlider(similarFloor, 0.95)
	r.thr.Step = 0.01
	r.thrName = widget.NewLabelWithStyle("", fyne.TextAlignTrailing, fyne.TextStyle{Bold: true})
	r.thrValue = widget.NewLabel("")
	r.hint = widget.NewLabel("")
	r.hint.Wrapping = fyne.TextWrapWord
	r.thr.OnChanged = func(v float64) {
		r.thrValue.SetText(fmt.Sprintf("%.2f", v))
		r.kept = false
		r.showPreview()
	}
	r.feature.OnChanged = func(string) {
		f := r.selectedFeature()
		r.thrName.SetText(f.ScoreName() + " ≥")
		r.hint.SetText(similarScoreHint(f))
		r.thr.SetValue(exemplar.DefaultThresholdFor(f))
		if r.result != nil {
			// The preview's scores are of another feature.
			r.result, r.rows = nil, nil
			r.status.SetText("The comparison changed: search again.")
			r.showPreview()
		}
	}
	r.status = widget.NewLabel("Nothing searched yet.")
	r.status.Wrapping = fyne.TextWrapWord
	r.cap_ = widget.NewLabel("")
	r.cap_.Wrapping = fyne.TextWrapWord
	r.cap_.Hide()
	r.noteLabel = widget.NewLabel("")
	r.noteLabel.Wrapping = fyne.TextWrapWord
	r.noteLabel.Hide()
	r.list = widget.NewList(func() int { return len(r.rows) },
		func() fyne.CanvasObject { return widget.NewLabel("harbour-000.jpg: 000 matches, best 0.00") },
		func(i widget.ListItemID, o fyne.CanvasObject) {
			row := r.rows[i]
			o.(*widget.Label).SetText(fmt.Sprintf("%s: %s, best %.2f", r.names[row.imageID], ops.Plural(row.n, "match"), row.best))
		})
	r.list.OnSelected = func(i widget.ListItemID) {
		if i < len(r.rows) {
			u.selectImageID(r.rows[i].imageID)
		}
	}
	r.search = widget.NewButton("Search", r.startSearch)
	r.search.Importance = widget.HighImportance
	r.keep = widget.NewButton("Keep as suggestions", r.keepPreview)
	r.discard = widget.NewButton("Discard", r.discardPreview)
	r.feature.SetSelected(similarFeatureName(exemplar.DefaultFeature))

	label := func(s string) fyne.CanvasObject {
		return widget.NewLabelWithStyle(s, fyne.TextAlignTrailing, fyne.TextStyle{Bold: true})
	}
	form := container.New(layout.NewFormLayout(),
		label("Examples"), r.which,
		label("Search"), r.where,
		label("Next images"), r.next,
		label("Compare"), r.feature,
		layout.NewSpacer(), r.rotations,
		label("Scales (from:to:steps)"), r.scales,
		r.thrName, container.NewBorder(nil, nil, nil, r.thrValue, r.thr),
	)
	r.top = container.NewVBox(
		widget.NewLabelWithStyle("Find objects like this "+cls.Name, fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		form, r.hint, container.NewHBox(layout.NewSpacer(), r.search),
		widget.NewSeparator(), r.status, r.cap_, r.noteLabel)
	bottom := container.NewHBox(r.discard, layout.NewSpacer(), r.keep)
	r.w.SetContent(withClose(r.w, container.NewPadded(container.NewBorder(r.top, container.NewPadded(bottom), nil, nil, r.list))))
	r.showPreview()
}

// selectedFeature is the feature chosen under "Compare".
func (r *similarRun) selectedFeature() exemplar.Feature {
	for _, f := range similarFeatures {
		if similarFeatureName(f) == r.feature.Selected {
			return f
		}
	}
	return exemplar.DefaultFeature
}

// startSearch reads the settings and runs the search.
func (r *similarRun) startSearch() {
	u := r.u
	ex := []project.Box{r.sel}
	if r.which.Selected != similarSelected {
		ex = r.mine
	}
	var ims []project.Image
	switch r.where.Selected {
	case similarThis:
		for _, im := range u.images {
			if im.ID == r.imageID {
				ims = append(ims, im)
			}
		}
	case similarNext:
		n, err := strconv.Atoi(strings.TrimSpace(r.next.Text))
		if err != nil || n < 1 {
			dialog.ShowError(fmt.Errorf("\"next images\" must be a whole number of at least 1"), r.w)
			return
		}
		row := -1
		for i, k := range u.nav.shown {
			if u.images[k].ID == r.imageID {
				row = i
			}
		}
		for k := 0; row >= 0 && k <= n && row+k < len(u.nav.shown); k++ {
			ims = append(ims, u.images[u.nav.shown[row+k]])
		}
	default:
		ims = append(ims, u.images...)
	}
	if len(ims) == 0 {
		dialog.ShowError(fmt.Errorf("find similar objects: the example's image is no longer in the list"), r.w)
		return
	}
	exImg := r.pyr.Level(0)
	sc, note, err := similarScales(r.scales.Text, r.rotations.Checked, ex, exImg.Bounds().Size(), ims)
	if err != nil {
		dialog.ShowError(err, r.w)
		return
	}
	opt := exemplar.Options{Threshold: similarFloor, Scales: sc, Rotations: r.rotations.Checked, Feature: r.selectedFeature(), MaxResults: similarMaxPerImage}
	u.findSimilar(r, ex, exImg, ims, opt, note)
}

// findSimilar runs the search as a background job, which the job's Cancel
// button stops within moments, and shows what it found in r's preview;
// note (which scales were left out) goes on the panel. Nothing is stored.
func (u *ui) findSimilar(r *similarRun, ex []project.Box, exImg image.Image, ims []project.Image, opt exemplar.Options, note string) {
	st := u.st
	classID := r.classID
	m := &exemplar.Matcher{ClassID: classID, Exemplars: ex, ExemplarImage: exImg, ExemplarImageID: r.imageID, Options: opt,
		Load: func(ctx context.Context, im project.Image) (image.Image, error) {
			if p, err := u.cache.Get(ctx, im.ID, fileOf(st, im)); err == nil {
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
	var res exemplar.Result
	u.runJob("Looking for similar objects", func(ctx context.Context, progress func(float64)) error {
		var err error
		res, err = m.Search(ctx, ims, classes, func(done, total int) { progress(float64(done) / float64(total)) })
		return err
	}, func() {
		r.images = r.images[:0]
		for _, im := range ims {
			r.images = append(r.images, im.ID)
		}
		r.result, r.note, r.kept = &res, note, false
		r.showPreview()
	})
}

// previewed is the last search's matches at the panel's threshold: what
// Keep stores.
func (r *similarRun) previewed() []suggest.Proposal {
	if r.result == nil {
		return nil
	}
	var out []suggest.Proposal
	for _, p := range r.result.Proposals {
		if p.Score >= r.thr.Value {
			out = append(out, p)
		}
	}
	return out
}

// showPreview brings the preview, its counts and buttons up to date with
// the last search and the threshold.
func (r *similarRun) showPreview() {
	if r.status == nil || r.list == nil || r.top == nil {
		return // still being built
	}
	// Notes shown or hidden change the panel's layout.
	defer r.w.Content().Refresh()
	if r.note != "" {
		r.noteLabel.SetText(strings.ToUpper(r.note[:1]) + r.note[1:] + ".")
		r.noteLabel.Show()
	} else {
		r.noteLabel.Hide()
	}
	hits := r.previewed()
	r.rows = r.rows[:0]
	at := map[int64]int{}
	for _, p := range hits {
		i, ok := at[p.ImageID]
		if !ok {
			i = len(r.rows)
			at[p.ImageID] = i
			r.rows = append(r.rows, similarImageRow{imageID: p.ImageID})
		}
		r.rows[i].n++
		r.rows[i].best = max(r.rows[i].best, p.Score)
	}
	r.list.UnselectAll()
	r.list.Refresh()
	r.keep.SetText(fmt.Sprintf("Keep %s as suggestions", thousands(len(hits))))
	r.cap_.Hide()
	switch {
	case r.result == nil:
		r.keep.SetText("Keep as suggestions")
		r.keep.Disable()
		r.discard.Disable()
		return
	case r.kept:
		r.status.SetText(fmt.Sprintf("Kept %s as pending suggestions of source %q. Review them as any others (A, Z, Shift+A); move the threshold and keep again to replace them.",
			thousands(len(hits)), exemplar.Source))
		r.keep.Disable()
		r.discard.Disable()
		return
	}
	r.status.SetText(fmt.Sprintf("%s at %s ≥ %.2f on %d of %s. Nothing is stored until you keep them.",
		plural(len(hits), "match"), r.selectedFeature().ScoreName(), r.thr.Value, len(r.rows), ops.Plural(len(r.images), "image")))
	if len(hits) == 0 && len(r.result.Proposals) > 0 {
		best := slices.MaxFunc(r.result.Proposals, func(a, b suggest.Proposal) int { return cmp.Compare(a.Score, b.Score) }).Score
		// Rounded down, so that the best is never shown at the threshold
		// it missed.
		r.status.SetText(fmt.Sprintf("No match at %s ≥ %.2f; the best scored %.2f. Nothing is stored; lower the threshold to see weaker matches.",
			r.selectedFeature().ScoreName(), r.thr.Value, math.Floor(best*100)/100))
	}
	if found := r.result.Found(r.thr.Value); found > len(hits) {
		r.cap_.SetText(fmt.Sprintf("Showing the best %s of %s matches: at most %d per image are kept. Raise the threshold for fewer, better ones.",
			thousands(len(hits)), thousands(found), r.result.MaxResults))
		r.cap_.Show()
	}
	if len(hits) > 0 {
		r.keep.Enable()
	} else {
		r.keep.Disable()
	}
	r.discard.Enable()
}

// keepPreview stores the previewed matches as pending suggestions of
// source "exemplar", in place of that source's pending suggestions on the
// images searched.
func (r *similarRun) keepPreview() {
	u := r.u
	if r.result == nil || u.st == nil {
		return
	}
	var gs []project.Suggestion
	for _, p := range r.previewed() {
		gs = append(gs, project.Suggestion{ImageID: p.ImageID, ClassID: r.classID, Box: p.Box, Score: ops.ClampScore(p.Score), Source: exemplar.Source, State: project.SuggestionPending})
	}
	if _, err := u.st.ReplaceSuggestionsOn(context.Background(), exemplar.Source, r.images, gs); err != nil {
		dialog.ShowError(fmt.Errorf("find similar objects: keeping %s: %w", ops.Plural(len(gs), "suggestion"), err), r.w)
		return
	}
	r.kept = true
	u.reloadSuggestions()
	u.refreshBoxes()
	r.showPreview()
}

// discardPreview forgets the last search; nothing was stored.
func (r *similarRun) discardPreview() {
	r.result, r.rows, r.kept = nil, nil, false
	r.showPreview()
	r.status.SetText("Discarded: nothing was stored.")
}

// plural is ops.Plural with the count written with thousands separators.
func plural(n int, word string) string {
	s := ops.Plural(n, word)
	return thousands(n) + s[len(strconv.Itoa(n)):]
}

// thousands writes n with commas between groups of three digits.
func thousands(n int) string {
	s := strconv.Itoa(n)
	neg := strings.HasPrefix(s, "-")
	s = strings.TrimPrefix(s, "-")
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	if neg {
		s = "-" + s
	}
	return s
}
