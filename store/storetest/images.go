package storetest

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"

	"boxwright/project"
)

func init() {
	register(
		testCase{"IntakeFolder", intakeFolder},
		testCase{"IntakeDuplicatesByContent", intakeDuplicates},
		testCase{"IntakePixelLimitAndProgress", intakeLimitAndProgress},
		testCase{"IntakeCancelKeepsWhatWasAdded", intakeCancel},
		testCase{"ImageStatusRules", imageStatusRules},
		testCase{"MissingImages", missingImages},
	)
}

// An intake of folders adds every readable picture under them
// (recursively, hidden folders and non-image names left out) and reports
// each file it could not read, by name, with a reason.
func intakeFolder(e *env) {
	dir, files := e.place(
		pic{name: "a.jpg", w: 64, h: 48},
		pic{name: "sub/rotated.JPG", w: 80, h: 30, orientation: 6},
		pic{name: "sub/deeper/c.png", w: 20, h: 10, png: true},
	)
	cut := e.encode(pic{name: "cut.jpg", w: 64, h: 48})
	e.writeFile(filepath.Join(dir, "cut.jpg"), cut[:300])
	e.writeFile(filepath.Join(dir, "empty.jpg"), nil)
	e.writeFile(filepath.Join(dir, "notes.png"), []byte("these are notes, not a picture\n"))
	e.writeFile(filepath.Join(dir, "readme.txt"), []byte("not an image name: ignored"))
	e.writeFile(filepath.Join(dir, ".cache", "hidden.jpg"), e.encode(pic{name: "hidden.jpg", w: 8, h: 8}))
	nowhere := filepath.Join(e.t.TempDir(), "nowhere")

	rep, err := e.b.AddImages(e.ctx, []string{dir, nowhere}, project.IntakeOptions{})
	e.fatal("add images", err)
	if rep.Added != 3 || rep.Duplicates != 0 || rep.Relinked != 0 || len(rep.AddedIDs) != 3 {
		e.t.Errorf("report %+v, want 3 added", rep)
	}
	reasons := map[string]string{}
	for _, f := range rep.Failed {
		reasons[filepath.Base(f.Path)] = f.Error
	}
	for _, name := range []string{"cut.jpg", "empty.jpg", "notes.png", "nowhere"} {
		if why, ok := reasons[name]; !ok || strings.TrimSpace(why) == "" {
			e.t.Errorf("no reason for %s (failures %+v)", name, rep.Failed)
		}
	}
	if len(rep.Failed) != 4 {
		e.t.Errorf("%d failures, want 4 (readme.txt and the hidden folder are not looked at): %+v", len(rep.Failed), rep.Failed)
	}
	ims := e.byContent(files)
	// The SHA-256 is that of the file's bytes (FIPS 180-4, computed here
	// by crypto/sha256).
	want := []struct{ w, h, o int }{{64, 48, 1}, {30, 80, 6}, {20, 10, 1}} // orientation 6 turns 80×30 upright (CIPA DC-008)
	for i, im := range ims {
		if im.Width != want[i].w || im.Height != want[i].h || im.Orientation != want[i].o {
			e.t.Errorf("%s stored as %d×%d orientation %d, want %d×%d orientation %d", files[i].path, im.Width, im.Height, im.Orientation,
				want[i].w, want[i].h, want[i].o)
		}
		if im.Status != project.StatusNew || im.Added.IsZero() || im.Path == "" || strings.Contains(im.Path, `\`) {
			e.t.Errorf("new image %+v", im)
		}
		if got, err := e.b.Image(e.ctx, im.ID); err != nil || got.SHA256 != im.SHA256 || got.Path != im.Path {
			e.t.Errorf("Image(%d) = %+v %v", im.ID, got, err)
		}
	}
	for _, id := range rep.AddedIDs {
		if _, err := e.b.Image(e.ctx, id); err != nil {
			e.t.Errorf("AddedIDs names image %d: %v", id, err)
		}
	}
	if _, err := e.b.Image(e.ctx, 99999); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("missing image: %v, want ErrNotFound", err)
	}
	if c := e.counts(); c.Images != 3 || c.ImagesBy[project.StatusNew] != 3 {
		e.t.Errorf("counts after intake %+v", c)
	}
}

// A file whose bytes the project has already adds nothing, wherever it
// lies and whatever its name.
func intakeDuplicates(e *env) {
	dir, files := e.place(pic{name: "a.jpg", w: 40, h: 30}, pic{name: "b.png", w: 40, h: 30, png: true}, pic{name: "c.jpg", w: 12, h: 12})
	rep, err := e.b.AddImages(e.ctx, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 3 {
		e.t.Fatalf("first intake %+v %v", rep, err)
	}
	before := e.snapshot()
	rep, err = e.b.AddImages(e.ctx, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 0 || rep.Duplicates != 3 || len(rep.AddedIDs) != 0 {
		e.t.Errorf("same folder again %+v %v", rep, err)
	}
	other := e.t.TempDir()
	copyA := e.writeFile(filepath.Join(other, "copy of a.jpg"), files[0].data)
	pngNamedJPG := e.writeFile(filepath.Join(other, "really-a-png.jpg"), files[1].data)
	rep, err = e.b.AddImages(e.ctx, []string{copyA, pngNamedJPG}, project.IntakeOptions{})
	if err != nil || rep.Added != 0 || rep.Duplicates != 2 || len(rep.Failed) != 0 {
		e.t.Errorf("copies elsewhere %+v %v", rep, err)
	}
	e.unchanged("an intake of duplicates", before)

	// Two new files with the same bytes in one intake: one image.
	twins := e.t.TempDir()
	data := e.encode(pic{name: "twin.jpg", w: 16, h: 16})
	e.writeFile(filepath.Join(twins, "one.jpg"), data)
	e.writeFile(filepath.Join(twins, "two.jpg"), data)
	rep, err = e.b.AddImages(e.ctx, []string{twins}, project.IntakeOptions{})
	if err != nil || rep.Added != 1 || rep.Duplicates != 1 {
		e.t.Errorf("twins %+v %v", rep, err)
	}
	if c := e.counts(); c.Images != 4 {
		e.t.Errorf("%d images, want 4", c.Images)
	}
}

func intakeLimitAndProgress(e *env) {
	dir, _ := e.place(pic{name: "wide.jpg", w: 200, h: 100})
	p := filepath.Join(dir, "wide.jpg")
	rep, err := e.b.AddImages(e.ctx, []string{p}, project.IntakeOptions{MaxPixels: 10_000})
	if err != nil || rep.Added != 0 || len(rep.Failed) != 1 || filepath.Base(rep.Failed[0].Path) != "wide.jpg" {
		e.t.Errorf("limit 10,000 pixels: %+v %v", rep, err)
	}
	if c := e.counts(); c.Images != 0 {
		e.t.Errorf("a refused picture was stored")
	}
	if rep, err := e.b.AddImages(e.ctx, []string{p}, project.IntakeOptions{MaxPixels: 20_000}); err != nil || rep.Added != 1 {
		e.t.Errorf("limit 20,000 pixels: %+v %v", rep, err)
	}

	more, _ := e.place(pic{name: "1.jpg", w: 8, h: 8}, pic{name: "2.jpg", w: 8, h: 8}, pic{name: "3.jpg", w: 8, h: 8}, pic{name: "4.jpg", w: 8, h: 8})
	var calls [][2]int
	rep, err = e.b.AddImages(e.ctx, []string{more}, project.IntakeOptions{Progress: func(done, total int) { calls = append(calls, [2]int{done, total}) }})
	if err != nil || rep.Added != 4 {
		e.t.Fatalf("intake with progress %+v %v", rep, err)
	}
	if len(calls) != 4 {
		e.t.Fatalf("progress called %d times for 4 files: %v", len(calls), calls)
	}
	for i, c := range calls {
		if c != [2]int{i + 1, 4} {
			e.t.Errorf("progress call %d was %v, want [%d 4]", i, c, i+1)
		}
	}
}

// A cancelled intake stops with the context's error, and the images added
// before stay (the report says which).
func intakeCancel(e *env) {
	ps := make([]pic, 24)
	for i := range ps {
		ps[i] = pic{name: "im" + string(rune('a'+i)) + ".jpg", w: 8, h: 8}
	}
	dir, _ := e.place(ps...)
	ctx, cancel := context.WithCancel(e.ctx)
	defer cancel()
	rep, err := e.b.AddImages(ctx, []string{dir}, project.IntakeOptions{Progress: func(done, total int) {
		if done == 3 {
			cancel()
		}
	}})
	if !errors.Is(err, context.Canceled) {
		e.t.Fatalf("cancelled intake: %v, want context.Canceled", err)
	}
	c := e.counts()
	if rep.Added < 3 || rep.Added == len(ps) || c.Images != rep.Added || len(rep.AddedIDs) != rep.Added {
		e.t.Errorf("after cancel: report %+v, %d images stored", rep, c.Images)
	}
}

// Statuses belong to annotators; an image's own Status is the furthest
// any annotator has come: reviewed, done, started, then skipped, then new.
func imageStatusRules(e *env) {
	ims := e.images(5)
	ines, omar, rita := e.annotator("Ines"), e.annotator("Omar"), e.annotator("Rita")
	set := func(im project.Image, a project.Annotator, st project.ImageStatus, by int64) {
		e.t.Helper()
		e.fatal("set status", e.b.SetImageStatus(e.ctx, im.ID, a.ID, st, by))
	}
	set(ims[0], ines, project.StatusSkipped, ines.ID) // skipped alone: skipped
	set(ims[1], ines, project.StatusSkipped, ines.ID) // skipped and started: started
	set(ims[1], omar, project.StatusStarted, omar.ID)
	set(ims[2], ines, project.StatusDone, ines.ID) // done and reviewed: reviewed
	set(ims[2], omar, project.StatusReviewed, rita.ID)
	set(ims[3], omar, project.StatusDone, omar.ID) // done, then back to new: new
	set(ims[3], omar, project.StatusNew, omar.ID)
	want := map[int64]project.ImageStatus{ims[0].ID: project.StatusSkipped, ims[1].ID: project.StatusStarted, ims[2].ID: project.StatusReviewed,
		ims[3].ID: project.StatusNew, ims[4].ID: project.StatusNew}
	all, err := e.b.Images(e.ctx)
	e.fatal("list images", err)
	for _, im := range all {
		if im.Status != want[im.ID] {
			e.t.Errorf("image %d: status %s over all annotators, want %s", im.ID, im.Status, want[im.ID])
		}
		if one, _ := e.b.Image(e.ctx, im.ID); one.Status != want[im.ID] {
			e.t.Errorf("Image(%d).Status %s, want %s", im.ID, one.Status, want[im.ID])
		}
	}
	if got := e.statusFor(ines.ID); got[ims[0].ID] != project.StatusSkipped || got[ims[1].ID] != project.StatusSkipped ||
		got[ims[2].ID] != project.StatusDone || got[ims[3].ID] != project.StatusNew {
		e.t.Errorf("Ines's statuses %v", got)
	}
	if got := e.statusFor(rita.ID); len(got) != 5 {
		e.t.Errorf("ImagesFor lists %d images, want all 5", len(got))
	} else {
		for id, st := range got {
			if st != project.StatusNew {
				e.t.Errorf("Rita never worked on image %d but has %s (reviewing Omar's does not make it hers)", id, st)
			}
		}
	}
	before := e.snapshot()
	e.wantErr("unknown status", e.b.SetImageStatus(e.ctx, ims[0].ID, ines.ID, "lost", ines.ID), project.ErrInvalid)
	e.wantErr("missing image", e.b.SetImageStatus(e.ctx, 99999, ines.ID, project.StatusDone, ines.ID), project.ErrNotFound)
	e.wantErr("missing annotator", e.b.SetImageStatus(e.ctx, ims[0].ID, 99999, project.StatusDone, ines.ID), project.ErrNotFound)
	e.unchanged("refused statuses", before)

	c := e.counts()
	if c.ImagesBy[project.StatusSkipped] != 1 || c.ImagesBy[project.StatusStarted] != 1 || c.ImagesBy[project.StatusReviewed] != 1 ||
		c.ImagesBy[project.StatusNew] != 2 || c.ImagesBy[project.StatusDone] != 0 {
		e.t.Errorf("ImagesBy %v", c.ImagesBy)
	}
	wantBy := map[string]map[project.ImageStatus]int{
		"Ines": {project.StatusNew: 2, project.StatusSkipped: 2, project.StatusDone: 1},
		"Omar": {project.StatusNew: 3, project.StatusStarted: 1, project.StatusReviewed: 1},
		"Rita": {project.StatusNew: 5},
	}
	for name, w := range wantBy {
		for _, st := range project.ImageStatuses {
			if got, ok := c.StatusByAnnotator[name][st]; !ok || got != w[st] {
				e.t.Errorf("StatusByAnnotator[%s][%s] = %d (present %v), want %d", name, st, got, ok, w[st])
			}
		}
	}
}

// What "missing" means depends on where the bytes are: a file project
// refers to the file given at intake, a server project keeps the bytes.
func missingImages(e *env) {
	dir, files := e.place(pic{name: "boat.jpg", w: 40, h: 30}, pic{name: "stays.jpg", w: 40, h: 30})
	rep, err := e.b.AddImages(e.ctx, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 2 {
		e.t.Fatalf("intake %+v %v", rep, err)
	}
	ims := e.byContent(files)
	cl, an := e.class("motorboat"), e.annotator("Ines")
	e.insert(project.Label{ImageID: ims[0].ID, ClassID: cl.ID, AnnotatorID: an.ID, Box: box(1, 1, 9, 9)})
	if missing, err := e.b.MissingImages(e.ctx); err != nil || len(missing) != 0 {
		e.t.Errorf("missing before any move: %v %v", missing, err)
	}
	if e.caps.ImagesByReference {
		for i, im := range ims {
			if p := e.b.ImagePath(im); p != files[i].path {
				e.t.Errorf("ImagePath %q, want the file added %q", p, files[i].path)
			}
		}
	}
	outside := e.t.TempDir()
	moved := filepath.Join(outside, "renamed.jpg")
	e.fatal("move the file", os.Rename(files[0].path, moved))
	missing, err := e.b.MissingImages(e.ctx)
	e.fatal("missing images", err)
	if !e.caps.ImagesByReference {
		// The project holds the bytes: nothing is missing, and the moved
		// file is a duplicate.
		if len(missing) != 0 {
			e.t.Errorf("a project that stores image bytes lost %v when the original file moved", missing)
		}
		if rep, err := e.b.AddImages(e.ctx, []string{moved}, project.IntakeOptions{}); err != nil || rep.Duplicates != 1 || rep.Added != 0 {
			e.t.Errorf("intake of the moved file %+v %v", rep, err)
		}
		return
	}
	if len(missing) != 1 || missing[0].ID != ims[0].ID {
		e.t.Fatalf("missing after the move: %+v, want image %d", missing, ims[0].ID)
	}
	e.writeFile(filepath.Join(outside, "unknown.jpg"), e.encode(pic{name: "unknown.jpg", w: 10, h: 10}))
	rep, err = e.b.Relink(e.ctx, outside, project.IntakeOptions{})
	if err != nil || rep.Relinked != 1 || rep.Added != 0 || len(rep.Relinks) != 1 || rep.Relinks[0].ImageID != ims[0].ID {
		e.t.Fatalf("relink %+v %v", rep, err)
	}
	im, err := e.b.Image(e.ctx, ims[0].ID)
	e.fatal("read relinked image", err)
	if e.b.ImagePath(im) != moved {
		e.t.Errorf("relinked to %q, want %q", e.b.ImagePath(im), moved)
	}
	if rep.Relinks[0].OldPath != ims[0].Path {
		e.t.Errorf("relink says the old path was %q, want %q", rep.Relinks[0].OldPath, ims[0].Path)
	}
	if ls := e.labels(project.LabelFilter{ImageID: im.ID}); len(ls) != 1 {
		e.t.Errorf("labels after relink: %d, want 1", len(ls))
	}
	if c := e.counts(); c.Images != 2 {
		e.t.Errorf("relink added images: %d", c.Images)
	}
	if missing, _ := e.b.MissingImages(e.ctx); len(missing) != 0 {
		e.t.Errorf("still missing after relink: %+v", missing)
	}
	// An ordinary intake of a copy relinks a missing image too.
	back := filepath.Join(e.t.TempDir(), "back.jpg")
	e.fatal("move the file again", os.Rename(moved, back))
	rep, err = e.b.AddImages(e.ctx, []string{back}, project.IntakeOptions{})
	if err != nil || rep.Relinked != 1 || rep.Added != 0 {
		e.t.Errorf("intake over a moved file %+v %v", rep, err)
	}
	if im, _ := e.b.Image(e.ctx, ims[0].ID); e.b.ImagePath(im) != back {
		e.t.Errorf("path after the second move %q, want %q", e.b.ImagePath(im), back)
	}
}
