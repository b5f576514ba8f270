package gui

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/test"

	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/store"
)

// openDemoForReview opens the small demo as Ines, the reviewer.
func openDemoForReview(t testing.TB, path string) *ui {
	t.Helper()
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = "Ines"
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(u.closeProject)
	if u.me.ID == 0 {
		t.Fatal("no reviewer chosen")
	}
	return u
}

// newShownQueue makes a queue whose shown hook feeds a channel.
func newShownQueue(u *ui) (*reviewQueue, chan int64) {
	q := newReviewQueue(u)
	ch := make(chan int64, 64)
	q.shown = func(id int64) { ch <- id }
	q.win.Resize(fyne.NewSize(1000, 700))
	q.win.Show()
	return q, ch
}

func waitShown(t testing.TB, ch <-chan int64, want int64) {
	t.Helper()
	deadline := time.After(20 * time.Second)
	for {
		select {
		case id := <-ch:
			if id == want {
				return
			}
		case <-deadline:
			t.Fatalf("suggestion %d was not shown within 20 s", want)
		}
	}
}

func state(t testing.TB, u *ui, id int64) project.SuggestionState {
	t.Helper()
	g, err := u.st.Suggestion(context.Background(), id)
	if err != nil {
		t.Fatal(err)
	}
	return g.State
}

func pendingIDs(t *testing.T, u *ui) []project.Suggestion {
	t.Helper()
	gs, err := u.st.QuerySuggestions(context.Background(), project.SuggestionQuery{})
	if err != nil {
		t.Fatal(err)
	}
	if len(gs) < 4 {
		t.Fatalf("the demo has only %d pending suggestions", len(gs))
	}
	return gs
}

func TestReviewQueueOrders(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	all := pendingIDs(t, u)
	q, _ := newShownQueue(u)
	if err := q.load(); err != nil {
		t.Fatal(err)
	}
	ids := func() []int64 {
		var out []int64
		for _, g := range q.items {
			out = append(out, g.ID)
		}
		return out
	}

	// Least confident first: |score − 0.5| ascending, on the queried list.
	want := slices.Clone(all)
	sort.SliceStable(want, func(i, j int) bool {
		di, dj := math.Abs(want[i].Score-0.5), math.Abs(want[j].Score-0.5)
		if di != dj {
			return di < dj
		}
		return want[i].ID < want[j].ID
	})
	var wantIDs []int64
	for _, g := range want {
		wantIDs = append(wantIDs, g.ID)
	}
	if got := ids(); !slices.Equal(got, wantIDs) {
		t.Errorf("least confident order %v, want %v", got, wantIDs)
	}
	if g, ok := q.current(); !ok || g.ID != wantIDs[0] {
		t.Errorf("current %d, want the head %d", g.ID, wantIDs[0])
	}

	// Around another threshold.
	q.threshold.SetValue(0.9)
	q.reorder()
	for i := 1; i < len(q.items); i++ {
		if math.Abs(q.items[i-1].Score-0.9) > math.Abs(q.items[i].Score-0.9) {
			t.Fatalf("around 0.9: item %d (%.3f) before item %d (%.3f)", i-1, q.items[i-1].Score, i, q.items[i].Score)
		}
	}

	q.order.SetSelected(orderHighestScore)
	for i := 1; i < len(q.items); i++ {
		if q.items[i-1].Score < q.items[i].Score {
			t.Fatalf("highest first: %.3f before %.3f", q.items[i-1].Score, q.items[i].Score)
		}
	}

	q.order.SetSelected(orderByImage)
	for i := 1; i < len(q.items); i++ {
		a, b := q.items[i-1], q.items[i]
		if a.ImageID > b.ImageID || (a.ImageID == b.ImageID && a.Score < b.Score) {
			t.Fatalf("image by image: (%d, %.3f) before (%d, %.3f)", a.ImageID, a.Score, b.ImageID, b.Score)
		}
	}
	if len(q.items) != len(all) {
		t.Errorf("queue has %d items, want %d", len(q.items), len(all))
	}

	// A class filter narrows the query.
	c := u.classBy[all[0].ClassID]
	q.class.SetSelected(c.Name)
	for _, g := range q.items {
		if g.ClassID != c.ID {
			t.Fatalf("class filter %s let class %d through", c.Name, g.ClassID)
		}
	}
}

func TestReviewQueueDecisions(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	pendingIDs(t, u)
	q, shown := newShownQueue(u)
	if err := q.load(); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()

	// The first item is on screen with its context and caption.
	first, _ := q.current()
	waitShown(t, shown, first.ID)
	if !strings.HasPrefix(q.status.Text, "item 1 of ") || !strings.Contains(q.status.Text, "score ") || !strings.Contains(q.status.Text, "image harbour-") {
		t.Errorf("status line %q", q.status.Text)
	}
	var sugItem, readOnly int
	for _, it := range q.view.Items() {
		if it.ReadOnly {
			readOnly++
			continue
		}
		sugItem++
		if it.Key != first.ID || !strings.HasPrefix(it.Caption, "suggested ") || !strings.Contains(it.Caption, first.Source) {
			t.Errorf("suggestion item %+v", it)
		}
	}
	if sugItem != 1 {
		t.Errorf("%d editable items, want the one suggestion", sugItem)
	}
	im := q.images[first.ImageID]
	sz := q.view.Size()
	vis := q.view.Transform().Visible(float64(im.Width), float64(im.Height), float64(sz.Width), float64(sz.Height))
	if vis.Intersect(first.Box) != first.Box {
		t.Errorf("the suggestion %v is not wholly in view %v", first.Box, vis)
	}
	if vis.Width() >= float64(im.Width) && vis.Height() >= float64(im.Height) && first.Box.Width() < 100 {
		t.Errorf("the view shows the whole image %v, not the suggestion's surroundings", vis)
	}

	// Accept with the key: accepted, and a label of the reviewer.
	q.typedRune('a')
	if got := state(t, u, first.ID); got != project.SuggestionAccepted {
		t.Fatalf("after A the suggestion is %s, want accepted", got)
	}
	g, _ := u.st.Suggestion(ctx, first.ID)
	l, err := u.st.Label(ctx, g.LabelID)
	if err != nil || l.AnnotatorID != u.me.ID || l.Box != first.Box || l.Origin != project.OriginAccepted {
		t.Fatalf("label from the accepted suggestion: %+v, %v", l, err)
	}

	// Reject.
	second, _ := q.current()
	if second.ID == first.ID {
		t.Fatal("accept did not move on")
	}
	waitShown(t, shown, second.ID)
	q.reject()
	if got := state(t, u, second.ID); got != project.SuggestionRejected {
		t.Fatalf("after reject: %s", got)
	}

	// Skip leaves it pending.
	third, _ := q.current()
	q.skip()
	if got := state(t, u, third.ID); got != project.SuggestionPending {
		t.Fatalf("after skip: %s", got)
	}

	// Correct the box in the view and change the class, then accept.
	fourth, ok := q.current()
	if !ok {
		t.Fatal("queue ended early")
	}
	waitShown(t, shown, fourth.ID)
	moved := fourth.Box.Translate(3, 2)
	q.view.OnChange(fourth.ID, moved)
	var other project.Class
	for _, c := range u.classes {
		if c.ID != fourth.ClassID && c.HotKey != "" {
			other = c
			break
		}
	}
	q.setClassByKey([]rune(other.HotKey)[0])
	q.accept()
	g, _ = u.st.Suggestion(ctx, fourth.ID)
	if g.State != project.SuggestionCorrected {
		t.Fatalf("accepting an edited box gave %s, want corrected", g.State)
	}
	l, _ = u.st.Label(ctx, g.LabelID)
	if l.Box != moved || l.ClassID != other.ID || l.Origin != project.OriginCorrected {
		t.Errorf("corrected label %+v, want box %v class %d", l, moved, other.ID)
	}

	// Undo restores pending, deletes the label and shows it again.
	q.undo()
	g, _ = u.st.Suggestion(ctx, fourth.ID)
	if g.State != project.SuggestionPending {
		t.Fatalf("after undo: %s", g.State)
	}
	if _, err := u.st.Label(ctx, l.ID); err == nil {
		t.Error("the corrected label survived the undo")
	}
	if cur, _ := q.current(); cur.ID != fourth.ID {
		t.Errorf("after undo the queue shows %d, want %d", cur.ID, fourth.ID)
	}
	q.typedRune('u')
	q.typedRune('u')
	if state(t, u, second.ID) != project.SuggestionPending || state(t, u, first.ID) != project.SuggestionPending {
		t.Error("two more undos did not bring back the reject and the first accept")
	}
	if cur, _ := q.current(); cur.ID != first.ID {
		t.Errorf("after undoing everything the queue shows %d, want the first %d", cur.ID, first.ID)
	}
	q.win.Close() // reloads the main window
}

// With no reviewer chosen nothing is decided.
func TestReviewQueueNeedsReviewer(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	q, _ := newShownQueue(u)
	if err := q.load(); err != nil {
		t.Fatal(err)
	}
	g, _ := q.current()
	u.me = project.Annotator{}
	q.accept()
	if state(t, u, g.ID) != project.SuggestionPending {
		t.Error("accepted without a reviewer")
	}
	if cur, _ := q.current(); cur.ID != g.ID {
		t.Error("moved on without a decision")
	}
}

// BenchmarkReviewQueueNext measures accept() until the next suggestion is
// on screen, on 12-megapixel JPEGs, consecutive items on different
// images. prefetched: the next image was decoded in the background while
// the reviewer looked at the current one (the untimed wait stands for
// that look); cold: the cache is emptied first, so the step waits for the
// decode.
func BenchmarkReviewQueueNext(b *testing.B) {
	dir := b.TempDir()
	imgDir := filepath.Join(dir, "images")
	if err := os.MkdirAll(imgDir, 0o755); err != nil {
		b.Fatal(err)
	}
	const n = 3
	benchJPEGs(b, imgDir, n)
	path := filepath.Join(dir, "review"+store.Extension)
	st, err := store.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	rep, err := st.AddImages(ctx, []string{imgDir}, project.IntakeOptions{})
	if err != nil || rep.Added != n {
		b.Fatalf("adding the images: %+v, %v", rep, err)
	}
	c, err := st.AddClass(ctx, project.Class{Name: "boat"})
	if err != nil {
		b.Fatal(err)
	}
	if _, err := st.AddAnnotator(ctx, "bench"); err != nil {
		b.Fatal(err)
	}
	ims, _ := st.Images(ctx)
	var gs []project.Suggestion
	for i := range 600 {
		x := float64(100 + (i*37)%3500)
		gs = append(gs, project.Suggestion{ImageID: ims[i%n].ID, ClassID: c.ID, Box: project.Box{X0: x, Y0: 500, X1: x + 200, Y1: 650},
			Score: 0.99 - float64(i)/1000, Source: "bench"})
	}
	if _, err := st.AddSuggestions(ctx, gs); err != nil {
		b.Fatal(err)
	}
	st.Close()
	for _, mode := range []string{"prefetched", "cold"} {
		b.Run(mode, func(b *testing.B) {
			u := newUI(test.NewTempApp(b))
			u.annotatorFlag = "bench"
			u.win.Resize(fyne.NewSize(1600, 1000))
			if err := u.openProject(path); err != nil {
				b.Fatal(err)
			}
			defer u.closeProject()
			q, shown := newShownQueue(u)
			q.win.Resize(fyne.NewSize(1600, 1000))
			q.order.SetSelected(orderHighestScore)
			if err := q.load(); err != nil {
				b.Fatal(err)
			}
			g, _ := q.current()
			waitShown(b, shown, g.ID)
			b.ResetTimer()
			for range b.N {
				b.StopTimer()
				if _, ok := q.current(); !ok {
					var ids []int64
					for _, h := range q.history {
						ids = append(ids, h.g.ID)
					}
					if err := u.st.Undecide(ctx, ids); err != nil {
						b.Fatal(err)
					}
					q.history = nil
					if err := q.load(); err != nil {
						b.Fatal(err)
					}
					g, _ := q.current()
					waitShown(b, shown, g.ID)
				}
				next := q.items[q.pos+1]
				im := q.images[next.ImageID]
				if mode == "cold" {
					u.cache.Clear()
				} else if _, err := u.cache.Get(ctx, im.ID, fileOf(u.st, im)); err != nil {
					b.Fatal(err)
				}
				for len(shown) > 0 {
					<-shown
				}
				b.StartTimer()
				q.accept()
				waitShown(b, shown, next.ID)
			}
		})
	}
}

// An item near the image edge is shown in the middle of the view (the
// view pans past the edge; it used to be pushed towards the window's
// edge), with its tag wholly inside the view.
func TestReviewQueueCentresItemAtImageEdge(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	q, shown := newShownQueue(u)
	if err := q.load(); err != nil {
		t.Fatal(err)
	}
	at, best := -1, math.Inf(1)
	for i, g := range q.items {
		im := q.images[g.ImageID]
		if d := float64(im.Width) - (g.Box.X0+g.Box.X1)/2; d < best { // the right edge: the tag reaches past it
			at, best = i, d
		}
	}
	if at < 0 || best > 40 {
		t.Fatalf("the demo has no suggestion within 40 px of an image's right edge (nearest %.0f px)", best)
	}
	g := q.items[at]
	q.pos = at
	q.show()
	waitShown(t, shown, g.ID)

	sz := q.view.Size()
	sx, sy := q.view.Transform().ToScreen((g.Box.X0+g.Box.X1)/2, (g.Box.Y0+g.Box.Y1)/2)
	if math.Abs(sx-float64(sz.Width)/2) > 1 || math.Abs(sy-float64(sz.Height)/2) > 1 {
		t.Errorf("item %v centred at (%.1f,%.1f) on screen, want the view's middle (%.1f,%.1f)", g.Box, sx, sy, sz.Width/2, sz.Height/2)
	}
	found := false
	for _, o := range test.WidgetRenderer(q.view).Objects() {
		txt, ok := o.(*fcanvas.Text)
		if !ok || !o.Visible() || !strings.HasPrefix(txt.Text, "suggested ") {
			continue
		}
		found = true
		p, s := o.Position(), o.Size()
		if p.X < 0 || p.Y < 0 || p.X+s.Width > sz.Width || p.Y+s.Height > sz.Height {
			t.Errorf("the tag %q lies at %v size %v, not wholly inside the %v view", txt.Text, p, s, sz)
		}
	}
	if !found {
		t.Errorf("the item's tag is not shown")
	}
}
