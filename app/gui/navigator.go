package gui

import (
	"bytes"
	"context"
	"fmt"
	"image"
	"path/filepath"
	"strings"
	"sync"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/store/imagefile"
)

// thumbSide is the longest side of an image-list thumbnail, in pixels.
const thumbSide = 96

// thumbKeep bounds the thumbnails held in memory (about 36 KiB each).
const thumbKeep = 600

// Filter choices that select everything.
const (
	anyStatus    = "any status"
	anyClass     = "any class"
	anyAnnotator = "anyone"
	// handedToMe shows the images a server project's owner handed to
	// the person (Images ▸ Hand out images…).
	handedToMe = "handed to me"
)

// navigator is the image list beside the view: thumbnails, status, box
// counts and filters.
type navigator struct {
	u     *ui
	list  *widget.List
	shown []int // indices into u.images that pass the filters

	status, class, who *widget.Select
	quiet              bool // no reaction while options are set

	mu     sync.Mutex
	thumbs map[int64]image.Image
	order  []int64 // thumbnails by age, for trimming
	want   []thumbJob
	wake   chan struct{}
}

type thumbJob struct {
	id   int64
	load func() (image.Image, error)
}

func newNavigator(u *ui) *navigator {
	n := &navigator{u: u, thumbs: map[int64]image.Image{}, wake: make(chan struct{}, 1)}
	n.list = widget.NewList(func() int { return len(n.shown) }, n.newRow, n.updateRow)
	n.list.OnSelected = func(row widget.ListItemID) {
		if row >= 0 && row < len(n.shown) && n.shown[row] != u.selected {
			u.showImage(n.shown[row])
		}
		u.win.Canvas().Focus(u.view) // keys label the image, not scroll the list
	}
	pick := func(string) {
		if !n.quiet {
			n.apply()
			u.giveKeysBack()
		}
	}
	n.status = widget.NewSelect(nil, pick)
	n.class = widget.NewSelect(nil, pick)
	n.who = widget.NewSelect(nil, pick)
	opts := []string{anyStatus}
	for _, s := range project.ImageStatuses {
		opts = append(opts, statusWord(s))
	}
	n.quiet = true
	n.status.SetOptions(opts)
	n.status.SetSelected(anyStatus)
	n.quiet = false
	go n.thumbWorker()
	return n
}

func (n *navigator) filters() fyne.CanvasObject {
	return container.NewVBox(widget.NewLabelWithStyle("Show images", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		n.status, n.class, n.who)
}

// reload takes new class and annotator names and applies the filters.
func (n *navigator) reload() {
	u := n.u
	n.quiet = true
	cls := []string{anyClass}
	for _, c := range u.classes {
		cls = append(cls, "with "+c.Name)
	}
	who := []string{anyAnnotator}
	if u.assigned != nil {
		who = append(who, handedToMe)
	}
	for _, a := range u.annotators {
		who = append(who, "labelled by "+a.Name)
	}
	keep := func(s *widget.Select, opts []string, all string) {
		cur := s.Selected
		s.SetOptions(opts)
		found := false
		for _, o := range opts {
			found = found || o == cur
		}
		if !found {
			cur = all
		}
		s.SetSelected(cur)
	}
	keep(n.class, cls, anyClass)
	keep(n.who, who, anyAnnotator)
	n.quiet = false
	n.apply()
}

// ClearFilters shows every image again.
func (n *navigator) ClearFilters() {
	n.quiet = true
	n.status.SetSelected(anyStatus)
	n.class.SetSelected(anyClass)
	n.who.SetSelected(anyAnnotator)
	n.quiet = false
	n.apply()
}

// apply recomputes the rows from the filters and keeps the image on
// screen selected when it still passes.
func (n *navigator) apply() {
	u := n.u
	var classID, whoID int64
	for _, c := range u.classes {
		if n.class.Selected == "with "+c.Name {
			classID = c.ID
		}
	}
	for _, a := range u.annotators {
		if n.who.Selected == "labelled by "+a.Name {
			whoID = a.ID
		}
	}
	n.shown = n.shown[:0]
	for i, im := range u.images {
		if n.status.Selected != anyStatus && n.status.Selected != "" && statusWord(im.Status) != n.status.Selected {
			continue
		}
		if n.who.Selected == handedToMe && !u.assigned[im.ID] {
			continue
		}
		switch {
		case classID != 0 && whoID != 0: // that class by that annotator
			if u.byPair[im.ID][[2]int64{classID, whoID}] == 0 {
				continue
			}
		case classID != 0:
			if u.byClass[im.ID][classID] == 0 {
				continue
			}
		case whoID != 0:
			if u.byAnnotator[im.ID][whoID] == 0 {
				continue
			}
		}
		n.shown = append(n.shown, i)
	}
	n.list.UnselectAll()
	n.list.Refresh()
	if r := n.rowOf(u.selected); r >= 0 {
		n.list.Select(r)
	}
}

// rowOf is the list row of the i-th image, -1 when it is filtered out.
func (n *navigator) rowOf(i int) int {
	for r, j := range n.shown {
		if j == i {
			return r
		}
	}
	return -1
}

func (n *navigator) newRow() fyne.CanvasObject {
	thumb := &fcanvas.Image{FillMode: fcanvas.ImageFillContain, ScaleMode: fcanvas.ImageScaleFastest}
	thumb.SetMinSize(fyne.NewSize(64, 48))
	name := widget.NewLabelWithStyle("harbour-000.jpg", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	name.Truncation = fyne.TextTruncateEllipsis
	detail := widget.NewLabel("in progress · 00 boxes")
	detail.Truncation = fyne.TextTruncateEllipsis
	text := container.New(layout.NewCustomPaddedVBoxLayout(-2*theme.Padding()), name, detail)
	return container.NewBorder(nil, nil, thumb, nil, text)
}

func (n *navigator) updateRow(row widget.ListItemID, o fyne.CanvasObject) {
	u := n.u
	st := u.st // read once: a test driver may run this beside closeProject
	if row >= len(n.shown) || st == nil {
		return
	}
	im := u.images[n.shown[row]]
	box := o.(*fyne.Container)
	text := box.Objects[0].(*fyne.Container)
	thumb := box.Objects[1].(*fcanvas.Image)
	text.Objects[0].(*widget.Label).SetText(filepath.Base(im.Path))
	detail := rowDetail(im, u.perImg[im.ID])
	if on := u.claimsBy[im.ID]; len(on) > 0 {
		detail += " · " + strings.Join(on, ", ") + " on it"
	}
	text.Objects[1].(*widget.Label).SetText(detail)
	n.mu.Lock()
	t, ok := n.thumbs[im.ID]
	n.mu.Unlock()
	if !ok {
		n.request(im.ID, n.thumbSource(st, im))
	}
	if thumb.Image != t {
		thumb.Image = t
		thumb.Refresh()
	}
}

func rowDetail(im project.Image, c project.ImageCounts) string {
	s := fmt.Sprintf("%s · %s", statusWord(im.Status), ops.Plural(c.Labels, "box"))
	if c.Labels != 1 {
		s = fmt.Sprintf("%s · %d boxes", statusWord(im.Status), c.Labels)
	}
	if c.Pending > 0 {
		s += fmt.Sprintf(" · %d pending", c.Pending)
	}
	return s
}

// backgroundThumbnails is off in most GUI tests: the test driver runs a
// fyne.Do callback at once on the worker's goroutine, so a thumbnail
// arriving would redraw the list while the test itself does (a crash in
// the toolkit's list, seen on CI). In the program fyne.Do runs on the UI
// goroutine and nothing races.
var backgroundThumbnails = true

// request asks for a thumbnail; the newest requests are served first,
// since those are the rows on screen.
func (n *navigator) request(id int64, load func() (image.Image, error)) {
	if !backgroundThumbnails {
		return
	}
	n.mu.Lock()
	for _, j := range n.want {
		if j.id == id {
			n.mu.Unlock()
			return
		}
	}
	n.want = append(n.want, thumbJob{id, load})
	if len(n.want) > 64 {
		n.want = n.want[len(n.want)-64:] // rows long scrolled past
	}
	n.mu.Unlock()
	select {
	case n.wake <- struct{}{}:
	default:
	}
}

func (n *navigator) thumbWorker() {
	for range n.wake {
		for {
			n.mu.Lock()
			if len(n.want) == 0 {
				n.mu.Unlock()
				break
			}
			j := n.want[len(n.want)-1]
			n.want = n.want[:len(n.want)-1]
			n.mu.Unlock()
			var t image.Image
			if p := n.u.cache.Ready(j.id); p != nil {
				t = imagefile.Thumbnail(p.Level(p.Levels()-1), thumbSide)
			} else if img, err := j.load(); err == nil {
				t = imagefile.Thumbnail(img, thumbSide)
			} else {
				t = image.NewRGBA(image.Rect(0, 0, 4, 3)) // unreadable: an empty tile, the row says why when opened
			}
			n.mu.Lock()
			n.thumbs[j.id] = t
			n.order = append(n.order, j.id)
			for len(n.order) > thumbKeep {
				delete(n.thumbs, n.order[0])
				n.order = n.order[1:]
			}
			n.mu.Unlock()
			fyne.Do(func() {
				if n.u.st != nil {
					n.refreshImage(j.id)
				}
			})
		}
	}
}

// thumbSource reads the picture an image's thumbnail is made from: a
// server project's stored thumbnail (no image bytes are fetched for the
// list), else the image itself.
func (n *navigator) thumbSource(st backend.Project, im project.Image) func() (image.Image, error) {
	fromFile := func() (image.Image, error) {
		path, err := fileOf(st, im)()
		if err != nil {
			return nil, err
		}
		// A JPEG is decoded at the smallest DCT scale that still covers
		// the thumbnail: 1/8 of a 12 MP photo is 500×375.
		img, _, err := imagefile.DecodeAtLeast(path, imagefile.DefaultMaxPixels, thumbSide, thumbSide)
		return img, err
	}
	th, ok := st.(backend.Thumbnails)
	if !ok {
		if raw, isRaw := n.u.raw.(backend.Thumbnails); isRaw {
			th, ok = raw, true // st wraps it for the edit trace
		}
	}
	if !ok {
		return fromFile
	}
	return func() (image.Image, error) {
		if b, err := th.Thumbnail(context.Background(), im.ID); err == nil && len(b) > 0 {
			if img, _, err := image.Decode(bytes.NewReader(b)); err == nil {
				return img, nil
			}
		}
		return fromFile() // none stored, or unreadable: made from the image
	}
}

// refreshImage redraws the row of one image.
func (n *navigator) refreshImage(id int64) {
	for r, i := range n.shown {
		if i < len(n.u.images) && n.u.images[i].ID == id {
			n.list.RefreshItem(r)
			return
		}
	}
}
