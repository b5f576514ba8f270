package gui

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"

	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
)

// contextRegion is the part of the image shown around a box: the box
// with about its own size on each side, at least reviewContextMin image
// pixels a side, no larger than the image, centred on the box (past the
// image edge for a box near it: the view may pan that far, so the box is
// in the middle and its tag has room).
func contextRegion(b project.Box, p *canvas.Pyramid) project.Box {
	w, h := p.Size()
	side := func(lo, hi, max float64) (float64, float64) {
		n := math.Max(3*(hi-lo), reviewContextMin)
		n = math.Min(n, max)
		c := (lo + hi) / 2
		return c - n/2, c + n/2
	}
	x0, x1 := side(b.X0, b.X1, float64(w))
	y0, y1 := side(b.Y0, b.Y1, float64(h))
	return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}
}

// zoom shows q.region as large as the view allows.
func (q *reviewQueue) zoom() {
	s := q.view.Size()
	if q.region.Empty() || s.Width <= 0 || s.Height <= 0 || q.view.Image() == nil {
		return // laid out later: reviewLayout zooms again
	}
	t := canvas.Fit(q.region.Width(), q.region.Height(), float64(s.Width), float64(s.Height))
	t.OffsetX -= q.region.X0 * t.Scale
	t.OffsetY -= q.region.Y0 * t.Scale
	q.view.SetTransform(t)
}

// loadOthers reads the labels on the image (all annotators'), unless
// they are read already.
func (q *reviewQueue) loadOthers(imageID int64) {
	if q.othersFor == imageID {
		return
	}
	ls, err := q.u.st.Labels(context.Background(), project.LabelFilter{ImageID: imageID})
	if err != nil {
		dialog.ShowError(err, q.win)
	}
	q.others, q.othersFor = ls, imageID
}

// refreshItems shows the labels on the image as a read-only layer and the
// suggestion, as edited so far, as the one editable box.
func (q *reviewQueue) refreshItems() {
	g, ok := q.current()
	if !ok || q.view.Image() == nil {
		return
	}
	names := map[int64]string{}
	for _, a := range q.u.annotators {
		names[a.ID] = a.Name
	}
	items := make([]canvas.Item, 0, len(q.others)+1)
	for _, l := range q.others {
		c := q.u.classBy[l.ClassID]
		items = append(items, canvas.Item{Key: -l.ID, Box: l.Box, Color: c.Color, Caption: c.Name + " · " + names[l.AnnotatorID], Short: names[l.AnnotatorID], ReadOnly: true})
	}
	c := q.u.classBy[q.classID]
	caption := fmt.Sprintf("suggested %s %.2f · %s", c.Name, g.Score, g.Source)
	if q.classID != g.ClassID {
		caption = fmt.Sprintf("suggested %s (was %s) %.2f · %s", c.Name, q.u.classBy[g.ClassID].Name, g.Score, g.Source)
	}
	if q.box != g.Box {
		caption += " · box edited"
	}
	if cv, ok := q.cover(); ok {
		caption += fmt.Sprintf(" · covered by yours (IoU %.2f)", cv.IoU)
	}
	items = append(items, canvas.Item{Key: g.ID, Box: q.box, Color: c.Color, Caption: caption, Short: fmt.Sprintf("%.2f", g.Score), Dash: 3, Suggestion: true})
	q.view.SetItems(items)
}

// prefetch starts decoding the images of the next few undecided items.
func (q *reviewQueue) prefetch() {
	if !q.u.prefetch || q.u.st == nil {
		return
	}
	n := 0
	for i := q.pos + 1; i < len(q.items) && n < reviewPrefetch; i++ {
		g := q.items[i]
		if q.decided[g.ID] {
			continue
		}
		n++
		if im, ok := q.images[g.ImageID]; ok {
			q.u.cache.Prefetch(im.ID, fileOf(q.u.st, im))
		}
	}
}

func (q *reviewQueue) updateButtons() {
	if len(q.history) > 0 {
		q.undoBtn.Enable()
	} else {
		q.undoBtn.Disable()
	}
}

func (q *reviewQueue) updateStatus() {
	var parts []string
	for _, k := range []string{"accepted", "corrected", "rejected", "skipped"} {
		if n := q.counts[k]; n > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", n, k))
		}
	}
	if len(parts) > 0 {
		q.tally.SetText("in this window: " + strings.Join(parts, " · "))
	} else {
		q.tally.SetText("")
	}
	g, ok := q.current()
	if !ok {
		q.status.SetText(fmt.Sprintf("end of the queue · %d items", len(q.items)))
		return
	}
	name := fmt.Sprintf("%d", g.ImageID)
	if im, ok := q.images[g.ImageID]; ok {
		name = filepath.Base(im.Path)
	}
	text := fmt.Sprintf("item %d of %d · score %.2f · image %s", q.pos+1, len(q.items), g.Score, name)
	if cv, ok := q.cover(); ok {
		text += fmt.Sprintf(" · one of your own boxes already covers it (IoU %.2f): Z rejects it", cv.IoU)
	}
	q.status.SetText(text)
}

// cover is the reviewer's own box of the item's class that the item, as
// edited, repeats (duplicates.go), if any.
func (q *reviewQueue) cover() (ops.Cover, bool) {
	g, ok := q.current()
	if !ok || q.u.me.ID == 0 || q.othersFor != g.ImageID {
		return ops.Cover{}, false
	}
	own := map[int64]project.Label{}
	for _, l := range q.others {
		if l.AnnotatorID == q.u.me.ID {
			own[l.ID] = l
		}
	}
	return ops.BestCover(q.box, q.classID, own, q.u.dupIoU, 0)
}

func (q *reviewQueue) endMessage() string {
	if len(q.items) == 0 {
		return "No pending suggestions match these filters."
	}
	left := 0
	for _, g := range q.items {
		if !q.decided[g.ID] {
			left++
		}
	}
	if left == 0 {
		return "Every suggestion of this queue is decided."
	}
	return fmt.Sprintf("End of the queue. %d skipped and still pending: “Read the queue again” goes through them.", left)
}

// refreshMain makes the main window read the decisions made here.
func (q *reviewQueue) refreshMain() {
	if !q.dirty || q.u.st == nil {
		return
	}
	q.dirty = false
	if err := q.u.reload(); err != nil {
		q.u.showError(err)
		return
	}
	if q.u.selected >= 0 {
		q.u.showImage(q.u.selected)
	}
}

func (q *reviewQueue) showKeys() {
	dialog.ShowInformation("Review keys", reviewKeysHelp, q.win)
}

const reviewKeysHelp = `A  accept the suggestion (as edited: then it is stored as corrected)
Z  reject it
S  skip it (it stays pending)
U or Ctrl+Z  undo the last decision made in this window
1…9, 0  accept with the class of that key instead
Drag the box or its handles, or use the arrow keys (Shift: 10 px), to correct it.
+ / −  zoom, F  whole image, G  guide lines, T  name tags`

// reviewLayout gives the view all the room and zooms on the current item
// again whenever that room changes.
type reviewLayout struct {
	q    *reviewQueue
	last fyne.Size
}

func (l *reviewLayout) Layout(objs []fyne.CanvasObject, s fyne.Size) {
	for _, o := range objs {
		o.Move(fyne.NewPos(0, 0))
		o.Resize(s)
	}
	if s != l.last {
		l.last = s
		l.q.zoom()
	}
}

func (l *reviewLayout) MinSize(objs []fyne.CanvasObject) fyne.Size {
	var m fyne.Size
	for _, o := range objs {
		m = m.Max(o.MinSize())
	}
	return m
}
