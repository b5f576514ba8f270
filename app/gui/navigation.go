package gui

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"path/filepath"

	"fyne.io/fyne/v2"

	"boxwright/project"
)

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
	if u.me.ID == 0 {
		u.askAnnotator() // a status is someone's
		return false
	}
	if err := u.st.SetImageStatus(context.Background(), im.ID, u.me.ID, s, u.me.ID); err != nil {
		u.saveFailed(fmt.Errorf("marking %s %s: %w", filepath.Base(im.Path), statusWord(s), err))
		return false
	}
	im.Status = s
	u.nav.refreshImage(im.ID)
	u.updateSummary()
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
	u.claimShown(im.ID)
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
	where := fileOf(u.st, im)
	go func() {
		p, err := u.cache.Get(ctx, im.ID, where)
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
			u.cache.Prefetch(im.ID, fileOf(u.st, im))
		}
	}
}
