package postgres

import (
	"errors"
	"strings"
	"testing"

	"boxwright/project"
	"boxwright/project/formats"
)

// importFixture has images harbour/a.jpg (100×80) and harbour/sub/b.jpg
// (50×40) and the class buoy, nothing else.
func importFixture(t *testing.T, team bool) (*labFix, int64, int64) {
	t.Helper()
	f := newLabFix(t, team)
	f.srv.Exec(t, "harbour", "DELETE FROM images; DELETE FROM classes")
	f.names = nil
	a := f.image("harbour/a.jpg", 100, 80)
	b := f.image("harbour/sub/b.jpg", 50, 40)
	f.class("buoy")
	return f, a, b
}

func rec(name string, w, h int, boxes ...formats.BoxRecord) formats.ImageRecord {
	return formats.ImageRecord{Name: name, Width: w, Height: h, Boxes: boxes, Where: "f.json: images[" + name + "]"}
}

func bx(class string, x0, y0, x1, y1 float64, where string) formats.BoxRecord {
	return formats.BoxRecord{Class: class, Box: project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}, Where: where}
}

func TestImportDatasetMatchesClipsAndReports(t *testing.T) {
	f, a, b := importFixture(t, false)
	s := f.s
	ds := &formats.Dataset{Classes: []string{"buoy", "kayak"}, Images: []formats.ImageRecord{
		rec("a.jpg", 100, 80, bx("buoy", 1, 2, 11, 12, "annotations[0]"), bx("kayak", 90, 70, 120, 90, "annotations[1]")),
		rec("sub/b.jpg", 0, 0, bx("buoy", 0.5, 0.5, 10.25, 20, "annotations[2]")),
		rec("missing.jpg", 10, 10, bx("buoy", 0, 0, 1, 1, "annotations[3]")),
	}}
	rep, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "old-team", CreateClasses: true, Source: "f.json", SkipUnmatched: true})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Images != 2 || rep.Labels != 3 || rep.Clipped != 1 || len(rep.ClassesCreated) != 1 || rep.ClassesCreated[0] != "kayak" ||
		len(rep.Unmatched) != 1 || !strings.Contains(rep.Unmatched[0], "missing.jpg") {
		t.Fatalf("report %+v", rep)
	}
	ann := f.annotator("old-team")
	ls, _ := s.Labels(bg, project.LabelFilter{ImageID: a, AnnotatorID: ann})
	if len(ls) != 2 || ls[1].Box != (project.Box{X0: 90, Y0: 70, X1: 100, Y1: 80}) || ls[0].Origin != project.OriginImported || ls[0].Source != "f.json" {
		t.Errorf("labels of a.jpg: %+v", ls)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: b}); len(ls) != 1 || ls[0].Box.X1 != 10.25 {
		t.Errorf("labels of b.jpg: %+v", ls)
	}
	// The new class comes after buoy, with a colour and the next free key.
	var pos int
	var key, colour string
	f.sql.QueryRow(bg, "SELECT position, hot_key, color FROM classes WHERE name = 'kayak'").Scan(&pos, &key, &colour)
	if pos != 1 || key != "1" || colour != project.FormatColor(project.PaletteColor(1)) {
		t.Errorf("created class: position %d, key %q, colour %s", pos, key, colour)
	}
}

func TestImportDatasetIsAllOrNothing(t *testing.T) {
	cases := []struct {
		name string
		ds   *formats.Dataset
		opts project.ImportOptions
		want string
	}{
		{"unknown class", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "annotations[0]"), bx("yacht", 0, 0, 5, 5, "annotations[1]"))}},
			project.ImportOptions{Annotator: "x"}, `annotations[1]: class "yacht" is not in the project`},
		{"strict outside", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "annotations[0]"), bx("buoy", 95, 0, 105, 5, "annotations[1]"))}},
			project.ImportOptions{Annotator: "x", Strict: true}, "annotations[1]: box [95,0,105,5] reaches outside the 100×80 image"},
		{"entirely outside", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"), bx("buoy", 200, 200, 205, 205, "a1"))}},
			project.ImportOptions{Annotator: "x"}, "a1: box [200,200,205,205] reaches outside"},
		{"size mismatch", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 80, 100, bx("buoy", 0, 0, 5, 5, "a0"))}},
			project.ImportOptions{Annotator: "x"}, "is 80×100 in the file but 100×80 in the project"},
		{"no annotator", &formats.Dataset{}, project.ImportOptions{}, "annotator name is empty"},
		{"record without image", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0")), rec("gone.jpg", 10, 10, bx("buoy", 0, 0, 5, 5, "a1"))}},
			project.ImportOptions{Annotator: "x"}, "1 record matches no image in the project: gone.jpg (f.json: images[gone.jpg])"},
		{"nothing matches, skipping", &formats.Dataset{Images: []formats.ImageRecord{rec("gone.jpg", 10, 10, bx("buoy", 0, 0, 5, 5, "a1"))}},
			project.ImportOptions{Annotator: "x", SkipUnmatched: true}, "none of the file's 1 image records matches"},
		{"class created, then a bad box", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("kayak", 0, 0, 5, 5, "a0"), bx("buoy", 300, 0, 305, 5, "a1"))}},
			project.ImportOptions{Annotator: "x", CreateClasses: true}, "a1: box [300,0,305,5] reaches outside"},
		{"unknown again", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"))}},
			project.ImportOptions{Annotator: "x", Again: "twice"}, `unknown choice "twice"`},
	}
	f, _, _ := importFixture(t, false)
	for _, c := range cases {
		_, err := f.s.ImportDataset(bg, c.ds, c.opts)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want it to contain %q", c.name, err, c.want)
			continue
		}
		if n := f.count("SELECT (SELECT count(*) FROM labels) + (SELECT count(*) FROM annotators WHERE name = 'x') + (SELECT count(*) FROM classes WHERE name <> 'buoy')"); n != 0 {
			t.Errorf("%s: a failed import left %d labels, annotators or classes", c.name, n)
		}
	}
}

func TestImportClassMap(t *testing.T) {
	f, a, _ := importFixture(t, false)
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("float", 1, 1, 5, 5, "annotations[0]"))}}
	if _, err := f.s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "x", ClassMap: map[string]string{"float": "buoy"}}); err != nil {
		t.Fatal(err)
	}
	if n := f.count("SELECT count(*) FROM labels l JOIN classes c ON c.id = l.class_id WHERE c.name = 'buoy' AND l.image_id = $1", a); n != 1 {
		t.Errorf("mapped class: %d labels of buoy", n)
	}
}

// The same file imported twice is refused (it would double every box),
// replaced on request (only the annotator's imported labels on the file's
// images go), or appended on request.
func TestImportAgainRefuseReplaceAppend(t *testing.T) {
	f, a, b := importFixture(t, false)
	s := f.s
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 1, 1, 5, 5, "a0"), bx("buoy", 10, 10, 20, 20, "a1"))}}
	opts := project.ImportOptions{Annotator: "x", Source: "f.json"}
	if _, err := s.ImportDataset(bg, ds, opts); err != nil {
		t.Fatal(err)
	}
	x := f.annotator("x")
	// A drawn label of x on a.jpg and an imported one on b.jpg, which a
	// replace must both keep.
	f.label(a, f.id("SELECT id FROM classes WHERE name = 'buoy'"), x, box(30, 30, 40, 40))
	f.sql.Exec(bg, "INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin) SELECT $1, id, $2, 1, 1, 5, 5, 'imported' FROM classes", b, x)
	_, err := s.ImportDataset(bg, ds, opts)
	if !errors.Is(err, project.ErrDuplicate) || !strings.Contains(err.Error(), "2 of the file's boxes (the first at a0)") || !strings.Contains(err.Error(), "--again replace") {
		t.Errorf("a second import: %v", err)
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 4 {
		t.Errorf("%d labels after the refused import, want 4", n)
	}
	opts.Again = project.ImportAgainReplace
	rep, err := s.ImportDataset(bg, ds, opts)
	if err != nil || rep.Replaced != 2 || rep.Labels != 2 {
		t.Errorf("replace: %+v %v", rep, err)
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 4 {
		t.Errorf("%d labels after replacing, want 4", n)
	}
	if n := f.count("SELECT count(*) FROM labels WHERE origin = 'drawn' OR image_id = $1", b); n != 2 {
		t.Errorf("replace touched the drawn label or another image's: %d of 2 left", n)
	}
	opts.Again = project.ImportAgainAppend
	if rep, err := s.ImportDataset(bg, ds, opts); err != nil || rep.Labels != 2 {
		t.Errorf("append: %+v %v", rep, err)
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 6 {
		t.Errorf("%d labels after appending, want 6", n)
	}
}

// An annotator imports under her own name; she cannot import under
// another's, nor create classes, and a refused import stores nothing.
func TestImportHonoursRowLevelSecurity(t *testing.T) {
	f, a, _ := importFixture(t, true)
	ines := f.as("ines")
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 1, 1, 5, 5, "a0"))}}
	if _, err := ines.ImportDataset(bg, ds, project.ImportOptions{Annotator: "tomas"}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("importing as tomas: %v", err)
	}
	if _, err := ines.ImportDataset(bg, ds, project.ImportOptions{Annotator: "newcomer"}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("importing as a new annotator: %v", err)
	}
	withNew := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 1, 1, 5, 5, "a0"), bx("kayak", 1, 1, 5, 5, "a1"))}}
	if _, err := ines.ImportDataset(bg, withNew, project.ImportOptions{Annotator: "ines", CreateClasses: true}); !errors.Is(err, project.ErrNotAllowed) || !strings.Contains(err.Error(), "a1") {
		t.Errorf("an annotator creating a class: %v", err)
	}
	if n := f.count("SELECT (SELECT count(*) FROM labels) + (SELECT count(*) FROM classes WHERE name = 'kayak')"); n != 0 {
		t.Errorf("refused imports left %d labels or classes", n)
	}
	if rep, err := ines.ImportDataset(bg, ds, project.ImportOptions{Annotator: "ines"}); err != nil || rep.Labels != 1 {
		t.Errorf("ines importing her own labels: %+v %v", rep, err)
	}
	if n := f.count("SELECT count(*) FROM labels l JOIN annotators p ON p.id = l.annotator_id WHERE p.name = 'ines' AND l.image_id = $1", a); n != 1 {
		t.Errorf("%d labels of ines, want 1", n)
	}
}
