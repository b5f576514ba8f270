package gui

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/canvas"
	"boxwright/project"
)

// The orders the review queue offers.
const (
	orderLeastConfident = "least confident first"
	orderHighestScore   = "highest score first"
	orderByImage        = "image by image"
)

// Filter choices that select everything.
const (
	reviewAllSources = "all sources"
	reviewAllClasses = "all classes"
)

// reviewPrefetch is how many upcoming items have their images decoded in
// the background, so that the next item appears at once.
const reviewPrefetch = 3

// reviewContextMin is the smallest side, in image pixels, of the region
// shown around a suggestion: tiny boxes still get some surroundings.
const reviewContextMin = 160

// reviewQueue is the window that walks through pending suggestions one at
// a time. The queue is read once and kept in memory; decisions are
// written one by one as they are made.
type reviewQueue struct {
	u   *ui
	win fyne.Window

	view      *canvas.View
	order     *widget.Select
	threshold *widget.Slider
	thrLabel  *widget.Label
	source    *widget.Select
	class     *widget.Select
	itemClass *widget.Select // the class the current box will be accepted with
	status    *widget.Label
	tally     *widget.Label
	undoBtn   *widget.Button

	items   []project.Suggestion
	decided map[int64]bool // items decided in this window since the last load
	pos     int            // index of the current item; len(items) at the end
	box     project.Box    // the current item's box, as the reviewer edited it
	classID int64          // the current item's class, as the reviewer chose it
	// history holds the decided suggestions, last decision last, for undo.
	history []reviewStep
	counts  map[string]int // accepted / corrected / rejected / skipped here

	images    map[int64]project.Image
	others    []project.Label
	othersFor int64 // image whose labels others holds
	region    project.Box
	cancel    context.CancelFunc
	// shown, when set, is called with the suggestion's ID once it is on
	// screen (for tests and benchmarks).
	shown func(id int64)
	dirty bool // the main window must read the project again
}

// reviewStep is one decision made in the review window.
type reviewStep struct {
	g    project.Suggestion
	what string // accepted, corrected or rejected
}

// showReviewQueue opens the review window over the open project's
// pending suggestions.
func (u *ui) showReviewQueue() {
	if !u.haveProject() {
		return
	}
	q := newReviewQueue(u)
	q.win.Show()
	if err := q.load(); err != nil {
		dialog.ShowError(err, q.win)
	}
}

// newReviewQueue builds the window (not yet shown, nothing loaded).
func newReviewQueue(u *ui) *reviewQueue {
	q := &reviewQueue{u: u, win: u.app.NewWindow("Boxwright — review suggestions"), decided: map[int64]bool{},
		counts: map[string]int{}, images: map[int64]project.Image{}}
	q.view = canvas.NewView()
	q.view.PanPastEdges = true // an item at the image edge is shown in the middle too
	q.view.OnChange = q.boxChanged
	q.view.OnRune = q.typedRune
	q.view.OnKey = func(e *fyne.KeyEvent) {
		if e.Name == fyne.KeyF1 {
			q.showKeys()
		}
	}
	q.status = widget.NewLabel("")
	q.status.Truncation = fyne.TextTruncateEllipsis
	q.tally = widget.NewLabel("")

	q.thrLabel = widget.NewLabel("")
	q.threshold = widget.NewSlider(0, 1)
	q.threshold.Step = 0.01
	q.threshold.SetValue(0.5)
	q.thrLabel.SetText(fmt.Sprintf("around %.2f", q.threshold.Value))
	q.threshold.OnChanged = func(v float64) { q.thrLabel.SetText(fmt.Sprintf("around %.2f", v)) }
	q.threshold.OnChangeEnded = func(float64) {
		if q.order.Selected == orderLeastConfident {
			q.reorder()
		}
		q.win.Canvas().Unfocus()
	}
	q.order = widget.NewSelect([]string{orderLeastConfident, orderHighestScore, orderByImage}, nil)
	q.order.SetSelected(orderLeastConfident)
	q.order.OnChanged = func(string) {
		q.reorder()
		q.win.Canvas().Unfocus()
	}

	q.source = widget.NewSelect([]string{reviewAllSources}, nil)
	q.source.SetSelected(reviewAllSources)
	q.class = widget.NewSelect(q.classNames(reviewAllClasses), nil)
	q.class.SetSelected(reviewAllClasses)
	reload := func(string) {
		if err := q.load(); err != nil {
			dialog.ShowError(err, q.win)
		}
		q.win.Canvas().Unfocus()
	}
	q.source.OnChanged, q.class.OnChanged = reload, reload
	q.itemClass = widget.NewSelect(q.classNames(""), func(name string) {
		for _, c := range q.u.classes {
			if c.Name == name {
				q.setClass(c.ID)
			}
		}
		q.win.Canvas().Unfocus()
	})

	accept := widget.NewButtonWithIcon("Accept (A)", theme.ConfirmIcon(), q.accept)
	accept.Importance = widget.HighImportance
	reject := widget.NewButtonWithIcon("Reject (Z)", theme.CancelIcon(), q.reject)
	skip := widget.NewButtonWithIcon("Skip (S)", theme.MediaSkipNextIcon(), q.skip)
	q.undoBtn = widget.NewButtonWithIcon("Undo (U)", theme.ContentUndoIcon(), q.undo)
	q.undoBtn.Disable()
	again := widget.NewButtonWithIcon("Read the queue again", theme.ViewRefreshIcon(), func() {
		if err := q.load(); err != nil {
			dialog.ShowError(err, q.win)
		}
	})

	filters := container.NewHBox(widget.NewLabel("Order"), q.order, q.thrLabel,
		container.NewGridWrap(fyne.NewSize(160, q.threshold.MinSize().Height), q.threshold),
		widget.NewSeparator(), widget.NewLabel("Source"), q.source, widget.NewLabel("Class"), q.class,
		layout.NewSpacer(), again)
	actions := container.NewHBox(accept, reject, skip, q.undoBtn, widget.NewSeparator(),
		widget.NewLabel("Accept as"), q.itemClass, layout.NewSpacer(),
		widget.NewButtonWithIcon("Keys", theme.HelpIcon(), q.showKeys))
	bottom := container.NewVBox(actions, container.NewBorder(nil, nil, nil, q.tally, q.status))
	c := q.win.Canvas()
	c.SetOnTypedKey(q.view.TypedKey)
	c.SetOnTypedRune(q.view.TypedRune)
	// withClose after the key handler, which it passes the other keys to.
	q.win.SetContent(withClose(q.win, container.NewBorder(filters, bottom, nil, nil, container.New(&reviewLayout{q: q}, q.view))))
	q.win.Resize(fyne.NewSize(1100, 800))
	c.AddShortcut(&desktop.CustomShortcut{KeyName: fyne.KeyZ, Modifier: fyne.KeyModifierShortcutDefault}, func(fyne.Shortcut) { q.undo() })
	q.win.SetOnClosed(func() {
		if q.cancel != nil {
			q.cancel()
		}
		q.refreshMain()
	})
	return q
}

// classNames lists the class names, after first when it is not empty.
func (q *reviewQueue) classNames(first string) []string {
	var out []string
	if first != "" {
		out = append(out, first)
	}
	for _, c := range q.u.classes {
		out = append(out, c.Name)
	}
	return out
}

// load reads the pending suggestions that the filters select, puts them
// in the chosen order and shows the first.
func (q *reviewQueue) load() error {
	u := q.u
	if u.st == nil {
		return errors.New("no project is open")
	}
	ctx := context.Background()
	sq := project.SuggestionQuery{State: project.SuggestionPending}
	if s := q.source.Selected; s != "" && s != reviewAllSources {
		sq.Source = s
	}
	for _, c := range u.classes {
		if c.Name == q.class.Selected {
			sq.ClassID = c.ID
		}
	}
	gs, err := u.st.QuerySuggestions(ctx, sq)
	if err != nil {
		return fmt.Errorf("read the suggestions to review: %w", err)
	}
	if err := q.loadSources(ctx); err != nil {
		return err
	}
	q.images = make(map[int64]project.Image, len(u.images))
	for _, im := range u.images {
		q.images[im.ID] = im
	}
	q.items, q.decided, q.pos, q.othersFor = gs, map[int64]bool{}, 0, 0
	q.sortItems()
	q.show()
	return nil
}

// loadSources offers every source that has pending suggestions.
func (q *reviewQueue) loadSources(ctx context.Context) error {
	all, err := q.u.st.QuerySuggestions(ctx, project.SuggestionQuery{State: project.SuggestionPending})
	if err != nil {
		return fmt.Errorf("read the suggestion sources: %w", err)
	}
	seen := map[string]bool{}
	opts := []string{reviewAllSources}
	for _, g := range all {
		if !seen[g.Source] {
			seen[g.Source] = true
			opts = append(opts, g.Source)
		}
	}
	slices.Sort(opts[1:])
	if cur := q.source.Selected; cur != reviewAllSources && !seen[cur] {
		opts = append(opts, cur) // keep the choice even when it has run dry
	}
	q.source.SetOptions(opts)
	return nil
}

// sortItems puts the queue in the chosen order.
func (q *reviewQueue) sortItems() {
	thr := q.threshold.Value
	switch q.order.Selected {
	case orderHighestScore:
		slices.SortStableFunc(q.items, func(a, b project.Suggestion) int {
			return cmp.Or(cmp.Compare(b.Score, a.Score), cmp.Compare(a.ID, b.ID))
		})
	case orderByImage:
		slices.SortStableFunc(q.items, func(a, b project.Suggestion) int {
			return cmp.Or(cmp.Compare(a.ImageID, b.ImageID), cmp.Compare(b.Score, a.Score), cmp.Compare(a.ID, b.ID))
		})
	default:
		slices.SortStableFunc(q.items, func(a, b project.Suggestion) int {
			return cmp.Or(cmp.Compare(math.Abs(a.Score-thr), math.Abs(b.Score-thr)), cmp.Compare(a.ID, b.ID))
		})
	}
}

// reorder sorts the undecided rest of the queue again and starts at its
// head; decisions made stay made.
func (q *reviewQueue) reorder() {
	var rest []project.Suggestion
	for _, g := range q.items {
		if !q.decided[g.ID] {
			rest = append(rest, g)
		}
	}
	q.items, q.decided, q.pos = rest, map[int64]bool{}, 0
	q.sortItems()
	q.show()
}

// current is the suggestion on screen, as stored (without the reviewer's
// edits); false at the end of the queue.
func (q *reviewQueue) current() (project.Suggestion, bool) {
	if q.pos < 0 || q.pos >= len(q.items) {
		return project.Suggestion{}, false
	}
	return q.items[q.pos], true
}

func (q *reviewQueue) typedRune(r rune) {
	switch {
	case r >= '0' && r <= '9':
		q.setClassByKey(r)
	case r == 'a' || r == 'A':
		q.accept()
	case r == 'z' || r == 'Z':
		q.reject()
	case r == 's' || r == 'S':
		q.skip()
	case r == 'u' || r == 'U':
		q.undo()
	case r == 'h' || r == '?':
		q.showKeys()
	}
}

// setClassByKey changes the class the current box is accepted with to
// the class with that hot key.
func (q *reviewQueue) setClassByKey(r rune) {
	if c, ok := q.u.classByKey(r); ok {
		q.setClass(c.ID)
	}
}

func (q *reviewQueue) setClass(id int64) {
	if _, ok := q.current(); !ok || id == q.classID {
		return
	}
	q.classID = id
	q.itemClass.SetSelected(q.u.classBy[id].Name)
	q.refreshItems()
}

func (q *reviewQueue) boxChanged(key int64, b project.Box) {
	if g, ok := q.current(); ok && key == g.ID {
		q.box = b
		q.refreshItems()
	}
}

// accept makes the current suggestion a label of the reviewer, with the
// box and class as edited here (then it counts as corrected).
func (q *reviewQueue) accept() {
	g, ok := q.current()
	if !ok {
		return
	}
	d := project.Decision{SuggestionID: g.ID, Accept: true}
	if q.box != g.Box {
		d.Box = q.box
	}
	if q.classID != g.ClassID {
		d.ClassID = q.classID
	}
	what := "accepted"
	if d.Box != (project.Box{}) || d.ClassID != 0 {
		what = "corrected"
	}
	q.decide(g, d, what)
}

// reject records that the current suggestion is wrong.
func (q *reviewQueue) reject() {
	if g, ok := q.current(); ok {
		q.decide(g, project.Decision{SuggestionID: g.ID}, "rejected")
	}
}

// skip leaves the current suggestion pending and moves on.
func (q *reviewQueue) skip() {
	if _, ok := q.current(); !ok {
		return
	}
	q.counts["skipped"]++
	q.advance()
}

func (q *reviewQueue) decide(g project.Suggestion, d project.Decision, what string) {
	if err := q.u.mayDecide(); err != nil {
		q.status.SetText(err.Error())
		return
	}
	u := q.u
	if u.me.ID == 0 {
		u.askAnnotator()
		return
	}
	ctx := context.Background()
	if u.sess != nil && u.sess.Unsaved() > 0 {
		// The reviewer's earlier box edits go first, so the file stays in
		// the order things were done.
		if err := u.sess.Flush(ctx); err != nil {
			dialog.ShowError(fmt.Errorf("earlier edits are not saved yet, so nothing was decided: %w", err), q.win)
			return
		}
	}
	if _, err := u.st.Decide(ctx, u.me.ID, []project.Decision{d}); err != nil {
		dialog.ShowError(err, q.win)
		// Decided elsewhere (another window or reviewer): move past it.
		if now, rerr := u.st.Suggestion(ctx, g.ID); rerr == nil && now.State != project.SuggestionPending {
			q.decided[g.ID] = true
			q.advance()
		}
		return
	}
	q.decided[g.ID] = true
	u.suggestionsChanged()
	q.history = append(q.history, reviewStep{g, what})
	q.counts[what]++
	q.dirty = true
	if g.ImageID == q.othersFor {
		q.othersFor = 0 // an accepted box is a new label on that image
	}
	q.advance()
}

// advance moves to the next undecided item and shows it.
func (q *reviewQueue) advance() {
	q.pos++
	for q.pos < len(q.items) && q.decided[q.items[q.pos].ID] {
		q.pos++
	}
	q.show()
}

// undo takes back the last decision made in this window: the suggestion
// is pending again, the label made from it is gone, and it is shown.
func (q *reviewQueue) undo() {
	if len(q.history) == 0 {
		return
	}
	last := q.history[len(q.history)-1]
	g := last.g
	if err := q.u.st.Undecide(context.Background(), []int64{g.ID}); err != nil {
		dialog.ShowError(err, q.win)
		return
	}
	q.history = q.history[:len(q.history)-1]
	q.u.suggestionsChanged()
	q.dirty = true
	q.othersFor = 0
	delete(q.decided, g.ID)
	if i := slices.IndexFunc(q.items, func(x project.Suggestion) bool { return x.ID == g.ID }); i >= 0 {
		q.pos = i
	} else {
		q.pos = min(q.pos, len(q.items))
		q.items = slices.Insert(q.items, q.pos, g)
	}
	q.counts[last.what]--
	q.show()
}

// show puts the current item on screen: at once when its image is
// decoded, else once it is; and starts decoding the next few.
func (q *reviewQueue) show() {
	if q.cancel != nil {
		q.cancel()
		q.cancel = nil
	}
	q.view.CancelGesture()
	q.updateButtons()
	g, ok := q.current()
	if !ok {
		q.view.SetMessage(q.endMessage())
		q.updateStatus()
		return
	}
	q.box, q.classID = g.Box, g.ClassID
	q.itemClass.SetSelected(q.u.classBy[g.ClassID].Name)
	im, known := q.images[g.ImageID]
	if !known {
		q.view.SetMessage(fmt.Sprintf("Image %d of this suggestion is not in the project any more.", g.ImageID))
		q.updateStatus()
		return
	}
	q.loadOthers(g.ImageID)
	defer q.prefetch()
	if p := q.u.cache.Ready(im.ID); p != nil {
		q.display(g, p)
		return
	}
	q.view.SetMessage("Loading " + filepath.Base(im.Path) + "…")
	q.updateStatus()
	ctx, cancel := context.WithCancel(context.Background())
	q.cancel = cancel
	where := fileOf(q.u.st, im)
	go func() {
		p, err := q.u.cache.Get(ctx, im.ID, where)
		fyne.Do(func() {
			if ctx.Err() != nil {
				return // the reviewer moved on
			}
			if err != nil {
				q.view.SetMessage(fmt.Sprintf("Cannot show %s: %v", filepath.Base(im.Path), err))
				return
			}
			q.display(g, p)
		})
	}()
}

func (q *reviewQueue) display(g project.Suggestion, p *canvas.Pyramid) {
	if q.view.Image() != p {
		q.view.SetImage(p)
	}
	q.region = contextRegion(g.Box, p)
	q.zoom()
	q.refreshItems()
	q.view.Select(g.ID)
	q.updateStatus()
	if q.shown != nil {
		q.shown(g.ID)
	}
}
