package gui

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"image"
	"slices"
	"strings"
	"sync"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
)

// cropLoader makes the small picture of one suggestion for the crop grid.
type cropLoader func(ctx context.Context, g project.Suggestion) (image.Image, error)

const (
	cropSide    = 128 // pixels of a crop's longer side
	cropKeep    = 600 // decoded crops kept, a few screenfuls
	cropWorkers = 4   // crops made at once
)

// cropGrid is the window that shows many pending suggestions of one class
// as small crops, so that a reviewer marks the wrong ones and decides on
// the rest in one go. Crops are made only for the cells on screen.
type cropGrid struct {
	u    *ui
	win  fyne.Window
	load cropLoader

	classSel  *widget.Select
	sourceSel *widget.Select
	ascending *widget.Check
	grid      *widget.GridWrap
	info      *widget.Label
	acceptBtn *widget.Button
	rejectBtn *widget.Button
	undoBtn   *widget.Button

	classID int64
	st      backend.Project // the project the list was read from, for the crop workers
	items   []project.Suggestion
	marked  map[int64]bool
	// covered are the suggestions one of the person's own boxes already
	// covers (duplicates.go), flagged on their crops.
	covered   map[int64]ops.Cover
	markCover *widget.Button
	seen      map[int64]bool // suggestions whose cell has been on screen
	images    map[int64]project.Image
	last      []int64 // the suggestions the last bulk action decided, for undo
	classOf   map[string]int64

	mu        sync.Mutex // guards what the crop workers share
	ctx       context.Context
	cancel    context.CancelFunc
	crops     *cropCache
	wanted    []project.Suggestion // crops to make, most recent last
	inflight  map[int64]bool
	bound     map[int64]*cropCell // suggestion → the cell showing it
	running   int                 // workers of this generation
	gen       int                 // counts list replacements; older workers stop
	requested int
}

// showCropGrid opens the crop grid for the class with the most pending
// suggestions.
func (u *ui) showCropGrid() {
	if !u.haveProject() {
		return
	}
	g := newCropGrid(u, nil)
	g.win.Show()
	if err := g.refreshClasses(); err != nil {
		dialog.ShowError(err, g.win)
	}
	g.win.Canvas().Focus(g.grid) // arrows move between crops, Space marks
}

// newCropGrid builds the window (not yet shown, no class chosen); load
// nil makes crops from the project's images.
func newCropGrid(u *ui, load cropLoader) *cropGrid {
	g := &cropGrid{u: u, win: u.app.NewWindow("Boxwright — suggestions at a glance"), load: load,
		marked: map[int64]bool{}, seen: map[int64]bool{}, inflight: map[int64]bool{}, bound: map[int64]*cropCell{},
		crops: newCropCache(cropKeep), classOf: map[string]int64{}}
	if g.load == nil {
		g.load = g.cropFromImage
	}
	g.ctx, g.cancel = context.WithCancel(context.Background())
	g.info = widget.NewLabel("")
	g.info.Wrapping = fyne.TextWrapWord
	g.classSel = widget.NewSelect(nil, func(name string) {
		if id, ok := g.classOf[name]; ok && id != g.classID {
			g.report(g.setClass(id))
		}
	})
	g.sourceSel = widget.NewSelect([]string{reviewAllSources}, func(string) { g.report(g.reload()) })
	g.sourceSel.SetSelected(reviewAllSources)
	g.ascending = widget.NewCheck("Lowest score first", func(bool) { g.report(g.reload()) })
	g.grid = widget.NewGridWrap(func() int { return len(g.items) }, func() fyne.CanvasObject { return newCropCell() }, g.updateCell)
	g.grid.OnSelected = func(i widget.GridWrapItemID) {
		// A click (or Space on the focused cell) marks; the selection
		// itself means nothing here.
		g.grid.UnselectAll()
		g.toggle(i)
	}
	g.acceptBtn = widget.NewButtonWithIcon("", theme.ConfirmIcon(), g.askAcceptRest)
	g.acceptBtn.Importance = widget.HighImportance
	g.rejectBtn = widget.NewButtonWithIcon("", theme.CancelIcon(), g.askRejectMarked)
	g.undoBtn = widget.NewButtonWithIcon("Undo last action", theme.ContentUndoIcon(), func() { g.report(g.undoLast()) })
	g.undoBtn.Disable()
	g.markCover = widget.NewButton("Mark covered", g.markCovered)
	top := container.NewHBox(widget.NewLabel("Class"), g.classSel, widget.NewLabel("Source"), g.sourceSel, g.ascending)
	actions := container.NewHBox(g.acceptBtn, g.rejectBtn, g.markCover, g.undoBtn, layout.NewSpacer(),
		widget.NewLabel("Click a crop (or Space on it) to mark it wrong."))
	g.win.SetContent(withClose(g.win, container.NewBorder(container.NewVBox(top, g.info), actions, nil, nil, g.grid)))
	g.win.Resize(fyne.NewSize(1100, 800))
	g.win.SetOnClosed(func() {
		g.mu.Lock()
		g.cancel()
		g.gen++
		g.mu.Unlock()
	})
	g.updateCounts()
	return g
}

// report shows an error in the grid's window.
func (g *cropGrid) report(err error) {
	if err != nil && !errors.Is(err, errCropNoReviewer) {
		dialog.ShowError(err, g.win)
	}
}

// refreshClasses lists the classes with their pending counts and shows
// the chosen one, or the busiest when none is chosen.
func (g *cropGrid) refreshClasses() error {
	ctx := context.Background()
	all, err := g.u.st.QuerySuggestions(ctx, project.SuggestionQuery{State: project.SuggestionPending})
	if err != nil {
		return fmt.Errorf("read pending suggestions: %w", err)
	}
	per, sources := map[int64]int{}, map[string]bool{}
	for _, s := range all {
		per[s.ClassID]++
		sources[s.Source] = true
	}
	srcOpts := []string{reviewAllSources}
	for s := range sources {
		srcOpts = append(srcOpts, s)
	}
	slices.Sort(srcOpts[1:])
	g.sourceSel.SetOptions(srcOpts)
	var opts []string
	g.classOf = map[string]int64{}
	best, chosen := int64(0), ""
	for _, c := range g.u.classes {
		name := fmt.Sprintf("%s (%d pending)", c.Name, per[c.ID])
		opts = append(opts, name)
		g.classOf[name] = c.ID
		if best == 0 || per[c.ID] > per[best] {
			best = c.ID
		}
		if c.ID == g.classID {
			chosen = name
		}
	}
	if g.classID == 0 {
		g.classID = best
	}
	g.classSel.SetOptions(opts)
	for name, id := range g.classOf {
		if id == g.classID {
			chosen = name
		}
	}
	g.classSel.Selected = chosen // the list is read below, not by OnChanged
	g.classSel.Refresh()
	if g.classID == 0 {
		return nil
	}
	return g.reload()
}

// setClass shows the pending suggestions of one class.
func (g *cropGrid) setClass(id int64) error {
	g.classID = id
	for name, cid := range g.classOf {
		if cid == id && g.classSel.Selected != name {
			g.classSel.Selected = name
			g.classSel.Refresh()
		}
	}
	return g.reload()
}

// reload reads the list again with the filters and sort chosen; marks are
// forgotten and crops not yet made are no longer wanted.
func (g *cropGrid) reload() error {
	if g.u.st == nil || g.classID == 0 {
		return nil
	}
	q := project.SuggestionQuery{ClassID: g.classID, State: project.SuggestionPending}
	if s := g.sourceSel.Selected; s != "" && s != reviewAllSources {
		q.Source = s
	}
	gs, err := g.u.st.QuerySuggestions(context.Background(), q)
	if err != nil {
		return fmt.Errorf("read the suggestions of class %s: %w", g.u.classBy[g.classID].Name, err)
	}
	if g.ascending.Checked {
		slices.SortStableFunc(gs, func(a, b project.Suggestion) int {
			return cmp.Or(cmp.Compare(a.Score, b.Score), cmp.Compare(a.ID, b.ID))
		})
	} else {
		slices.SortStableFunc(gs, func(a, b project.Suggestion) int {
			return cmp.Or(cmp.Compare(b.Score, a.Score), cmp.Compare(a.ID, b.ID))
		})
	}
	g.covered = map[int64]ops.Cover{}
	if g.u.me.ID != 0 {
		own, err := g.u.st.Labels(context.Background(), project.LabelFilter{AnnotatorID: g.u.me.ID, ClassID: g.classID})
		if err != nil {
			return fmt.Errorf("read %s's labels: %w", g.u.me.Name, err)
		}
		g.covered = ops.CoveredSuggestions(gs, own, g.u.dupIoU)
	}
	images := make(map[int64]project.Image, len(g.u.images))
	for _, im := range g.u.images {
		images[im.ID] = im
	}
	g.mu.Lock()
	g.images = images
	g.cancel() // crops of the old list are no longer wanted
	g.ctx, g.cancel = context.WithCancel(context.Background())
	g.wanted, g.inflight, g.running = nil, map[int64]bool{}, 0
	g.gen++
	g.st = g.u.st
	g.mu.Unlock()
	g.items, g.marked, g.seen = gs, map[int64]bool{}, map[int64]bool{}
	g.grid.UnselectAll()
	g.grid.ScrollToTop()
	g.grid.Refresh()
	g.updateCounts()
	return nil
}

// markCovered marks every covered suggestion wrong, for "Reject marked".
func (g *cropGrid) markCovered() {
	for id := range g.covered {
		g.marked[id] = true
	}
	g.grid.Refresh()
	g.updateCounts()
}

// toggle marks the i-th suggestion of the list wrong, or unmarks it.
func (g *cropGrid) toggle(i int) {
	if i < 0 || i >= len(g.items) {
		return
	}
	id := g.items[i].ID
	if g.marked[id] {
		delete(g.marked, id)
	} else {
		g.marked[id] = true
	}
	g.grid.RefreshItem(i)
	g.updateCounts()
}

// loaded is the number of crops asked for so far.
func (g *cropGrid) loaded() int {
	g.mu.Lock()
	defer g.mu.Unlock()
	return g.requested
}

func (g *cropGrid) updateCounts() {
	nm := len(g.marked)
	g.acceptBtn.SetText(fmt.Sprintf("Accept all except marked (%d)", len(g.items)-nm))
	g.rejectBtn.SetText(fmt.Sprintf("Reject marked (%d)", nm))
	if len(g.items) == nm {
		g.acceptBtn.Disable()
	} else {
		g.acceptBtn.Enable()
	}
	if nm == 0 {
		g.rejectBtn.Disable()
	} else {
		g.rejectBtn.Enable()
	}
	g.markCover.SetText(fmt.Sprintf("Mark covered (%d)", len(g.covered)))
	if len(g.covered) == 0 {
		g.markCover.Disable()
	} else {
		g.markCover.Enable()
	}
	if g.classID == 0 {
		g.info.SetText("No class chosen.")
		return
	}
	order := "highest score first"
	if g.ascending.Checked {
		order = "lowest score first"
	}
	g.info.SetText(fmt.Sprintf("%s of class %s (%s), %s; %d marked wrong; %d already covered by your own boxes (IoU ≥ %.2f). The buttons act on every suggestion in this list, also those not scrolled to yet.",
		ops.Plural(len(g.items), "pending suggestion"), g.u.classBy[g.classID].Name, g.sourceWords(), order, nm, len(g.covered), g.u.dupIoU))
}

func (g *cropGrid) sourceWords() string {
	if s := g.sourceSel.Selected; s != "" && s != reviewAllSources {
		return "source " + s
	}
	return "all sources"
}

func (g *cropGrid) askAcceptRest() {
	n, nm := len(g.items)-len(g.marked), len(g.marked)
	unseen := 0
	for _, s := range g.items {
		if !g.marked[s.ID] && !g.seen[s.ID] {
			unseen++
		}
	}
	var b strings.Builder
	fmt.Fprintf(&b, "Accept %s of class %s (%s) as labels by %s?", ops.Plural(n, "suggestion"), g.u.classBy[g.classID].Name, g.sourceWords(), g.u.me.Name)
	if unseen > 0 {
		fmt.Fprintf(&b, "\n\n%d of them have not been on screen yet.", unseen)
	}
	if nm > 0 {
		fmt.Fprintf(&b, "\n\nThe %d marked wrong stay pending.", nm)
	}
	dialog.ShowConfirm("Accept suggestions", b.String(), func(ok bool) {
		if ok {
			g.report(g.acceptRest())
		}
	}, g.win)
}

func (g *cropGrid) askRejectMarked() {
	msg := fmt.Sprintf("Reject the %s marked wrong? The other %d stay pending.", ops.Plural(len(g.marked), "suggestion"), len(g.items)-len(g.marked))
	dialog.ShowConfirm("Reject suggestions", msg, func(ok bool) {
		if ok {
			g.report(g.rejectMarked())
		}
	}, g.win)
}

// errCropNoReviewer stops a bulk action until the reviewer is chosen.
var errCropNoReviewer = errors.New("choose who is reviewing first")

// acceptRest accepts every unmarked suggestion of the list as it is, in
// one transaction; the marked ones stay pending.
func (g *cropGrid) acceptRest() error {
	var ds []project.Decision
	for _, s := range g.items {
		if !g.marked[s.ID] {
			ds = append(ds, project.Decision{SuggestionID: s.ID, Accept: true})
		}
	}
	return g.decide(ds, false)
}

// rejectMarked rejects the marked suggestions in one transaction.
func (g *cropGrid) rejectMarked() error {
	var ds []project.Decision
	for _, s := range g.items {
		if g.marked[s.ID] {
			ds = append(ds, project.Decision{SuggestionID: s.ID})
		}
	}
	return g.decide(ds, true)
}

// decide stores decisions in one transaction, then reads the list, the
// counts and the main window again.
func (g *cropGrid) decide(ds []project.Decision, rejecting bool) error {
	if err := g.u.mayDecide(); err != nil {
		return err
	}
	u := g.u
	if len(ds) == 0 {
		return nil
	}
	if u.me.ID == 0 {
		u.askAnnotator()
		return errCropNoReviewer
	}
	ctx := context.Background()
	if u.sess != nil && u.sess.Unsaved() > 0 {
		if err := u.sess.Flush(ctx); err != nil {
			return fmt.Errorf("earlier edits are not saved yet, so nothing was decided: %w", err)
		}
	}
	if _, err := u.st.Decide(ctx, u.me.ID, ds); err != nil {
		return err
	}
	g.last = g.last[:0]
	for _, d := range ds {
		g.last = append(g.last, d.SuggestionID)
	}
	verb := "accepted"
	if rejecting {
		verb = "rejected"
	}
	g.undoBtn.SetText(fmt.Sprintf("Undo: %d %s", len(ds), verb))
	g.undoBtn.Enable()
	return g.afterChange()
}

// undoLast takes back the last bulk action made in this window.
func (g *cropGrid) undoLast() error {
	if len(g.last) == 0 {
		return nil
	}
	if err := g.u.st.Undecide(context.Background(), g.last); err != nil {
		return err
	}
	g.last = nil
	g.undoBtn.SetText("Undo last action")
	g.undoBtn.Disable()
	return g.afterChange()
}

// afterChange reads the list, the counts and the main window again.
func (g *cropGrid) afterChange() error {
	if err := g.u.reload(); err != nil {
		return err
	}
	if g.u.selected >= 0 {
		g.u.showImage(g.u.selected)
	}
	return g.refreshClasses()
}

// ---- cells and crops ----

func (g *cropGrid) updateCell(i widget.GridWrapItemID, o fyne.CanvasObject) {
	c := o.(*cropCell)
	if i < 0 || i >= len(g.items) {
		return
	}
	s := g.items[i]
	g.seen[s.ID] = true
	g.mu.Lock()
	if c.id != 0 && g.bound[c.id] == c {
		delete(g.bound, c.id)
	}
	c.id = s.ID
	g.bound[s.ID] = c
	img := g.crops.get(s.ID)
	if img == nil && !g.inflight[s.ID] {
		g.inflight[s.ID] = true
		g.wanted = append(g.wanted, s)
		g.requested++
		if g.running < cropWorkers {
			g.running++
			go g.work(g.ctx, g.gen)
		}
	}
	g.mu.Unlock()
	score := fmt.Sprintf("%.2f", s.Score)
	if _, ok := g.covered[s.ID]; ok {
		score += " · covered"
	}
	c.show(img, score, g.marked[s.ID])
}

// work makes wanted crops, newest request first (the cells the reviewer
// scrolled to last), skipping those whose cells scrolled away. It stops
// when nothing is wanted or the list it works for was replaced.
func (g *cropGrid) work(ctx context.Context, gen int) {
	for {
		g.mu.Lock()
		if gen != g.gen {
			g.mu.Unlock()
			return
		}
		var s project.Suggestion
		found := false
		for len(g.wanted) > 0 && !found {
			s = g.wanted[len(g.wanted)-1]
			g.wanted = g.wanted[:len(g.wanted)-1]
			if _, on := g.bound[s.ID]; on {
				found = true
			} else {
				delete(g.inflight, s.ID) // asked for again if it comes back
			}
		}
		if !found {
			g.running--
			g.mu.Unlock()
			return
		}
		g.mu.Unlock()
		img, err := g.load(ctx, s)
		g.mu.Lock()
		if gen != g.gen {
			g.mu.Unlock()
			return
		}
		delete(g.inflight, s.ID)
		if err == nil && img != nil {
			g.crops.put(s.ID, img)
		}
		c := g.bound[s.ID]
		g.mu.Unlock()
		if c != nil {
			id := s.ID
			fyne.Do(func() {
				g.mu.Lock()
				still := c.id == id // the cell may show another by now
				g.mu.Unlock()
				if still {
					c.setImage(img, err)
				}
			})
		}
	}
}

// cropFromImage is the default loader: the suggestion's box with some
// context, from the pyramid level nearest the crop size.
func (g *cropGrid) cropFromImage(ctx context.Context, s project.Suggestion) (image.Image, error) {
	g.mu.Lock()
	im, ok := g.images[s.ImageID]
	st := g.st
	g.mu.Unlock()
	if !ok || st == nil {
		return nil, fmt.Errorf("image %d: %w", s.ImageID, project.ErrNotFound)
	}
	p, err := g.u.cache.Get(ctx, im.ID, fileOf(st, im))
	if err != nil {
		return nil, err
	}
	return cropOf(p, s.Box, cropSide, g.u.classBy[s.ClassID].Color), nil
}
