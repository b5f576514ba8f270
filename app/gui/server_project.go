package gui

import (
	"context"
	"fmt"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/store/postgres"
)

// askOpenServer asks for a server project: a postgres:// address or
// @NAME from the connections file (where a password may be kept).
func (u *ui) askOpenServer() {
	e := widget.NewEntry()
	e.SetPlaceHolder("@harbour  or  postgres://you@server/harbour")
	file, _ := backend.ConnectionsFile()
	help := widget.NewLabel("A name from your connections file (" + file + "), written @NAME, " +
		"or a postgres:// address. Keep passwords in that file (mode 600) or in PostgreSQL's own password file, not here.")
	help.Wrapping = fyne.TextWrapWord
	d := dialog.NewForm("Open a server project", "Open", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Project", e),
		widget.NewFormItem("", help),
	}, func(ok bool) {
		if !ok || strings.TrimSpace(e.Text) == "" {
			return
		}
		arg := strings.TrimSpace(e.Text)
		u.status.SetText("Connecting to the server…")
		go func() {
			// Opening waits for the server: not on the event thread.
			err := u.openServer(arg)
			fyne.Do(func() {
				if err != nil {
					u.status.SetText("")
					u.showError(err)
				}
			})
		}()
	}, u.win)
	d.SetOnClosed(u.giveKeysBack)
	d.Resize(fyne.NewSize(560, 0))
	d.Show()
}

// openServer opens a server project and shows it (from any goroutine).
func (u *ui) openServer(arg string) error {
	s, err := backend.Open(arg)
	if err != nil {
		return err
	}
	done := make(chan error, 1)
	fyne.Do(func() { done <- u.showProject(arg, s, "") })
	return <-done
}

// watcher is what a project that announces changes offers (a server
// project); a file project does not.
type watcher interface {
	Watch(ctx context.Context, deliver func([]backend.Change)) error
}

// watchChanges follows what others commit to the open project and brings
// the screen up to date: the image list's counts and statuses, and the
// boxes of the image on screen. Changes are gathered for a moment so that
// one import is one refresh.
func (u *ui) watchChanges(w watcher) {
	ctx, cancel := context.WithCancel(context.Background())
	u.stopWatch = cancel
	var mu sync.Mutex
	var pending []backend.Change
	var timer *time.Timer
	flush := func() {
		mu.Lock()
		got := pending
		pending = nil
		timer = nil
		mu.Unlock()
		fyne.Do(func() {
			if ctx.Err() != nil || u.st == nil {
				return
			}
			u.applyChanges(got)
		})
	}
	go w.Watch(ctx, func(cs []backend.Change) {
		mu.Lock()
		defer mu.Unlock()
		pending = append(pending, cs...)
		if timer == nil {
			timer = time.AfterFunc(gatherChanges, flush)
		}
	})
}

// gatherChanges is how long changes are gathered before the screen is
// brought up to date (well within the 2 seconds a team expects).
var gatherChanges = 250 * time.Millisecond

// applyChanges brings the screen up to date after others' changes: the
// counts always; the image on screen when it was touched by someone else.
func (u *ui) applyChanges(cs []backend.Change) {
	here, others := false, false
	for _, c := range cs {
		mine := c.AnnotatorID != 0 && c.AnnotatorID == u.me.ID
		if c.Table == "*" || !mine {
			others = true
			if c.Table == "*" || c.ImageID == u.imageID {
				here = true
			}
		}
	}
	if !others {
		return // our own edits, already on screen
	}
	sel := u.imageID
	if err := u.reload(); err != nil {
		u.status.SetText(fmt.Sprintf("Could not read others' changes: %v", err))
		return
	}
	for _, c := range cs {
		if c.Table == "claims" || c.Table == "*" {
			u.readClaims()
			break
		}
	}
	for _, c := range cs {
		if c.Table == "assignments" || c.Table == "*" {
			u.readAssignments()
			u.nav.reload()
			break
		}
	}
	if here && sel == u.imageID {
		u.reloadSuggestions()
		u.loadOthers()
		u.refreshBoxes()
	}
	u.updateStatus()
	if u.onChanges != nil {
		u.onChanges(cs)
	}
}

// applyRole reads the person's role in a server project and turns off,
// with the reason, what the role may not do: the server would refuse it
// anyway (row-level security), but a person should see it before trying.
// A project file has no roles.
func (u *ui) applyRole(s backend.Project) {
	u.role, u.bar.lockedWhy = "", ""
	defer func() {
		owner := u.role == "" || u.role == postgres.KindOwner
		reviewer := owner || u.role == postgres.KindReviewer
		u.limitItems(u.ownerItems, owner, "owners only")
		u.limitItems(u.reviewerItems, reviewer, "reviewers only")
		if mm := u.win.MainMenu(); mm != nil {
			mm.Refresh()
		}
		u.updateClassBar()
	}()
	m, ok := s.(backend.Membership)
	if !ok {
		return
	}
	me, err := m.Me(context.Background())
	if err != nil {
		u.role = "none"
		u.bar.lockedWhy = "You are not on this project's team: you can look, and its owners can add you (boxwright team … add)."
	} else {
		u.role = me.Kind
		if me.Kind != postgres.KindOwner {
			u.bar.lockedWhy = fmt.Sprintf("Only the project's owners change classes; you are %s here.", withArticle(me.Kind))
		}
	}
}

// mayDecide refuses a decision on suggestions by someone whose role in a
// server project does not allow it, saying so.
func (u *ui) mayDecide() error {
	if u.role == "" || u.role == postgres.KindReviewer || u.role == postgres.KindOwner {
		return nil
	}
	return project.Explained(project.ErrNotAllowed, "Only reviewers and owners decide suggestions; you are %s in this project.", withArticle(u.role))
}

func withArticle(kind string) string {
	switch kind {
	case postgres.KindAnnotator, postgres.KindOwner:
		return "an " + kind
	case "none":
		return "not on the team"
	}
	return "a " + kind
}

// claimRenew is how often the claim on the image on screen is renewed
// (it lapses after postgres.ClaimLasts without one).
var claimRenew = time.Minute

// claimShown claims the image on screen in a server project, releasing
// the one before, and says in the status line who else is on it; the
// claim is renewed while the image stays on screen.
func (u *ui) claimShown(imageID int64) {
	c, ok := u.claimer()
	if !ok || u.me.ID == 0 {
		return
	}
	if u.stopClaim != nil {
		u.stopClaim()
	}
	ctx, cancel := context.WithCancel(context.Background())
	prev, me := u.claimed, u.me.ID
	u.claimed, u.alsoHere = imageID, ""
	u.stopClaim = cancel
	go func() {
		if prev != 0 && prev != imageID {
			c.Release(context.Background(), prev, me)
		}
		for {
			others, err := c.Claim(ctx, imageID, me)
			if err == nil {
				fyne.Do(func() {
					if ctx.Err() == nil && u.imageID == imageID {
						u.alsoHere = alsoOnIt(others)
						u.updateStatus()
					}
				})
			}
			select {
			case <-ctx.Done():
				return
			case <-time.After(claimRenew):
			}
		}
	}()
}

// releaseClaim ends this person's claim before the project closes.
func (u *ui) releaseClaim() {
	if u.stopClaim != nil {
		u.stopClaim()
	}
	if c, ok := u.claimer(); ok && u.claimed != 0 && u.me.ID != 0 {
		ctx, cancel := context.WithTimeout(context.Background(), 2*time.Second)
		c.Release(ctx, u.claimed, u.me.ID)
		cancel()
	}
	u.stopClaim, u.claimed, u.alsoHere = nil, 0, ""
}

// claimer is the open project's claims, when it has them (through the
// edit trace's wrapper too).
func (u *ui) claimer() (backend.Claimer, bool) {
	c, ok := u.raw.(backend.Claimer)
	return c, ok
}

func alsoOnIt(cs []backend.Claim) string {
	if len(cs) == 0 {
		return ""
	}
	names := make([]string, len(cs))
	for i, c := range cs {
		names[i] = fmt.Sprintf("%s (since %s)", c.Annotator, c.Since.Local().Format("15:04"))
	}
	return "also on this image: " + strings.Join(names, ", ")
}

// readClaims reads who is on which image (off the event thread) and
// shows it in the image list.
func (u *ui) readClaims() {
	c, ok := u.claimer()
	if !ok {
		return
	}
	me := u.me.ID
	go func() {
		cs, err := c.Claims(context.Background())
		if err != nil {
			return // the list keeps what it showed; the next change tries again
		}
		by := map[int64][]string{}
		byImage := map[int64][]backend.Claim{}
		for _, cl := range cs {
			if cl.AnnotatorID != me {
				by[cl.ImageID] = append(by[cl.ImageID], cl.Annotator)
				byImage[cl.ImageID] = append(byImage[cl.ImageID], cl)
			}
		}
		fyne.Do(func() {
			if u.me.ID != me {
				return // the annotator changed meanwhile
			}
			u.claimsBy = by
			u.alsoHere = alsoOnIt(byImage[u.imageID])
			u.nav.list.Refresh()
			u.updateStatus()
		})
	}()
}

// showImageCache shows how much of this machine's image cache a server
// project's images take, with a button to empty it (images are fetched
// again when shown).
func (u *ui) showImageCache() {
	c, ok := u.raw.(backend.ImageCache)
	if !ok {
		dialog.ShowInformation("Image cache", "A project file's images are read where they lie; only a server project's images are cached on this machine.", u.win)
		return
	}
	use, err := c.ImageCacheUse()
	if err != nil {
		u.showError(err)
		return
	}
	text := widget.NewLabel(fmt.Sprintf("%s of images (%s) in\n%s\nThe oldest are removed beyond %s.",
		humanBytes(use.Bytes), ops.Plural(use.Files, "file"), use.Dir, humanBytes(use.Limit)))
	text.Wrapping = fyne.TextWrapWord
	var d dialog.Dialog
	clear := widget.NewButton("Empty the cache", func() {
		if err := c.ClearImageCache(); err != nil {
			u.showError(err)
			return
		}
		d.Hide()
		u.status.SetText("Image cache emptied: images are fetched from the server again when shown.")
	})
	d = dialog.NewCustom("Image cache", "Close", container.NewVBox(text, clear), u.win)
	d.SetOnClosed(u.giveKeysBack)
	d.Resize(fyne.NewSize(520, 0))
	d.Show()
}

// humanBytes writes a size in the largest binary unit that keeps it at
// or above 1 (common practice: KiB, MiB, GiB).
func humanBytes(n int64) string {
	const unit = 1024
	if n < unit {
		return fmt.Sprintf("%d bytes", n)
	}
	v, suffix := float64(n), []string{"KiB", "MiB", "GiB", "TiB"}
	i := -1
	for v >= unit && i < len(suffix)-1 {
		v /= unit
		i++
	}
	return fmt.Sprintf("%.1f %s", v, suffix[i])
}

// readAssignments reads which images were handed to this person (a server
// project; nil for a file, which has no assignments) for the image list's
// "handed to me".
func (u *ui) readAssignments() {
	a, ok := u.raw.(backend.Assigner)
	if !ok {
		u.assigned = nil
		return
	}
	plan, err := a.Assignments(context.Background())
	if err != nil {
		return // kept as it was; the next change tries again
	}
	mine := map[int64]bool{}
	for im, to := range plan {
		if slices.Contains(to, u.me.ID) {
			mine[im] = true
		}
	}
	u.assigned = mine
}

// askHandOut asks an owner to hand the images out: to which annotators,
// and to how many of them each image goes.
func (u *ui) askHandOut() {
	a, ok := u.raw.(backend.Assigner)
	if !ok || !u.haveProject() {
		dialog.ShowInformation("Hand out images", "Images are handed out in a server project; in a project file everyone sees every image.", u.win)
		return
	}
	var names []string
	for _, an := range u.annotators {
		names = append(names, an.Name)
	}
	who := widget.NewCheckGroup(names, nil)
	each := widget.NewEntry()
	each.SetText("1")
	note := widget.NewLabel("Each image goes to this many of the annotators ticked, spread evenly: 1 gives disjoint batches; all of them, an agreement study. Earlier hand-outs of the images are replaced.")
	note.Wrapping = fyne.TextWrapWord
	d := dialog.NewForm("Hand out images", "Hand out", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Annotators", who),
		widget.NewFormItem("Each image to", each),
		widget.NewFormItem("", note),
	}, func(ok bool) {
		if !ok {
			return
		}
		k, err := strconv.Atoi(strings.TrimSpace(each.Text))
		if err != nil || k < 1 || k > len(who.Selected) {
			u.showError(fmt.Errorf("each image goes to a whole number of the %d annotators ticked, from 1 to %d", len(who.Selected), max(1, len(who.Selected))))
			return
		}
		var ids, ims []int64
		for _, an := range u.annotators {
			if slices.Contains(who.Selected, an.Name) {
				ids = append(ids, an.ID)
			}
		}
		for _, im := range u.images {
			ims = append(ims, im.ID)
		}
		plan, err := a.Assign(context.Background(), ims, ids, k)
		if err != nil {
			u.showError(err)
			return
		}
		u.readAssignments()
		u.nav.reload()
		u.status.SetText(fmt.Sprintf("%s handed out, each to %d of %s.", ops.Plural(len(plan), "image"), k, strings.Join(who.Selected, ", ")))
	}, u.win)
	d.SetOnClosed(u.giveKeysBack)
	d.Resize(fyne.NewSize(520, 0))
	d.Show()
}

// limitItems turns menu items on, or off with the reason in their label.
func (u *ui) limitItems(items []*fyne.MenuItem, allowed bool, why string) {
	if u.itemLabels == nil {
		u.itemLabels = map[*fyne.MenuItem]string{}
	}
	for _, it := range items {
		label, ok := u.itemLabels[it]
		if !ok {
			label = it.Label
			u.itemLabels[it] = label
		}
		it.Disabled = !allowed
		if allowed {
			it.Label = label
		} else {
			it.Label = label + " (" + why + ")"
		}
	}
}
