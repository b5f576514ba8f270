package gui

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
)

// annotatorPref is the preference that remembers who labels on this
// computer.
const annotatorPref = "annotator"

// duplicateOffset is how far a duplicated box is moved, in image pixels,
// so that it can be seen and dragged onto its object.
const duplicateOffset = 10

func (u *ui) wireView() {
	v := u.view
	v.OnCreate = u.createBox
	v.OnChange = func(key int64, b project.Box) {
		if id, ok := suggestionOf(key); ok {
			u.editSuggestion(id, func(g *project.Suggestion) { g.Box = b })
			return
		}
		u.edit("move or resize", func(_ int64, l project.Label) project.Label { l.Box = b; return l }, key)
	}
	v.OnSelect = func(int64) { u.updateStatus() }
	v.OnPointer = func(x, y float64, in bool) {
		u.pointer = ""
		if in {
			u.pointer = fmt.Sprintf("x %.0f  y %.0f", x, y)
		}
		u.updateStatus()
	}
	v.OnView = func() {
		u.zoom.SetText(fmt.Sprintf("%.0f %%", 100*v.Transform().Scale))
		if u.guides.Checked != v.Guides() {
			u.guides.SetChecked(v.Guides())
		}
	}
	v.OnKey = u.typedKey
	v.OnRune = u.typedRune
}

// Keys of the main window; documented in keysHelp and the README.
func (u *ui) addShortcuts() {
	c := u.win.Canvas()
	ctrl := fyne.KeyModifierShortcutDefault
	add := func(k fyne.KeyName, m fyne.KeyModifier, f func()) {
		c.AddShortcut(&desktop.CustomShortcut{KeyName: k, Modifier: m}, func(fyne.Shortcut) { f() })
	}
	add(fyne.KeyO, ctrl, u.askOpen)
	add(fyne.KeyN, ctrl, u.askNew)
	add(fyne.KeyI, ctrl, u.askAddFolder)
	add(fyne.KeyL, ctrl, u.askImport)
	add(fyne.KeyE, ctrl, u.askExport)
	add(fyne.KeyG, ctrl, u.showAgreement)
	add(fyne.KeyR, ctrl, u.showReviewQueue)
	add(fyne.KeyF, ctrl, u.askFindSimilar)
	add(fyne.KeyJ, ctrl, u.showCropGrid)
	c.AddShortcut(&fyne.ShortcutUndo{}, func(fyne.Shortcut) { u.undo() })
	c.AddShortcut(&fyne.ShortcutRedo{}, func(fyne.Shortcut) { u.redo() })
	add(fyne.KeyZ, ctrl|fyne.KeyModifierShift, u.redo)
	add(fyne.KeyDelete, ctrl, u.deleteAll)
	// Ctrl+arrows resize the selected box by its bottom-right corner.
	for _, k := range []struct {
		name   fyne.KeyName
		dx, dy float64
	}{{fyne.KeyLeft, -1, 0}, {fyne.KeyRight, 1, 0}, {fyne.KeyUp, 0, -1}, {fyne.KeyDown, 0, 1}} {
		add(k.name, ctrl, func() { u.view.Grow(k.dx, k.dy) })
		add(k.name, ctrl|fyne.KeyModifierShift, func() { u.view.Grow(10*k.dx, 10*k.dy) })
	}
	for i, k := range []fyne.KeyName{fyne.Key1, fyne.Key2, fyne.Key3, fyne.Key4, fyne.Key5, fyne.Key6, fyne.Key7, fyne.Key8, fyne.Key9, fyne.Key0} {
		digit := rune('1' + i)
		if k == fyne.Key0 {
			digit = '0'
		}
		add(k, ctrl, func() {
			if c, ok := u.classByKey(digit); ok {
				u.classAll(c.ID)
			}
		})
	}
	// With nothing focused the view gets the keys: it handles its own and
	// hands the rest back to typedKey and typedRune.
	c.SetOnTypedKey(u.view.TypedKey)
	c.SetOnTypedRune(u.view.TypedRune)
}

// typedKey handles the keys the view leaves to the window.
func (u *ui) typedKey(e *fyne.KeyEvent) {
	switch e.Name {
	case fyne.KeyPageDown:
		u.step(1)
	case fyne.KeyPageUp:
		u.step(-1)
	case fyne.KeyHome:
		u.selectIndex(0)
	case fyne.KeyEnd:
		u.selectIndex(len(u.images) - 1)
	case fyne.KeyDelete, fyne.KeyBackspace:
		u.deleteSelected()
	case fyne.KeyReturn, fyne.KeyEnter:
		u.markAndGo(project.StatusDone)
	case fyne.KeyF1:
		u.showKeys()
	}
}

// typedRune handles letters and digits the view leaves to the window.
func (u *ui) typedRune(r rune) {
	switch {
	case r >= '0' && r <= '9':
		if c, ok := u.classByKey(r); ok {
			u.pickClass(c.ID)
		}
	case r == 'n':
		u.step(1)
	case r == 'b':
		u.step(-1)
	case r == 'u':
		u.nextUnfinished()
	case r == 'x':
		u.markAndGo(project.StatusSkipped)
	case r == 'd':
		u.duplicate()
	case r == 'o':
		u.others.SetChecked(!u.others.Checked)
	case r == 'g':
		u.view.TypedRune('g')
	case r == 'h' || r == '?':
		u.showKeys()
	case r == 'a':
		u.acceptSuggestion()
	case r == 'z':
		u.rejectSuggestion()
	case r == 'A':
		u.acceptAllAbove()
	}
}

func (u *ui) classByKey(r rune) (project.Class, bool) {
	for _, c := range u.classes {
		if c.HotKey == string(r) {
			return c, true
		}
	}
	return project.Class{}, false
}

// ---- annotator ----

// chooseAnnotator sets who labels: the command line's name, the
// remembered one, or (when neither) asks.
func (u *ui) chooseAnnotator() {
	name := u.annotatorFlag
	u.annotatorFromFlag = name != ""
	if name == "" {
		name = u.app.Preferences().String(annotatorPref)
	}
	if name != "" {
		err := u.setAnnotator(name)
		u.annotatorFromFlag = false // a later change in the window is remembered
		if err == nil {
			return
		} else {
			u.showError(err)
		}
	}
	u.askAnnotator()
}

// setAnnotator makes name the person labelling (creating the annotator
// when new) and remembers it.
func (u *ui) setAnnotator(name string) error {
	if u.st == nil {
		return nil
	}
	name = strings.TrimSpace(name)
	if err := project.ValidateName("annotator", name); err != nil {
		return err
	}
	if u.sess != nil {
		if err := u.sess.Flush(context.Background()); err != nil {
			return fmt.Errorf("cannot change annotator while edits are unsaved: %w", err)
		}
	}
	a, err := u.st.EnsureAnnotator(context.Background(), name)
	if err != nil {
		return err
	}
	u.me, u.sess = a, ops.NewSession(u.st, a)
	// Remember a name the person chose in the window, not one given on the
	// command line for a single run, and write only what changed: the
	// toolkit's watcher of the preferences file can catch a first write
	// half-done and complain.
	if !u.annotatorFromFlag && u.app.Preferences().String(annotatorPref) != name {
		u.app.Preferences().SetString(annotatorPref, name)
	}
	if as, err := u.st.Annotators(context.Background()); err == nil {
		u.annotators = as
	}
	u.updateTitle()
	u.updateUndo()
	u.loadOthers()
	u.refreshBoxes()
	return nil
}

func (u *ui) askAnnotator() { u.askAnnotatorThen(nil) }

// askAnnotatorThen asks who is labelling and runs then (if not nil) once
// a name is set, so a box drawn before the answer is not lost.
func (u *ui) askAnnotatorThen(then func()) {
	if u.st == nil {
		return
	}
	var names []string
	for _, a := range u.annotators {
		names = append(names, a.Name)
	}
	entry := widget.NewSelectEntry(names)
	entry.SetPlaceHolder("your name, e.g. Ines")
	entry.SetText(u.me.Name)
	hint := widget.NewLabel("Every box you draw records this name, so agreement between annotators can be measured. Pick yours or type a new one.")
	hint.Wrapping = fyne.TextWrapWord
	d := dialog.NewForm("Who is labelling?", "Start", "Later", []*widget.FormItem{
		widget.NewFormItem("", hint), widget.NewFormItem("Annotator", entry)}, func(ok bool) {
		if !ok {
			return
		}
		if err := u.setAnnotator(entry.Text); err != nil {
			u.showError(err)
			return
		}
		if then != nil {
			then()
		}
	}, u.win)
	d.Resize(fyne.NewSize(460, 260))
	d.Show()
}

// needAnnotator says whether edits can be made, asking for a name first
// when nobody is labelling yet.
func (u *ui) needAnnotator() bool {
	if u.comparing() {
		return false
	}
	if u.sess == nil {
		u.askAnnotator()
		return false
	}
	return true
}

// comparing says (and shows) that the image is open read-only from the
// agreement report.
func (u *ui) comparing() bool {
	if u.compare == nil || u.compare.imageID != u.imageID {
		return false
	}
	u.status.SetText("This image is open for comparison, read-only: press Back to labelling to edit.")
	return true
}

// ---- navigation ----

func (u *ui) step(d int) {
	n := u.nav
	if len(n.shown) == 0 {
		return
	}
	r := n.rowOf(u.selected)
	if r < 0 {
		r = 0
	} else {
		r += d
	}
	if r < 0 || r >= len(n.shown) {
		return
	}
	u.selectIndex(n.shown[r])
}

// nextUnfinished goes to the next image (in list order, wrapping) that is
// neither done, reviewed nor skipped.
func (u *ui) nextUnfinished() {
	n := u.nav
	if len(n.shown) == 0 {
		return
	}
	start := n.rowOf(u.selected)
	for k := 1; k <= len(n.shown); k++ {
		i := n.shown[(start+k+len(n.shown))%len(n.shown)]
		if s := u.images[i].Status; s == project.StatusNew || s == project.StatusStarted {
			u.selectIndex(i)
			return
		}
	}
	u.status.SetText("Every image in the list is done or skipped.")
}

// selectIndex shows the i-th image of the project, clearing the filters
// when they hide it.
func (u *ui) selectIndex(i int) {
	if i < 0 || i >= len(u.images) {
		return
	}
	r := u.nav.rowOf(i)
	if r < 0 {
		u.nav.ClearFilters()
		r = u.nav.rowOf(i)
	}
	u.showImage(i)
	u.nav.list.Select(r)
	u.nav.list.ScrollTo(r)
}

func (u *ui) selectImageID(id int64) {
	for i, im := range u.images {
		if im.ID == id {
			u.selectIndex(i)
			return
		}
	}
}

// setStatus records the status of the image on screen.
func (u *ui) setStatus(s project.ImageStatus) bool {
	if u.st == nil || u.selected < 0 {
		return false
	}
	im := &u.images[u.selected]
	if err := u.st.SetImageStatus(context.Background(), im.ID, s); err != nil {
		u.saveFailed(fmt.Errorf("marking %s %s: %w", filepath.Base(im.Path), statusWord(s), err))
		return false
	}
	im.Status = s
	u.nav.refreshImage(im.ID)
	u.savedNow()
	return true
}

// markAndGo records a status and moves to the next unfinished image.
func (u *ui) markAndGo(s project.ImageStatus) {
	if u.setStatus(s) {
		u.nextUnfinished()
	}
}

// showImage shows the i-th image: at once when it is decoded already,
// else after decoding it in the background; then it starts decoding the
// neighbours.
func (u *ui) showImage(i int) {
	if i < 0 || i >= len(u.images) || u.st == nil {
		return
	}
	u.view.CancelGesture()
	u.selected = i
	im := u.images[i]
	if u.compare != nil && u.compare.imageID != im.ID {
		u.compare = nil
		u.compareBar.Hide()
	}
	u.imageID = im.ID
	if u.cancelDecode != nil {
		u.cancelDecode()
	}
	ctx, cancel := context.WithCancel(context.Background())
	u.cancelDecode = cancel
	u.loadOthers()
	u.loadSuggestions()
	if p := u.cache.Ready(im.ID); p != nil {
		u.view.SetImage(p)
		u.refreshBoxes()
		u.prefetchAround(i)
		if u.decoded != nil {
			u.decoded(im.ID, nil)
		}
		return
	}
	u.view.SetMessage("Loading " + filepath.Base(im.Path) + "…")
	u.updateStatus()
	path := u.st.ImagePath(im)
	go func() {
		p, err := u.cache.Get(ctx, im.ID, path)
		fyne.Do(func() {
			if ctx.Err() != nil {
				return // the user moved on
			}
			if err != nil {
				if errors.Is(err, fs.ErrNotExist) {
					u.view.SetMessage(fmt.Sprintf("Cannot show this image: %s is missing. Project ▸ Find moved images… looks for it.", filepath.Base(im.Path)))
				} else {
					u.view.SetMessage(fmt.Sprintf("Cannot show this image: %v", err))
				}
				u.updateStatus()
			} else {
				u.view.SetImage(p)
				u.refreshBoxes()
			}
			u.prefetchAround(i)
			if u.decoded != nil {
				u.decoded(im.ID, err)
			}
		})
	}()
}

func (u *ui) prefetchAround(i int) {
	if !u.prefetch || u.st == nil {
		return
	}
	r := u.nav.rowOf(i)
	for _, d := range []int{1, -1} {
		if j := r + d; r >= 0 && j >= 0 && j < len(u.nav.shown) {
			im := u.images[u.nav.shown[j]]
			u.cache.Prefetch(im.ID, u.st.ImagePath(im))
		}
	}
}

// loadOthers reads the other annotators' boxes on the image on screen.
func (u *ui) loadOthers() {
	u.other = nil
	if u.st == nil || u.imageID == 0 {
		return
	}
	ls, err := u.st.Labels(context.Background(), project.LabelFilter{ImageID: u.imageID})
	if err != nil {
		u.showError(err)
		return
	}
	for _, l := range ls {
		if l.AnnotatorID != u.me.ID {
			u.other = append(u.other, l)
		}
	}
}

// ---- boxes ----

// refreshBoxes shows the person's boxes and (as a read-only layer) the
// others' on the image on screen.
func (u *ui) refreshBoxes() {
	if u.st == nil || u.selected < 0 || u.view.Image() == nil {
		u.updateStatus()
		return
	}
	names := map[int64]string{}
	for _, a := range u.annotators {
		names[a.ID] = a.Name
	}
	if c := u.compare; c != nil && c.imageID == u.imageID {
		u.view.SetItems(c.items(u))
		u.updateClassBar()
		u.updateStatus()
		return
	}
	var items []canvas.Item
	for _, l := range u.other {
		if l.AnnotatorID == u.me.ID {
			continue
		}
		c := u.classBy[l.ClassID]
		items = append(items, canvas.Item{Key: -l.ID, Box: l.Box, Color: c.Color, Caption: c.Name + " · " + names[l.AnnotatorID], ReadOnly: true})
	}
	if u.sess != nil {
		boxes, err := u.sess.Boxes(context.Background(), u.imageID)
		if err != nil {
			u.showError(err)
		}
		for _, k := range ops.SortedKeys(boxes) {
			l := boxes[k]
			c := u.classBy[l.ClassID]
			items = append(items, canvas.Item{Key: k, Box: l.Box, Color: c.Color, Caption: c.Name})
		}
	}
	items = append(items, u.suggestionItems()...)
	u.view.SetItems(items)
	u.updateClassBar()
	u.updateStatus()
}

func (u *ui) createBox(b project.Box) {
	if u.comparing() {
		return
	}
	if u.sess == nil {
		img := u.imageID
		u.askAnnotatorThen(func() {
			if u.imageID == img {
				u.createBox(b)
			}
		})
		return
	}
	if u.current == 0 {
		dialog.ShowInformation("No class yet", "Add a class in the panel on the right (Add…) before drawing boxes.", u.win)
		return
	}
	k, err := u.sess.Create(context.Background(), u.imageID, u.current, b)
	u.afterEdit(err)
	u.view.Select(k)
}

// edit changes the given boxes of the image on screen.
func (u *ui) edit(what string, f func(int64, project.Label) project.Label, keys ...int64) {
	if !u.needAnnotator() || len(keys) == 0 {
		return
	}
	u.afterEdit(u.sess.Change(context.Background(), u.imageID, what, f, keys...))
}

func (u *ui) myKeys() []int64 {
	if u.sess == nil || u.imageID == 0 {
		return nil
	}
	boxes, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		return nil
	}
	return ops.SortedKeys(boxes)
}

func (u *ui) deleteSelected() {
	if _, ok := u.selectedSuggestion(); ok {
		u.rejectSuggestion()
		return
	}
	if k := u.view.Selected(); k != 0 && u.needAnnotator() {
		u.afterEdit(u.sess.Delete(context.Background(), u.imageID, "delete a box", k))
	}
}

func (u *ui) deleteAll() {
	if u.comparing() {
		return
	}
	if keys := u.myKeys(); len(keys) > 0 {
		u.afterEdit(u.sess.Delete(context.Background(), u.imageID, fmt.Sprintf("delete %s", ops.Plural(len(keys), "box")), keys...))
	}
}

func (u *ui) classAll(classID int64) {
	if classID == 0 {
		return
	}
	name := u.classBy[classID].Name
	u.edit("make every box "+name, func(_ int64, l project.Label) project.Label { l.ClassID = classID; return l }, u.myKeys()...)
}

func (u *ui) duplicate() {
	k := u.view.Selected()
	if k == 0 || !u.needAnnotator() {
		return
	}
	bd := u.view.Limits
	if p := u.view.Image(); p != nil {
		w, h := p.Size()
		bd.W, bd.H = float64(w), float64(h)
	}
	keys, err := u.sess.Duplicate(context.Background(), u.imageID, func(b project.Box) project.Box {
		return bd.Fit(b.Translate(duplicateOffset, duplicateOffset))
	}, k)
	u.afterEdit(err)
	if len(keys) > 0 {
		u.view.Select(keys[0])
	}
}

// pickClass makes a class current; a selected box takes it too.
func (u *ui) pickClass(id int64) {
	if _, ok := u.classBy[id]; !ok {
		return
	}
	u.current = id
	if sid, ok := suggestionOf(u.view.Selected()); ok {
		u.editSuggestion(sid, func(g *project.Suggestion) { g.ClassID = id })
		return
	}
	if k := u.view.Selected(); k != 0 {
		u.edit("change class", func(_ int64, l project.Label) project.Label { l.ClassID = id; return l }, k)
		return
	}
	u.updateClassBar()
}

func (u *ui) undo() { u.history(true) }
func (u *ui) redo() { u.history(false) }

func (u *ui) history(back bool) {
	if u.sess == nil || u.comparing() {
		return
	}
	var img int64
	var err error
	if back {
		img, err = u.sess.Undo(context.Background())
	} else {
		img, err = u.sess.Redo(context.Background())
	}
	if img == 0 && err == nil {
		return
	}
	if img != u.imageID {
		u.selectImageID(img)
	}
	u.reloadSuggestions() // an undone or redone decision changes them
	u.afterEdit(err)
}

// afterEdit redraws after an edit and says whether it was saved. The
// counts follow the session's boxes on the image on screen.
func (u *ui) afterEdit(err error) {
	u.recount()
	u.refreshBoxes()
	u.updateUndo()
	if err != nil {
		u.saveFailed(err)
	} else {
		u.savedNow()
	}
}

// recount brings the counts of the image on screen up to date with the
// session's boxes.
func (u *ui) recount() {
	if u.sess == nil || u.imageID == 0 {
		return
	}
	boxes, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		// The counts would go stale silently; say so instead.
		u.showError(fmt.Errorf("counting the boxes on this image: %w", err))
		return
	}
	now := map[int64]int{}
	for _, l := range u.other {
		now[l.ClassID]++
	}
	for _, l := range boxes {
		now[l.ClassID]++
	}
	for c, n := range u.byClass[u.imageID] {
		u.classTotal[c] -= n
	}
	for c, n := range now {
		u.classTotal[c] += n
	}
	u.byClass[u.imageID] = now
	pairs := map[[2]int64]int{}
	for _, l := range u.other {
		pairs[[2]int64{l.ClassID, l.AnnotatorID}]++
	}
	for _, l := range boxes {
		pairs[[2]int64{l.ClassID, u.me.ID}]++
	}
	u.byPair[u.imageID] = pairs
	if u.byAnnotator[u.imageID] == nil {
		u.byAnnotator[u.imageID] = map[int64]int{}
	}
	u.byAnnotator[u.imageID][u.me.ID] = len(boxes)
	pc := u.perImg[u.imageID]
	pc.Labels = len(u.other) + len(boxes)
	u.perImg[u.imageID] = pc
	if u.selected >= 0 && u.images[u.selected].Status == project.StatusNew && len(boxes) > 0 {
		u.images[u.selected].Status = project.StatusStarted // as the store did
	}
	u.nav.refreshImage(u.imageID)
}

func (u *ui) flush() {
	if u.sess == nil {
		return
	}
	if err := u.sess.Flush(context.Background()); err != nil {
		u.saveFailed(err)
		return
	}
	u.savedNow()
}

// retryEvery is how often unwritten edits are tried again by themselves.
var retryEvery = 10 * time.Second

// scheduleRetry tries the queued writes again after a while, quietly
// (the failure was shown once), until they are written.
func (u *ui) scheduleRetry() {
	if u.retrying {
		return
	}
	u.retrying = true
	sess := u.sess
	time.AfterFunc(retryEvery, func() {
		fyne.Do(func() {
			u.retrying = false
			if u.st == nil || u.sess == nil || u.sess != sess || sess.Unsaved() == 0 {
				return
			}
			if err := sess.Flush(context.Background()); err != nil {
				u.saved.SetText(fmt.Sprintf("⚠ NOT SAVED: %s waiting; trying again every %d s", ops.Plural(sess.Unsaved(), "edit"), int(retryEvery.Seconds())))
				u.scheduleRetry()
				return
			}
			u.savedNow()
		})
	})
}

// savedNow shows the quiet indicator.
func (u *ui) savedNow() {
	if u.sess != nil && u.sess.Unsaved() > 0 {
		return
	}
	u.saved.SetText("✓ saved " + time.Now().Format("15:04:05"))
	u.retry.Hide()
}

// saveFailed says clearly that an edit is not on disk yet; the edit stays
// on screen and in the queue, and is written on the next edit or retry.
func (u *ui) saveFailed(err error) {
	n := 0
	if u.sess != nil {
		n = u.sess.Unsaved()
	}
	u.saved.SetText(fmt.Sprintf("⚠ NOT SAVED: %s waiting", ops.Plural(n, "edit")))
	u.retry.Show()
	u.scheduleRetry()
	dialog.ShowError(fmt.Errorf("%w\n\nYour edits are kept in this window and will be written when saving works again (free some disk space or make the project file writable, then press Retry saving). Do not close Boxwright until the status says saved", err), u.win)
}

func (u *ui) updateUndo() {
	set := func(b *widget.Button, what, verb string) {
		if what == "" {
			b.Disable()
		} else {
			b.Enable()
		}
	}
	if u.sess == nil {
		u.undoBtn.Disable()
		u.redoBtn.Disable()
		return
	}
	set(u.undoBtn, u.sess.CanUndo(), "Undo")
	set(u.redoBtn, u.sess.CanRedo(), "Redo")
}

// updateStatus writes the status line: image, pointer, selection, zoom.
func (u *ui) updateStatus() {
	if u.st == nil || u.selected < 0 || u.selected >= len(u.images) {
		return
	}
	im := u.images[u.selected]
	parts := []string{fmt.Sprintf("%s  %d×%d px  %s", filepath.Base(im.Path), im.Width, im.Height, statusWord(im.Status))}
	if u.pointer != "" {
		parts = append(parts, u.pointer)
	}
	if k := u.view.Selected(); k != 0 {
		for _, it := range u.view.Items() {
			if it.Key == k {
				parts = append(parts, fmt.Sprintf("selected %s %.0f × %.0f px at (%.0f, %.0f)", it.Caption, it.Box.Width(), it.Box.Height(), it.Box.X0, it.Box.Y0))
			}
		}
	}
	if u.me.ID == 0 {
		parts = append(parts, "no annotator chosen: Project ▸ Change annotator…")
	}
	u.status.SetText(strings.Join(parts, "   ·   "))
	u.zoom.SetText(fmt.Sprintf("%.0f %%", 100*u.view.Transform().Scale))
}

// ---- classes ----

func (u *ui) updateClassBar() {
	here := map[int64]int{}
	for c, n := range u.byClass[u.imageID] {
		here[c] = n
	}
	u.bar.SetData(u.classes, here, u.classTotal, u.current)
}

func (u *ui) classesChanged() {
	if err := u.reload(); err != nil {
		u.showError(err)
	}
	// Labels may have moved class or gone: start the history afresh, since
	// its steps describe boxes as they were.
	if u.sess != nil {
		if err := u.sess.Flush(context.Background()); err == nil {
			u.sess = ops.NewSession(u.st, u.me)
		}
	}
	u.loadOthers()
	u.refreshBoxes()
	u.updateUndo()
}

func (u *ui) showKeys() {
	t := widget.NewTextGridFromString(keysHelp)
	d := dialog.NewCustom("Keys and mouse", "Close", container.NewVScroll(t), u.win)
	d.Resize(fyne.NewSize(720, 620))
	d.Show()
}

const keysHelp = `DRAWING AND EDITING (click the image first)
  drag on empty image       draw a box of the current class
  click a box               select it (the smallest box under the pointer)
  drag inside a box         move it          drag a white handle   resize it
  arrows                    nudge 1 px       Shift+arrows          nudge 10 px
  Ctrl+arrows               resize by the bottom-right corner (Shift: 10 px)
  1 … 9, 0                  current class; a selected box takes it
  Ctrl+1 … Ctrl+0           give every one of my boxes on this image that class
  D                         duplicate the selected box
  Delete or Backspace       delete the selected box
  Ctrl+Delete               delete all my boxes on this image
  Tab / Shift+Tab           select the next / previous box
  C                         cycle through the boxes under the pointer
  Esc                       cancel a drag, or clear the selection
  Ctrl+Z                    undo      Ctrl+Shift+Z or Ctrl+Y   redo

SUGGESTIONS (a model's boxes: dotted, tinted, "suggested … score")
  click a suggestion        select it; drag it or press a number key to correct it
  A                         accept it (as corrected when you changed it)
  Z, Delete                 reject it
  Shift+A                   accept every suggestion on this image above the threshold
  Ctrl+Z                    undoes a decision like any edit
  Ctrl+F                    find objects like the selected box (by correlation)
  Ctrl+R                    review one by one (A accept, Z reject, S skip, U undo)
  Ctrl+J                    review a grid of crops of one class

VIEW
  wheel                     zoom around the pointer (5 % … 3200 %)
  + / -                     zoom in / out        F  fit      R  actual pixels
  right-button drag, or Space held with a left drag   pan
  arrows with nothing selected   pan
  G                         guide lines through the pointer
  T                         show or hide the class-name tags (crowded images)
  O                         show or hide other annotators' boxes (dashed)

IMAGES
  N or Page Down            next image     B or Page Up   previous image
  U                         next unfinished image
  Enter                     mark done and go to the next unfinished image
  X                         skip this image and go on
  Home / End                first / last image

PROJECT
  Ctrl+O open   Ctrl+N new   Ctrl+I add images   Ctrl+L import labels
  Ctrl+E export dataset   Ctrl+G annotator agreement   H, ? or F1   this help

Every edit is saved at once; the status bar says "saved".`
