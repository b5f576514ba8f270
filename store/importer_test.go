package store

import (
	"fmt"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
	"boxwright/project/formats"
)

func importFixture(t *testing.T) (*Store, project.Image, project.Image) {
	t.Helper()
	s := newStore(t)
	a, _ := s.AddImage(bg, project.Image{Path: "harbour/a.jpg", SHA256: hash(0), Width: 100, Height: 80, Orientation: 1})
	b, _ := s.AddImage(bg, project.Image{Path: "harbour/sub/b.jpg", SHA256: hash(1), Width: 50, Height: 40, Orientation: 1})
	s.AddClass(bg, project.Class{Name: "buoy"})
	return s, a, b
}

func rec(name string, w, h int, boxes ...formats.BoxRecord) formats.ImageRecord {
	return formats.ImageRecord{Name: name, Width: w, Height: h, Boxes: boxes, Where: "f.json: images[" + name + "]"}
}

func bx(class string, x0, y0, x1, y1 float64, where string) formats.BoxRecord {
	return formats.BoxRecord{Class: class, Box: project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1}, Where: where}
}

func TestImportDatasetMatchesClipsAndReports(t *testing.T) {
	s, a, b := importFixture(t)
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
	ann, err := s.AnnotatorByName(bg, "old-team")
	if err != nil {
		t.Fatal(err)
	}
	ls, _ := s.Labels(bg, project.LabelFilter{ImageID: a.ID, AnnotatorID: ann.ID})
	if len(ls) != 2 || ls[1].Box != (project.Box{X0: 90, Y0: 70, X1: 100, Y1: 80}) || ls[0].Origin != project.OriginImported || ls[0].Source != "f.json" {
		t.Errorf("labels of a.jpg: %+v", ls)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: b.ID}); len(ls) != 1 || ls[0].Box.X1 != 10.25 {
		t.Errorf("labels of b.jpg: %+v", ls)
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
	}
	for _, c := range cases {
		s, _, _ := importFixture(t)
		_, err := s.ImportDataset(bg, c.ds, c.opts)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want it to contain %q", c.name, err, c.want)
			continue
		}
		cnt, _ := s.Counts(bg)
		as, _ := s.Annotators(bg)
		if cnt.Labels != 0 || len(as) != 0 {
			t.Errorf("%s: a failed import left %d labels and annotators %v", c.name, cnt.Labels, as)
		}
	}
}

func TestImportClassMap(t *testing.T) {
	s, a, _ := importFixture(t)
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("float", 1, 1, 5, 5, "annotations[0]"))}}
	if _, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "x", ClassMap: map[string]string{"float": "buoy"}}); err != nil {
		t.Fatal(err)
	}
	buoy, _ := s.ClassByName(bg, "buoy")
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: a.ID, ClassID: buoy.ID}); len(ls) != 1 {
		t.Errorf("mapped class: %d labels of buoy", len(ls))
	}
}

func TestImageMatcher(t *testing.T) {
	s, a, _ := importFixture(t)
	s.AddImage(bg, project.Image{Path: "other/a.jpg", SHA256: hash(2), Width: 100, Height: 80, Orientation: 1})
	ims, err := s.Images(bg)
	if err != nil {
		t.Fatal(err)
	}
	m := project.NewImageMatcher(ims)
	if im, ok, _ := m.Match("harbour/a.jpg"); !ok || im.ID != a.ID {
		t.Errorf("exact path")
	}
	if _, ok, reason := m.Match("a.jpg"); ok || !strings.Contains(reason, "2 project images") {
		t.Errorf("ambiguous base name matched: %q", reason)
	}
	if im, ok, _ := m.Match("sub\\b.jpg"); !ok || im.Path != "harbour/sub/b.jpg" {
		t.Errorf("path suffix with backslashes: %+v", im)
	}
	if im, ok, _ := m.MatchStem("sub/b.txt"); !ok || im.Path != "harbour/sub/b.jpg" {
		t.Errorf("stem match: %+v", im)
	}
	if _, ok, _ := m.MatchStem("zzz.txt"); ok {
		t.Errorf("unknown stem matched")
	}
}

// manyBoxes makes n boxes on the two images of importFixture (within
// both), with coordinates and scores that no rounding would keep, and
// classes that change from box to box.
func manyBoxes(n int) *formats.Dataset {
	var a, b []formats.BoxRecord
	for k := 0; k < n; k++ {
		x, y := float64(k%40)+1.0/3, float64(k%30)+0.1
		box := formats.BoxRecord{Class: []string{"buoy", "kayak", "raft"}[k%3], Box: project.Box{X0: x, Y0: y, X1: x + 7.7, Y1: y + 0.3},
			Score: float64(k%1000) / 999, HasScore: true, Where: "f.json: annotations[" + strconv.Itoa(k) + "]"}
		if k%2 == 0 {
			a = append(a, box)
		} else {
			b = append(b, box)
		}
	}
	return &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, a...), rec("sub/b.jpg", 50, 40, b...)}}
}

// An import of several statements' worth of boxes (labelBatch rows
// each) and a partial last one stores every box once, in file order,
// with its own values and the import's shared ones.
func TestImportManyBoxesStoresEachOnceInOrder(t *testing.T) {
	s, a, b := importFixture(t)
	n := 2*labelBatch + labelBatch/2 + 3
	ds := manyBoxes(n)
	rep, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "bulk", CreateClasses: true, Source: "f.json"})
	if err != nil || rep.Labels != n {
		t.Fatalf("import: %+v, %v", rep, err)
	}
	ann, _ := s.AnnotatorByName(bg, "bulk")
	classes, _ := s.Classes(bg)
	name := map[int64]string{}
	for _, c := range classes {
		name[c.ID] = c.Name
	}
	var prev int64
	for i, im := range []project.Image{a, b} {
		ls, err := s.Labels(bg, project.LabelFilter{ImageID: im.ID})
		want := ds.Images[i].Boxes
		if err != nil || len(ls) != len(want) {
			t.Fatalf("image %s: %d labels, want %d (%v)", im.Path, len(ls), len(want), err)
		}
		for k, l := range ls {
			w := want[k]
			if l.Box != w.Box || l.Score != w.Score || name[l.ClassID] != w.Class || l.AnnotatorID != ann.ID ||
				l.Origin != project.OriginImported || l.Source != "f.json" || l.SuggestionID != 0 || l.Created.IsZero() || l.Created != l.Updated {
				t.Fatalf("image %s, label %d: %+v, want %+v", im.Path, k, l, w)
			}
			if i == 0 && l.ID <= prev {
				t.Fatalf("label ids out of file order: %d after %d", l.ID, prev)
			}
			prev = l.ID
		}
	}
}

// A refusal by the database in a later statement, full or partial, names
// that statement's first record and stores nothing.
func TestImportRefusedBatchNamesItsRecordAndStoresNothing(t *testing.T) {
	n := 2*labelBatch + 10
	for _, at := range []int{labelBatch + 5, 2*labelBatch + 7} {
		s, _, _ := importFixture(t)
		// A trigger stands in for a constraint the checks before insertion
		// do not know about.
		if _, err := s.db.Exec(fmt.Sprintf("CREATE TRIGGER refuse BEFORE INSERT ON labels WHEN NEW.score = %d.0/999 BEGIN SELECT RAISE(ABORT, 'refused by test'); END", at)); err != nil {
			t.Fatal(err)
		}
		ds := manyBoxes(n)
		_, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "bulk", CreateClasses: true, Source: "f.json"})
		if err == nil || !strings.Contains(err.Error(), "refused by test") || !strings.Contains(err.Error(), "nothing was stored") ||
			!strings.Contains(err.Error(), "annotations[") || !strings.Contains(err.Error(), "records after it") {
			t.Fatalf("refusal at box %d: %v", at, err)
		}
		if cnt, _ := s.Counts(bg); cnt.Labels != 0 {
			t.Fatalf("refusal at box %d left %d labels", at, cnt.Labels)
		}
		s.db.Exec("DROP TRIGGER refuse")
	}
}

// ReplaceAnnotatorLabels keeps each label's own origin and source, in
// order, across statements.
func TestReplaceAnnotatorLabelsKeepsOriginsInOrder(t *testing.T) {
	s, a, _ := importFixture(t)
	buoy, _ := s.ClassByName(bg, "buoy")
	con, _ := s.AddAnnotator(bg, "consensus")
	var ls []project.Label
	for k := 0; k < labelBatch+40; k++ {
		l := project.Label{ImageID: a.ID, ClassID: buoy.ID, Box: project.Box{X0: float64(k % 50), Y0: 1, X1: float64(k%50) + 2.5, Y1: 3}, Score: 0.5}
		switch k % 7 {
		case 0:
			l.Origin, l.Source = project.OriginDrawn, "by hand"
		case 1, 2:
			l.Source = "model-b"
		}
		ls = append(ls, l)
	}
	if err := s.ReplaceAnnotatorLabels(bg, con.ID, ls); err != nil {
		t.Fatal(err)
	}
	got, _ := s.Labels(bg, project.LabelFilter{AnnotatorID: con.ID})
	if len(got) != len(ls) {
		t.Fatalf("%d labels, want %d", len(got), len(ls))
	}
	for k, g := range got {
		w := ls[k]
		if w.Origin == "" {
			w.Origin = project.OriginImported
		}
		if g.Box != w.Box || g.Origin != w.Origin || g.Source != w.Source || g.AnnotatorID != con.ID {
			t.Fatalf("label %d: %+v, want %+v", k, g, w)
		}
	}
}

// An import keeps its statement journals in memory (temp_store 2 while
// it inserts, seen by a trigger on the rows it writes) and leaves the
// connection as it found it (temp_store 0, the build's default).
func TestImportJournalsInMemoryAndRestores(t *testing.T) {
	s, _, _ := importFixture(t)
	s.db.SetMaxOpenConns(1) // one connection: the one the import used
	for _, q := range []string{"CREATE TABLE probe(v INTEGER)",
		"CREATE TRIGGER probe AFTER INSERT ON labels WHEN NEW.score = 0.125 BEGIN INSERT INTO probe SELECT temp_store FROM pragma_temp_store(); END"} {
		if _, err := s.db.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, formats.BoxRecord{Class: "buoy", Box: project.Box{X0: 1, Y0: 1, X1: 5, Y1: 5}, Score: 0.125, HasScore: true, Where: "a0"})}}
	if _, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: "x"}); err != nil {
		t.Fatal(err)
	}
	var during, after int
	if err := s.db.QueryRow("SELECT v FROM probe").Scan(&during); err != nil || during != 2 {
		t.Errorf("temp_store during the import: %d, %v; want 2 (MEMORY)", during, err)
	}
	if err := s.db.QueryRow("PRAGMA temp_store").Scan(&after); err != nil || after != 0 {
		t.Errorf("temp_store after the import: %d, %v; want 0 (DEFAULT)", after, err)
	}
}
