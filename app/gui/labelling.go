package gui

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
)

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

// ---- annotator ----

// comparing says (and shows) that the image is open read-only: from the
// agreement report, or because the whole project is.
func (u *ui) comparing() bool {
	if u.readOnlyWhy != "" {
		u.status.SetText("Editing is off: " + u.readOnlyWhy)
		return true
	}
	if u.compare == nil || u.compare.imageID != u.imageID {
		return false
	}
	u.status.SetText("This image is open for comparison, read-only: press Back to labelling to edit.")
	return true
}

// ---- navigation ----

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
		items = append(items, canvas.Item{Key: -l.ID, Box: l.Box, Color: c.Color, Caption: c.Name + " · " + names[l.AnnotatorID], Short: names[l.AnnotatorID], ReadOnly: true})
	}
	var boxes map[int64]project.Label
	if u.sess != nil {
		var err error
		boxes, err = u.sess.Boxes(context.Background(), u.imageID)
		if err != nil {
			u.showError(err)
		}
		for _, k := range ops.SortedKeys(boxes) {
			l := boxes[k]
			c := u.classBy[l.ClassID]
			items = append(items, canvas.Item{Key: k, Box: l.Box, Color: c.Color, Caption: c.Name})
		}
	}
	items = append(items, u.suggestionItems(boxes)...)
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
	u.checkDrawn(k, b, u.current)
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
	u.updateSummary()
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
		// Nothing on screen: say so, never the last project's image.
		switch {
		case u.st == nil:
			u.status.SetText("")
		case len(u.images) == 0:
			u.status.SetText("No images yet: Project ▸ Add image folder… (Ctrl+I)")
		default:
			u.status.SetText("No image chosen: pick one in the list on the left.")
		}
		u.zoom.SetText("")
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
	if u.alsoHere != "" {
		parts = append(parts, u.alsoHere)
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
	mine := map[int64]int{}
	for k, n := range u.byPair[u.imageID] {
		if u.me.ID != 0 && k[1] == u.me.ID {
			mine[k[0]] += n
		}
	}
	u.bar.SetData(u.classes, mine, here, u.classTotal, u.current, u.me.Name)
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
