package gui

import (
	"context"
	"image"
	"image/color"
	"image/jpeg"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/store/postgres"
	"boxwright/store/postgres/pgtest"
)

// Two windows on one server project, labelling as ines and as tomas: a
// box ines draws appears in tomas's window among the others' boxes of
// the image on screen, and in its image counts, without tomas doing
// anything.
// teamServer is a server project on a private server with two images,
// a class buoy and annotators ines and tomas (passwords NAME-pw).
func teamServer(t *testing.T) *pgtest.Server {
	t.Helper()
	t.Setenv("XDG_CACHE_HOME", t.TempDir()) // the image cache of this test
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(t, "postgres", `CREATE DATABASE harbour OWNER olga`)
	ctx := context.Background()
	owner, err := postgres.Create(ctx, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for i, name := range []string{"a.jpg", "b.jpg"} {
		img := image.NewRGBA(image.Rect(0, 0, 320, 240))
		for p := range img.Pix {
			img.Pix[p] = uint8(40*i + p%7)
		}
		img.Set(5, 5, color.White)
		f, _ := os.Create(filepath.Join(dir, name))
		jpeg.Encode(f, img, nil)
		f.Close()
	}
	if rep, err := owner.AddImages(ctx, []string{dir}, project.IntakeOptions{}); err != nil || rep.Added != 2 {
		t.Fatalf("intake: %+v, %v", rep, err)
	}
	if _, err := owner.AddClass(ctx, project.Class{Name: "buoy"}); err != nil {
		t.Fatal(err)
	}
	for _, who := range []string{"ines", "tomas"} {
		if _, err := owner.AddMember(ctx, who, postgres.KindAnnotator, who+"-pw"); err != nil {
			t.Fatal(err)
		}
	}
	owner.Close()

	return srv
}

// openServerAs opens the server project in a test window as who.
func openServerAs(t *testing.T, srv *pgtest.Server, who string) (*ui, chan error) {
	t.Helper()
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = who
	u.win.Resize(fyne.NewSize(1000, 700))
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	if err := u.openProject(srv.URL(who, who+"-pw", "harbour")); err != nil {
		t.Fatalf("open as %s: %v", who, err)
	}
	t.Cleanup(u.closeProject)
	return u, decoded
}

func TestTwoWindowsSeeEachOther(t *testing.T) {
	srv := teamServer(t)
	ctx := context.Background()
	ines, inesDecoded := openServerAs(t, srv, "ines")
	tomas, tomasDecoded := openServerAs(t, srv, "tomas")
	waitDecoded(t, inesDecoded)
	waitDecoded(t, tomasDecoded)
	heard := make(chan []backend.Change, 10)
	tomas.onChanges = func(cs []backend.Change) { heard <- cs }
	if ines.imageID != tomas.imageID || ines.imageID == 0 {
		t.Fatalf("the windows show images %d and %d", ines.imageID, tomas.imageID)
	}
	before := tomas.perImg[tomas.imageID].Labels

	drawn := time.Now()
	ines.view.OnCreate(project.Box{X0: 10, Y0: 10, X1: 60, Y1: 50})
	if mine, err := ines.sess.Boxes(ctx, ines.imageID); err != nil || len(mine) != 1 {
		t.Fatalf("ines's window has %d boxes after drawing one (%v)", len(mine), err)
	}
	deadline := time.After(10 * time.Second)
	for {
		select {
		case <-heard:
		case <-deadline:
			t.Fatalf("tomas's window did not show ines's box within 10 s (others: %d)", len(tomas.other))
		}
		if len(tomas.other) == 1 {
			break
		}
	}
	t.Logf("ines's box reached tomas's window %v after she drew it", time.Since(drawn).Round(time.Millisecond))
	if got := tomas.other[0].Box; got != (project.Box{X0: 10, Y0: 10, X1: 60, Y1: 50}) {
		t.Errorf("tomas sees the box at %v", got)
	}
	if got := tomas.perImg[tomas.imageID].Labels; got != before+1 {
		t.Errorf("tomas's image counts %d labels, want %d", got, before+1)
	}

	// Both claim the image they look at, and each is told of the other.
	waitFor(t, "tomas's window names ines on his image", func() bool {
		return strings.Contains(tomas.status.Text, "also on this image: ines")
	})
	if !strings.Contains(tomas.status.Text, "ines") {
		t.Errorf("status line %q", tomas.status.Text)
	}

	// The image cache holds the two images tomas's window fetched.
	tomas.showImageCache()
	if c, ok := tomas.raw.(backend.ImageCache); !ok {
		t.Error("a server project has no image cache")
	} else if use, err := c.ImageCacheUse(); err != nil || use.Files < 1 {
		t.Errorf("image cache %+v, %v", use, err)
	}
	if got := humanBytes(3 << 20); got != "3.0 MiB" {
		t.Errorf("humanBytes(3 MiB) = %q", got)
	}

	// The image list's thumbnails are the server's stored ones (192 px
	// at most), not made from the 320 px image.
	if img, err := tomas.nav.thumbSource(tomas.st, tomas.images[1])(); err != nil || img.Bounds().Dx() > 192 {
		t.Errorf("thumbnail source: %v, %v; want the stored thumbnail", img.Bounds(), err)
	}

	// What an annotator may not do is off, with the reason.
	if !strings.Contains(tomas.bar.lockedWhy, "owners change classes") || !tomas.bar.addBtn.Disabled() {
		t.Errorf("class tools for an annotator: %q, add disabled %v", tomas.bar.lockedWhy, tomas.bar.addBtn.Disabled())
	}
	for _, it := range append(tomas.ownerItems, tomas.reviewerItems...) {
		if !it.Disabled || !strings.Contains(it.Label, "only)") {
			t.Errorf("menu item %q is on for an annotator, or says no reason", it.Label)
		}
	}
	if err := tomas.mayDecide(); err == nil || !strings.Contains(err.Error(), "Only reviewers") {
		t.Errorf("an annotator deciding: %v", err)
	}
}

// The server restarting under an open window: the edit made while it is
// down is kept, the status bar says it is not saved, and the retry path
// writes it once the server is back; nothing is lost.
func TestServerRestartLosesNoEdit(t *testing.T) {
	old := retryEvery
	retryEvery = 200 * time.Millisecond
	defer func() { retryEvery = old }()
	srv := teamServer(t)
	ines, decoded := openServerAs(t, srv, "ines")
	waitDecoded(t, decoded)
	ines.view.OnCreate(project.Box{X0: 10, Y0: 10, X1: 60, Y1: 50})
	srv.Stop()
	ines.view.OnCreate(project.Box{X0: 100, Y0: 100, X1: 150, Y1: 140})
	if !strings.Contains(ines.saved.Text, "NOT SAVED") {
		t.Errorf("status while the server is down: %q", ines.saved.Text)
	}
	t.Logf("down: saved %q, unsaved %d, status %q", ines.saved.Text, ines.sess.Unsaved(), ines.status.Text)
	srv.Start(t)
	waitFor(t, "the edit is written after the restart", func() bool { return ines.sess.Unsaved() == 0 })
	s, err := postgres.Open(context.Background(), srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ls, err := s.Labels(context.Background(), project.LabelFilter{})
	if err != nil || len(ls) != 2 {
		t.Fatalf("labels after the restart: %d, %v; want both boxes", len(ls), err)
	}
}

// An owner hands the images out in the window; the annotator's image list
// can then show only the images handed to them, and follows a new
// hand-out by itself.
func TestHandOutImages(t *testing.T) {
	srv := teamServer(t)
	srv.Exec(t, "postgres", `ALTER ROLE olga PASSWORD 'olga-pw'`)
	olga := newUI(test.NewTempApp(t))
	olga.win.Resize(fyne.NewSize(1000, 700))
	if err := olga.openProject(srv.URL("olga", "olga-pw", "harbour")); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(olga.closeProject)
	for _, it := range olga.ownerItems {
		if it.Disabled {
			t.Errorf("%q is off for the owner", it.Label)
		}
	}
	tomas, decoded := openServerAs(t, srv, "tomas")
	waitDecoded(t, decoded)
	if len(tomas.assigned) != 0 {
		t.Fatalf("handed to tomas before any hand-out: %v", tomas.assigned)
	}
	a := olga.raw.(backend.Assigner)
	var ids []int64
	for _, an := range olga.annotators {
		ids = append(ids, an.ID)
	}
	ims := []int64{olga.images[0].ID, olga.images[1].ID}
	if _, err := a.Assign(context.Background(), ims, ids, 1); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "tomas's window hears of the hand-out", func() bool { return len(tomas.assigned) == 1 })
	tomas.nav.who.SetSelected(handedToMe)
	if len(tomas.nav.shown) != 1 {
		t.Errorf("handed to me shows %d images, want 1", len(tomas.nav.shown))
	}
}
