package postgres

import (
	"slices"
	"testing"
)

// An export takes one annotator's labels: images with labels of theirs,
// and images they marked done or reviewed even without labels; not their
// skipped images, nor images only someone else marked done. Classes are
// all of the project's, in display order; images in path order.
func TestExportImagesOfOneAnnotator(t *testing.T) {
	f := newLabFix(t, false)
	ana, bo := f.annotator("ana"), f.annotator("bo")
	empty := f.image("harbour/c-empty.jpg", 320, 240)  // done by ana, no labels: exported
	skipped := f.image("harbour/d-skip.jpg", 320, 240) // labels, but skipped by ana
	others := f.image("harbour/e-bo.jpg", 320, 240)    // done by bo only
	f.label(f.im2, f.kayak, ana, box(5, 5, 10, 10))
	l1 := f.label(f.im1, f.boat, ana, box(1, 2, 3, 4))
	f.label(f.im1, f.boat, bo, box(7, 7, 9, 9))
	f.label(skipped, f.boat, ana, box(1, 1, 2, 2))
	f.label(others, f.boat, bo, box(1, 1, 2, 2))
	for _, st := range []struct {
		img, ann int64
		status   string
	}{{empty, ana, "done"}, {skipped, ana, "skipped"}, {others, bo, "done"}, {f.im1, ana, "reviewed"}} {
		if _, err := f.sql.Exec(bg, "INSERT INTO image_status(image_id, annotator_id, status) VALUES ($1, $2, $3)", st.img, st.ann, st.status); err != nil {
			t.Fatal(err)
		}
	}
	classes, ims, err := f.s.ExportImages(bg, ana)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(classes, f.names) {
		t.Errorf("classes %v, want %v", classes, f.names)
	}
	var paths []string
	for _, im := range ims {
		paths = append(paths, im.Record.Name)
	}
	if want := []string{"harbour/a.jpg", "harbour/b.jpg", "harbour/c-empty.jpg"}; !slices.Equal(paths, want) {
		t.Fatalf("exported %v, want %v", paths, want)
	}
	a := ims[0]
	if len(a.Record.Boxes) != 1 || a.Record.Boxes[0].Class != "motorboat" || a.Record.Boxes[0].Box != box(1, 2, 3, 4) ||
		a.Record.Boxes[0].Where != "label "+itoa(l1) || a.Record.Width != 640 || a.Record.Height != 480 || len(a.Key) != 64 {
		t.Errorf("a.jpg: %+v", a)
	}
	if b := ims[1]; len(b.Record.Boxes) != 1 || b.Record.Boxes[0].Class != "kayak" {
		t.Errorf("b.jpg: %+v", b)
	}
	if c := ims[2]; len(c.Record.Boxes) != 0 || c.Record.Width != 320 {
		t.Errorf("the empty image: %+v", c)
	}
	if classes, ims, err := f.s.ExportImages(bg, 999); err != nil || len(ims) != 0 || len(classes) != 2 {
		t.Errorf("an annotator without labels: %v %v %v", classes, ims, err)
	}
}
