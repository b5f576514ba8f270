package gui

import (
	"context"
	"image"
	"math"
	"slices"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
	"boxwright/suggest/exemplar"
)

// openSimilar opens the demo as Ines, shows the first image with a box of
// Ines's of class (at least 2·MinTemplateSide on each side), selects it and
// opens the find-similar panel.
func openSimilar(t *testing.T, class string) (*ui, *similarRun, project.Image) {
	t.Helper()
	u, _ := openDemoAs(t, "Ines")
	ctx := context.Background()
	ines, err := u.st.AnnotatorByName(ctx, "Ines")
	if err != nil {
		t.Fatal(err)
	}
	cls, err := u.st.ClassByName(ctx, class)
	if err != nil {
		t.Fatal(err)
	}
	var im project.Image
	var ex project.Label
	for _, i := range u.images {
		ls, _ := u.st.Labels(ctx, project.LabelFilter{ImageID: i.ID, AnnotatorID: ines.ID, ClassID: cls.ID})
		for _, l := range ls {
			if l.Box.Width() >= 2*exemplar.MinTemplateSide && l.Box.Height() >= 2*exemplar.MinTemplateSide {
				im, ex = i, l
				break
			}
		}
		if im.ID != 0 {
			break
		}
	}
	if im.ID == 0 {
		t.Fatalf("the demo has no %s of Ines's to use as an example", class)
	}
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	u.selectImageID(im.ID)
	waitDecodedOrShown(t, decoded, u, im.ID)
	boxes, err := u.sess.Boxes(ctx, im.ID)
	if err != nil {
		t.Fatal(err)
	}
	for k, l := range boxes {
		if l.Box == ex.Box {
			u.view.Select(k)
		}
	}
	if u.view.Selected() == 0 {
		t.Fatal("the example is not among the boxes shown")
	}
	u.askFindSimilar()
	if u.similar == nil || u.similarWin == nil {
		t.Fatal("Find similar objects opened no panel")
	}
	return u, u.similar, im
}

// waitSearched waits until the panel's search has handed its result back.
func waitSearched(t *testing.T, r *similarRun) {
	t.Helper()
	// The job hands its result back through fyne.Do, which the test
	// driver runs on the job's goroutine.
	for i := 0; r.result == nil; i++ {
		if i == 1200 {
			t.Fatal("the search did not finish within 60 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// storedExemplar is what the store holds from the exemplar matcher.
func storedExemplar(t *testing.T, u *ui) []project.Suggestion {
	t.Helper()
	gs, err := u.st.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source})
	if err != nil {
		t.Fatal(err)
	}
	return gs
}

// panelTexts are the texts of the panel's labels.
func panelTexts(r *similarRun) []string {
	var texts []string
	for _, o := range test.LaidOutObjects(r.w.Content()) {
		if l, ok := o.(*widget.Label); ok && l.Visible() {
			texts = append(texts, l.Text)
		}
	}
	return texts
}

// The panel opens in a window of its own, leaving the labelling screen's
// menu, toolbar and keys free (issue 15: it opened over them as a dialog
// and took the keyboard). Search shows its hits and stores nothing; Keep
// stores exactly the hits shown; Discard stores nothing.
func TestFindSimilarPreviewThenKeep(t *testing.T) {
	u, r, im := openSimilar(t, "buoy")
	if top := u.win.Canvas().Overlays().Top(); top != nil {
		t.Error("the find-similar panel opened over the labelling screen")
	}
	if f := r.w.Canvas().Focused(); f != nil {
		t.Errorf("the panel took the keyboard for %T before anyone clicked into it", f)
	}
	if r.keep.Disabled() == false || r.discard.Disabled() == false {
		t.Error("Keep or Discard is offered before a search")
	}
	// Gray at 0.50 finds glints on the demo's water: hits to preview.
	r.feature.SetSelected(similarFeatureName(exemplar.FeatureGray))
	r.thr.SetValue(0.5)
	test.Tap(r.search)
	waitSearched(t, r)
	if gs := storedExemplar(t, u); len(gs) != 0 {
		t.Fatalf("Search stored %d suggestions before Keep", len(gs))
	}
	shown := r.previewed()
	if len(shown) == 0 {
		t.Fatal("the search found nothing at 0.50; the test needs some hits")
	}
	want := plural(len(shown), "match") + " at NCC ≥ 0.50 on "
	if !slices.ContainsFunc(panelTexts(r), func(s string) bool { return strings.HasPrefix(s, want) }) {
		t.Errorf("the panel says %q, not %q…", panelTexts(r), want)
	}
	if r.keep.Text != "Keep "+thousands(len(shown))+" as suggestions" || r.keep.Disabled() {
		t.Errorf("Keep button %q (disabled %v)", r.keep.Text, r.keep.Disabled())
	}
	if len(r.rows) != 1 || r.rows[0].imageID != im.ID || r.rows[0].n != len(shown) {
		t.Errorf("preview rows %+v, want one for image %d with %d", r.rows, im.ID, len(shown))
	}

	// Raising the threshold shows fewer and still stores nothing.
	r.thr.SetValue(0.9)
	high := r.previewed()
	if len(high) > len(shown) || len(storedExemplar(t, u)) != 0 {
		t.Errorf("at 0.90: %d shown of %d, %d stored", len(high), len(shown), len(storedExemplar(t, u)))
	}
	r.thr.SetValue(0.5)

	test.Tap(r.keep)
	gs := storedExemplar(t, u)
	if len(gs) != len(shown) {
		t.Fatalf("Keep stored %d, the preview showed %d", len(gs), len(shown))
	}
	for _, p := range shown {
		if !slices.ContainsFunc(gs, func(g project.Suggestion) bool {
			return g.ImageID == p.ImageID && g.Box == p.Box && g.Score == p.Score && g.ClassID == r.classID && g.State == project.SuggestionPending
		}) {
			t.Errorf("previewed %v (score %.3f) was not stored", p.Box, p.Score)
		}
	}
	if !r.keep.Disabled() {
		t.Error("Keep is still offered for hits already kept")
	}

	// A second search, discarded, changes nothing.
	r.result = nil
	test.Tap(r.search)
	for i := 0; r.result == nil; i++ {
		if i == 1200 {
			t.Fatal("the second search did not finish within 60 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
	test.Tap(r.discard)
	if got := storedExemplar(t, u); len(got) != len(gs) || r.result != nil || !r.keep.Disabled() {
		t.Errorf("after Discard: %d stored (want %d), preview %v", len(got), len(gs), r.result != nil)
	}
}

// Each comparison names its own score, on the threshold and in the hint
// (issue 15: the panel said "NCC ≥" in colour mode too), and starts from
// its own default.
func TestFindSimilarScoreFollowsTheComparison(t *testing.T) {
	_, r, _ := openSimilar(t, "buoy")
	for _, c := range []struct {
		f          exemplar.Feature
		name, hint string
	}{
		{exemplar.FeatureGray, "NCC ≥", "zero-mean normalised cross-correlation of the gray values"},
		{exemplar.FeatureColor, "colour NCC ≥", "mean of the zero-mean normalised cross-correlations of the red, green and blue planes"},
		{exemplar.FeatureGradient, "gradient NCC ≥", "Sobel gradient magnitude"},
	} {
		r.feature.SetSelected(similarFeatureName(c.f))
		if r.thrName.Text != c.name || !strings.Contains(r.hint.Text, c.hint) {
			t.Errorf("%v: threshold %q, hint %q; want %q and %q", c.f, r.thrName.Text, r.hint.Text, c.name, c.hint)
		}
		if math.Abs(r.thr.Value-exemplar.DefaultThresholdFor(c.f)) > 1e-9 { // the slider snaps to its 0.01 steps
			t.Errorf("%v: threshold starts at %.2f, want %.2f", c.f, r.thr.Value, exemplar.DefaultThresholdFor(c.f))
		}
	}
	r.feature.SetSelected(similarFeatureName(exemplar.FeatureColor))
	r.thr.SetValue(similarFloor)
	test.Tap(r.search)
	waitSearched(t, r)
	if !slices.ContainsFunc(panelTexts(r), func(s string) bool { return strings.Contains(s, " at colour NCC ≥ 0.40") }) {
		t.Errorf("after a colour search the panel says %q", panelTexts(r))
	}
}

// When a search finds more matches on an image than it keeps, the panel
// says so, with the cut and the count (issue 15: 194 on both gray and
// colour, an unstated cap).
func TestFindSimilarStatesTheCap(t *testing.T) {
	_, r, im := openSimilar(t, "buoy")
	r.thr.SetValue(similarFloor)
	pyr := r.pyr
	r.u.findSimilar(r, []project.Box{r.sel}, pyr.Level(0), []project.Image{im},
		exemplar.Options{Threshold: similarFloor, Scales: exemplar.DefaultScales(), MaxResults: 2}, "")
	waitSearched(t, r)
	found := r.result.Found(similarFloor)
	if found <= 2 {
		t.Fatalf("the search found %d at %.2f; the test needs more than 2", found, similarFloor)
	}
	want := "Showing the best 2 of " + thousands(found) + " matches: at most 2 per image are kept. Raise the threshold"
	if !slices.ContainsFunc(panelTexts(r), func(s string) bool { return strings.HasPrefix(s, want) }) {
		t.Errorf("the panel says %q, not %q…", panelTexts(r), want)
	}
	if similarMaxPerImage != exemplar.DefaultMaxResults {
		t.Errorf("the window keeps %d per image, the matcher's default is %d", similarMaxPerImage, exemplar.DefaultMaxResults)
	}
}

func TestThousands(t *testing.T) {
	for n, want := range map[int]string{0: "0", 999: "999", 1000: "1,000", 1234567: "1,234,567", -4321: "-4,321"} {
		if got := thousands(n); got != want {
			t.Errorf("thousands(%d) = %q, want %q", n, got, want)
		}
	}
	if got := plural(1234, "match"); got != "1,234 matches" {
		t.Errorf("plural = %q", got)
	}
}

// The window's search keeps to the scales that make sense, as the command
// line does: scales that cannot are refused with the range that can (the
// window searched 0.001 and proposed three-pixel boxes, issue 14), and
// those left out are named on the panel.
func TestFindSimilarScalesInTheWindow(t *testing.T) {
	u, r, im := openSimilar(t, "buoy")
	exs := []project.Box{r.sel}
	size := image.Pt(im.Width, im.Height)
	for _, bad := range []string{"0.001:0.001:1", "2:1:3", "nan:1:3", "1:2:5000", "300,400"} {
		if _, _, err := similarScales(bad, false, exs, size, []project.Image{im}); err == nil || !strings.Contains(err.Error(), "scales from") {
			t.Errorf("%s: err %v, want one giving the scales that make sense", bad, err)
		}
	}
	sc, note, err := similarScales("0.01:1:3", false, exs, size, []project.Image{im})
	if err != nil || !slices.Equal(sc, []float64{1}) || !strings.Contains(note, "searched 1 of 3 scales") {
		t.Fatalf("0.01:1:3: scales %v, note %q, err %v", sc, note, err)
	}
	r.scales.SetText("0.01:1:3")
	r.thr.SetValue(0.5)
	test.Tap(r.search)
	waitSearched(t, r)
	if !slices.ContainsFunc(panelTexts(r), func(s string) bool { return strings.Contains(s, "Searched 1 of 3 scales") }) {
		t.Errorf("the panel says %q, nothing about the scales left out", panelTexts(r))
	}
	test.Tap(r.keep)
	for _, g := range storedExemplar(t, u) {
		if g.Box.Width() < exemplar.MinTemplateSide || g.Box.Height() < exemplar.MinTemplateSide {
			t.Errorf("suggestion %v is under %d px", g.Box, exemplar.MinTemplateSide)
		}
	}
}

// The search job's Cancel button stops a long search: the job ends as
// cancelled, with nothing stored and no preview.
func TestFindSimilarCancelledInTheWindow(t *testing.T) {
	u, r, _ := openSimilar(t, "buoy")
	r.scales.SetText("0.5:12:100")
	r.rotations.SetChecked(true)
	test.Tap(r.search)
	var cancel *widget.Button
	for _, o := range test.LaidOutObjects(u.win.Canvas().Overlays().Top()) {
		if b, ok := o.(*widget.Button); ok && b.Text == "Cancel" {
			cancel = b
		}
	}
	if cancel == nil {
		t.Fatal("the search job shows no Cancel button")
	}
	test.Tap(cancel)
	// runJob tells of the cancel in an information dialog once the job
	// has returned.
	said := func() bool {
		top := u.win.Canvas().Overlays().Top()
		if top == nil {
			return false
		}
		for _, o := range test.LaidOutObjects(top) {
			if l, ok := o.(*widget.Label); ok && strings.HasPrefix(l.Text, "Cancelled.") {
				return true
			}
		}
		return false
	}
	for i := 0; !said(); i++ {
		if i == 1200 { // a hang, not a slow machine
			t.Fatal("the search had not stopped a minute after Cancel")
		}
		time.Sleep(50 * time.Millisecond)
	}
	if r.result != nil || !r.keep.Disabled() {
		t.Error("a cancelled search showed results")
	}
	if gs := storedExemplar(t, u); len(gs) != 0 {
		t.Errorf("%d suggestions stored by a cancelled search", len(gs))
	}
}
