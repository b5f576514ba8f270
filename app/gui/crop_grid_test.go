package gui

import (
	"context"
	"image"
	"image/color"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/internal/testkit"
	"boxwright/canvas"
	"boxwright/project"
)

// countingLoader makes plain grey crops and counts the calls.
type countingLoader struct {
	calls atomic.Int64
	mu    sync.Mutex
	ids   map[int64]int
}

func (c *countingLoader) load(_ context.Context, g project.Suggestion) (image.Image, error) {
	c.calls.Add(1)
	c.mu.Lock()
	if c.ids == nil {
		c.ids = map[int64]int{}
	}
	c.ids[g.ID]++
	c.mu.Unlock()
	m := image.NewRGBA(image.Rect(0, 0, 8, 8))
	for i := range m.Pix {
		m.Pix[i] = 0x80
	}
	return m, nil
}

// addSynthetic stores n pending suggestions of one class on the demo
// images and returns the class.
func addSynthetic(t testing.TB, u *ui, n int) project.Class {
	t.Helper()
	ctx := context.Background()
	c := u.classes[0]
	rng := rand.New(rand.NewPCG(uint64(n), 3))
	gs := make([]project.Suggestion, 0, n)
	for i := range n {
		im := u.images[i%len(u.images)]
		x, y := rng.Float64()*float64(im.Width-60), rng.Float64()*float64(im.Height-60)
		gs = append(gs, project.Suggestion{ImageID: im.ID, ClassID: c.ID, Score: rng.Float64(), Source: "synthetic",
			Box: project.Box{X0: x, Y0: y, X1: x + 10 + rng.Float64()*50, Y1: y + 10 + rng.Float64()*50}})
	}
	if _, err := u.st.AddSuggestions(ctx, gs); err != nil {
		t.Fatal(err)
	}
	if err := u.reload(); err != nil {
		t.Fatal(err)
	}
	return c
}

// waitIdle waits until the grid's crop workers have delivered all they
// were asked for. The test driver runs their fyne.Do deliveries on the
// workers' goroutines, so the test must not touch the grid meanwhile.
func waitIdle(t testing.TB, g *cropGrid) {
	t.Helper()
	waitFor(t, "crop workers idle", func() bool {
		g.mu.Lock()
		defer g.mu.Unlock()
		return g.running == 0
	})
}

// waitFor polls cond for up to 10 s.
func waitFor(t testing.TB, what string, cond func() bool) {
	t.Helper()
	for end := time.Now().Add(10 * time.Second); time.Now().Before(end); time.Sleep(5 * time.Millisecond) {
		if cond() {
			return
		}
	}
	t.Fatalf("%s: not within 10 s", what)
}

func TestCropGridLoadsOnlyVisibleCrops(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	c := addSynthetic(t, u, 5000)
	var cl countingLoader
	g := newCropGrid(u, cl.load)
	g.win.Resize(fyne.NewSize(1100, 800))
	g.win.Show()
	// The grid's renderer is made here, before any crop worker runs: the
	// test driver runs the workers' redraws on their goroutines, and a
	// renderer made there raced the scrolling below (a nil offset hook).
	test.WidgetRenderer(g.grid)
	if err := g.setClass(c.ID); err != nil {
		t.Fatal(err)
	}
	if len(g.items) < 5000 {
		t.Fatalf("grid lists %d suggestions, want at least 5000", len(g.items))
	}
	waitFor(t, "first crops made", func() bool { return cl.calls.Load() > 0 && g.loaded() > 0 })
	waitIdle(t, g)
	first := g.loaded()
	t.Logf("first screen: %d crops asked for, %d loads", first, cl.calls.Load())
	// 1100×800 shows some 7×5 cells of 128 px; a screenful plus a row.
	if first > 120 || cl.calls.Load() > int64(first) {
		t.Errorf("showing the window asked for %d crops (%d loads), want about one screenful", first, cl.calls.Load())
	}
	for i := 1; i < len(g.items); i++ {
		if g.items[i-1].Score < g.items[i].Score {
			t.Fatalf("not sorted by score, highest first, at %d", i)
		}
	}

	// Scrolling a few screens asks for those cells only; scrolling back
	// finds the crops in the cache.
	for s := 1; s <= 5; s++ {
		g.grid.ScrollToOffset(float32(s) * 700)
		waitIdle(t, g)
	}
	after := g.loaded()
	if after <= first || after > 6*first+50 {
		t.Errorf("after scrolling five screens %d crops were asked for (first screen %d)", after, first)
	}
	g.grid.ScrollToTop()
	waitIdle(t, g)
	cl.mu.Lock()
	for id, n := range cl.ids {
		if n > 1 {
			t.Errorf("crop of suggestion %d made %d times", id, n)
			break
		}
	}
	cl.mu.Unlock()

	// Ascending order.
	g.ascending.SetChecked(true)
	for i := 1; i < len(g.items); i++ {
		if g.items[i-1].Score > g.items[i].Score {
			t.Fatalf("not sorted lowest first at %d", i)
		}
	}
}

func TestCropGridMarksAndDecides(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	ctx := context.Background()
	var cl countingLoader
	g := newCropGrid(u, cl.load)
	g.win.Resize(fyne.NewSize(900, 700))
	g.win.Show()
	if err := g.refreshClasses(); err != nil {
		t.Fatal(err)
	}
	if len(g.items) < 3 {
		t.Fatalf("the busiest class has %d pending suggestions", len(g.items))
	}
	waitIdle(t, g)
	class := g.classID
	items := append([]project.Suggestion(nil), g.items...)

	g.toggle(0)
	waitIdle(t, g)
	g.toggle(2)
	waitIdle(t, g)
	g.toggle(2) // unmarked again
	waitIdle(t, g)
	if len(g.marked) != 1 || !g.marked[items[0].ID] {
		t.Fatalf("marks %v", g.marked)
	}
	if g.rejectBtn.Text != "Reject marked (1)" || g.acceptBtn.Text == "" {
		t.Errorf("buttons %q, %q", g.acceptBtn.Text, g.rejectBtn.Text)
	}
	if err := g.rejectMarked(); err != nil {
		t.Fatal(err)
	}
	waitIdle(t, g)
	if st := state(t, u, items[0].ID); st != project.SuggestionRejected {
		t.Errorf("marked suggestion is %s after reject, want rejected", st)
	}
	for _, s := range items[1:] {
		if st := state(t, u, s.ID); st != project.SuggestionPending {
			t.Fatalf("unmarked suggestion %d is %s after reject, want pending", s.ID, st)
		}
	}
	if g.classID != class || len(g.items) != len(items)-1 || len(g.marked) != 0 {
		t.Fatalf("after reject the grid lists %d of class %d with %d marks", len(g.items), g.classID, len(g.marked))
	}

	// Mark one, accept the rest: they become the reviewer's labels.
	keep := g.items[0]
	g.toggle(0)
	waitIdle(t, g)
	if err := g.acceptRest(); err != nil {
		t.Fatal(err)
	}
	waitIdle(t, g)
	if st := state(t, u, keep.ID); st != project.SuggestionPending {
		t.Errorf("marked suggestion is %s after accept-rest, want pending", st)
	}
	for _, s := range items[1:] {
		if s.ID == keep.ID {
			continue
		}
		got, _ := u.st.Suggestion(ctx, s.ID)
		if got.State != project.SuggestionAccepted || got.LabelID == 0 {
			t.Fatalf("suggestion %d is %s (label %d) after accept-rest", s.ID, got.State, got.LabelID)
		}
	}
	if len(g.items) != 1 || g.items[0].ID != keep.ID {
		t.Errorf("after accept-rest the grid lists %d", len(g.items))
	}
	n, _ := u.st.CountSuggestions(ctx, project.SuggestionQuery{ClassID: class, State: project.SuggestionAccepted})
	if n != len(items)-2 {
		t.Errorf("%d accepted, want %d", n, len(items)-2)
	}

	// Undo of the bulk action.
	if err := g.undoLast(); err != nil {
		t.Fatal(err)
	}
	if n, _ := u.st.CountSuggestions(ctx, project.SuggestionQuery{ClassID: class}); n != len(items)-1 {
		t.Errorf("after undo %d pending, want %d", n, len(items)-1)
	}
}

func TestCropGridDefaultLoader(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	g := newCropGrid(u, nil)
	if err := g.refreshClasses(); err != nil {
		t.Fatal(err)
	}
	s := g.items[0]
	img, err := g.load(context.Background(), s)
	if err != nil {
		t.Fatal(err)
	}
	b := img.Bounds()
	if b.Dx() > cropSide || b.Dy() > cropSide || b.Dx() < 8 || b.Dy() < 8 {
		t.Errorf("crop is %v", b)
	}
}

func TestCropOfGeometry(t *testing.T) {
	// A 1000×800 image, black left of x=500 and white right of it.
	m := image.NewRGBA(image.Rect(0, 0, 1000, 800))
	for y := range 800 {
		for x := 500; x < 1000; x++ {
			m.SetRGBA(x, y, color.RGBA{255, 255, 255, 255})
		}
	}
	p, err := canvas.NewPyramid(context.Background(), m)
	if err != nil {
		t.Fatal(err)
	}
	// A 400×200 box centred on the edge: a 560-px square region, so the
	// crop is 128×128 with the edge in the middle.
	c := cropOf(p, project.Box{X0: 300, Y0: 300, X1: 700, Y1: 500}, 128, color.NRGBA{0, 200, 0, 255})
	if c.Rect.Dx() != 128 || c.Rect.Dy() != 128 {
		t.Fatalf("crop %v, want 128×128", c.Rect)
	}
	if l, r := c.RGBAAt(40, 20), c.RGBAAt(90, 20); l.R > 40 || r.R < 215 {
		t.Errorf("left %v should be black, right %v white", l, r)
	}
	// The box outline: region x0 = 220, scale 128/560, so x = 80·0.2286 ≈ 18.
	if o := c.RGBAAt(18, 64); o.G < 150 || o.R > 60 {
		t.Errorf("no box outline at (18, 64): %v", o)
	}
	// Near the image corner the region is moved onto the image.
	r := cropRegion(project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}, 1000, 800)
	if r.X0 != 0 || r.Y0 != 0 || r.Width() != 24 || r.Height() != 24 {
		t.Errorf("corner region %v", r)
	}
}

func TestCropCacheKeepsRecent(t *testing.T) {
	c := newCropCache(3)
	img := image.NewRGBA(image.Rect(0, 0, 1, 1))
	for id := int64(1); id <= 3; id++ {
		c.put(id, img)
	}
	c.get(1) // 1 is now the most recent, 2 the oldest
	c.put(4, img)
	if c.get(2) != nil || c.get(1) == nil || c.get(4) == nil || c.len() != 3 {
		t.Errorf("cache kept the wrong crops (len %d)", c.len())
	}
}

// BenchmarkCropGridScroll scrolls the grid over 5,000 suggestions of one
// class, one screen height a step, with the counting loader; each op is
// one scroll step including the cells' updates.
func BenchmarkCropGridScroll(b *testing.B) {
	path := testkit.SmallDemo(b)
	u := openDemoForReview(b, path)
	c := addSynthetic(b, u, 5000)
	var cl countingLoader
	g := newCropGrid(u, cl.load)
	g.win.Resize(fyne.NewSize(1100, 800))
	g.win.Show()
	test.WidgetRenderer(g.grid) // made before the workers run (see above)
	if err := g.setClass(c.ID); err != nil {
		b.Fatal(err)
	}
	rows := (len(g.items) + g.grid.ColumnCount() - 1) / max(1, g.grid.ColumnCount())
	step := float32(600)
	end := float32(rows) * 170
	off := float32(0)
	b.ResetTimer()
	for range b.N {
		off += step
		if off > end {
			off = 0
		}
		g.grid.ScrollToOffset(off)
	}
	b.StopTimer()
	b.ReportMetric(float64(g.loaded())/float64(b.N), "crops/op")
}
