package gui

import (
	"context"
	"image/png"
	"os"
	"path/filepath"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/ops"
	"boxwright/assets/demo"
	"boxwright/suggest/exemplar"
)

// TestSimilarShots saves screenshots of the find-similar flow on the full
// demo into $BOXWRIGHT_SHOTS (for people to look at; skipped otherwise).
func TestSimilarShots(t *testing.T) {
	dir := os.Getenv("BOXWRIGHT_SHOTS")
	if dir == "" {
		t.Skip("set BOXWRIGHT_SHOTS to a folder to save the find-similar screenshots")
	}
	tmp := t.TempDir()
	if err := ops.MakeDemo(context.Background(), tmp, demo.Config{Seed: 1}, nil); err != nil {
		t.Fatal(err)
	}
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = "Ines"
	u.win.Resize(fyne.NewSize(1400, 900))
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	if err := u.openProject(filepath.Join(tmp, ops.DemoProjectName)); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(u.closeProject)
	waitDecoded(t, decoded)
	boxes, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		t.Fatal(err)
	}
	var first int64
	for k, l := range boxes {
		if u.classBy[l.ClassID].Name == "buoy" && (first == 0 || k < first) {
			first = k
		}
	}
	u.view.Select(first)
	save := func(name string, c fyne.Canvas) {
		f, err := os.Create(filepath.Join(dir, "similar-"+name+".png"))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		if err := png.Encode(f, c.Capture()); err != nil {
			t.Fatal(err)
		}
	}
	u.askFindSimilar()
	r := u.similar
	if r == nil {
		t.Fatal("no panel")
	}
	save("main-with-panel-open", u.win.Canvas())
	save("panel", r.w.Canvas())
	test.Tap(r.search)
	for i := 0; r.result == nil; i++ {
		if i == 1200 {
			t.Fatal("the search did not finish within 60 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
	time.Sleep(300 * time.Millisecond)
	save("preview", r.w.Canvas())
	r.thr.SetValue(similarFloor)
	save("preview-floor", r.w.Canvas())
	// The old default, gray at 0.60, over the project: a flood, previewed.
	r.where.SetSelected(similarAll)
	r.feature.SetSelected(similarFeatureName(exemplar.FeatureGray))
	r.thr.SetValue(0.6)
	r.result = nil
	test.Tap(r.search)
	for i := 0; r.result == nil; i++ {
		if i == 6000 {
			t.Fatal("the search of the project did not finish within 300 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
	time.Sleep(300 * time.Millisecond)
	save("preview-project", r.w.Canvas())
	test.Tap(r.keep)
	time.Sleep(300 * time.Millisecond)
	save("kept", r.w.Canvas())
	save("main-after-keep", u.win.Canvas())
	r.feature.SetSelected(similarFeatureName(exemplar.FeatureGradient))
	save("panel-gradient", r.w.Canvas())
}
