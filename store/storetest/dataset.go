package storetest

import (
	"errors"
	"math"
	"slices"
	"strings"

	"boxwright/project"
	"boxwright/project/formats"
)

func init() {
	register(
		testCase{"ImportDataset", importDataset},
		testCase{"ImportDatasetAllOrNothing", importAllOrNothing},
		testCase{"ImportDatasetUnmatched", importUnmatched},
		testCase{"ImportDatasetAgain", importAgain},
		testCase{"ExportImages", exportImages},
	)
}

// datasetImages adds a.jpg (100×80) and b.jpg (50×40) and a buoy class.
func (e *env) datasetImages() (a, b project.Image, buoy project.Class) {
	e.t.Helper()
	ims := e.pictures(pic{name: "harbour/a.jpg", w: 100, h: 80}, pic{name: "harbour/sub/b.jpg", w: 50, h: 40})
	return ims[0], ims[1], e.class("buoy")
}

func rec(name string, w, h int, boxes ...formats.BoxRecord) formats.ImageRecord {
	return formats.ImageRecord{Name: name, Width: w, Height: h, Boxes: boxes, Where: "f.json: images[" + name + "]"}
}

func bx(class string, x0, y0, x1, y1 float64, where string) formats.BoxRecord {
	return formats.BoxRecord{Class: class, Box: box(x0, y0, x1, y1), Where: where}
}

// An import matches records to images by name, clips boxes reaching
// outside, creates classes when asked, and stores imported labels with
// their source and score.
func importDataset(e *env) {
	a, b, buoy := e.datasetImages()
	scored := bx("buoy", 0.5, 0.5, 10.25, 20, "annotations[2]")
	scored.Score, scored.HasScore = 0.625, true
	ds := &formats.Dataset{Classes: []string{"buoy", "kayak"}, Images: []formats.ImageRecord{
		rec("a.jpg", 100, 80, bx("buoy", 1, 2, 11, 12, "annotations[0]"), bx("kayak", 90, 70, 120, 90, "annotations[1]")),
		// No size in the file: not checked; "float" is mapped to buoy. (A
		// second record of one image is refused: see the all-or-nothing
		// cases.)
		rec("b.jpg", 0, 0, scored, bx("float", 2, 2, 4, 4, "annotations[3]")),
	}}
	rep, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "old-team", CreateClasses: true, Source: "f.json",
		ClassMap: map[string]string{"float": "buoy"}})
	e.fatal("import", err)
	if rep.Annotator != "old-team" || rep.Images != 2 || rep.Labels != 4 || rep.Clipped != 1 || !slices.Equal(rep.ClassesCreated, []string{"kayak"}) ||
		len(rep.Unmatched) != 0 || rep.Replaced != 0 {
		e.t.Fatalf("report %+v", rep)
	}
	ann, err := e.b.AnnotatorByName(e.ctx, "old-team")
	e.fatal("the import's annotator", err)
	kayak, err := e.b.ClassByName(e.ctx, "kayak")
	e.fatal("the created class", err)
	ls := e.labels(project.LabelFilter{ImageID: a.ID, AnnotatorID: ann.ID})
	if len(ls) != 2 || ls[0].Box != box(1, 2, 11, 12) || ls[0].ClassID != buoy.ID || ls[1].Box != box(90, 70, 100, 80) || ls[1].ClassID != kayak.ID ||
		ls[0].Origin != project.OriginImported || ls[0].Source != "f.json" {
		e.t.Errorf("labels of a.jpg: %+v (the kayak clipped to the image)", ls)
	}
	ls = e.labels(project.LabelFilter{ImageID: b.ID})
	if len(ls) != 2 || ls[0].Box.X1 != 10.25 || ls[0].Score != 0.625 || ls[1].ClassID != buoy.ID || ls[1].AnnotatorID != ann.ID {
		e.t.Errorf("labels of b.jpg: %+v", ls)
	}
	cs, _ := e.b.Classes(e.ctx)
	if len(cs) != 2 || cs[1].Name != "kayak" || cs[1].Color != project.PaletteColor(1) {
		e.t.Errorf("classes after import %+v: a created class goes last with the next colour", cs)
	}
	// An existing annotator is used, not doubled.
	ds2 := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 20, 20, 30, 30, "x"))}}
	if _, err := e.b.ImportDataset(e.ctx, ds2, project.ImportOptions{Annotator: "old-team"}); err != nil {
		e.t.Fatal(err)
	}
	if as, _ := e.b.Annotators(e.ctx); len(as) != 1 {
		e.t.Errorf("annotators %+v", as)
	}
}

func importAllOrNothing(e *env) {
	e.datasetImages()
	e.annotator("x")
	before := e.snapshot()
	for _, c := range []struct {
		name string
		ds   *formats.Dataset
		opts project.ImportOptions
		want string
	}{
		{"unknown class", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "annotations[0]"), bx("yacht", 0, 0, 5, 5, "annotations[1]"))}},
			project.ImportOptions{Annotator: "x"}, "annotations[1]"},
		{"unknown class, new annotator", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("yacht", 0, 0, 5, 5, "annotations[0]"))}},
			project.ImportOptions{Annotator: "new"}, "annotations[0]"},
		{"strict outside", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "annotations[0]"), bx("buoy", 95, 0, 105, 5, "annotations[1]"))}},
			project.ImportOptions{Annotator: "x", Strict: true}, "annotations[1]"},
		{"entirely outside", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"), bx("buoy", 200, 200, 205, 205, "a1"))}},
			project.ImportOptions{Annotator: "x", CreateClasses: true}, "a1"},
		{"no area", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 5, 5, 5, 9, "a3"))}},
			project.ImportOptions{Annotator: "x"}, "a3"},
		{"size mismatch", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 80, 100, bx("buoy", 0, 0, 5, 5, "a0"))}},
			project.ImportOptions{Annotator: "x"}, "80×100"},
		{"a bad created class after good ones", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("new one", 0, 0, 5, 5, "a0"), bx(" bad", 0, 0, 5, 5, "a1"))}},
			project.ImportOptions{Annotator: "x", CreateClasses: true}, "a1"},
		{"infinite score", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"),
			formats.BoxRecord{Class: "buoy", Box: box(1, 1, 5, 5), Score: math.Inf(1), HasScore: true, Where: "a7"})}},
			project.ImportOptions{Annotator: "x"}, "a7"},
		{"no annotator", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80)}}, project.ImportOptions{}, "annotator"},
		{"one image in two records", &formats.Dataset{Images: []formats.ImageRecord{rec("b.jpg", 50, 40, bx("buoy", 0, 0, 5, 5, "a0")), rec("b.jpg", 50, 40, bx("buoy", 1, 1, 5, 5, "a1"))}},
			project.ImportOptions{Annotator: "x"}, "give each image one record"},
		{"unknown again", &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"))}},
			project.ImportOptions{Annotator: "x", Again: "twice"}, "twice"},
	} {
		rep, err := e.b.ImportDataset(e.ctx, c.ds, c.opts)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			e.t.Errorf("%s: error %v, want it to name %q", c.name, err, c.want)
			continue
		}
		if rep.Labels != 0 || rep.Images != 0 || len(rep.ClassesCreated) != 0 {
			e.t.Errorf("%s: the report of a failed import %+v", c.name, rep)
		}
	}
	e.unchanged("failed imports", before)
}

// A record whose image is not in the project fails the import unless the
// caller skips such records; an import that matches nothing stores
// nothing either way.
func importUnmatched(e *env) {
	a, _, _ := e.datasetImages()
	ds := &formats.Dataset{Images: []formats.ImageRecord{
		rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0")),
		rec("gone.jpg", 10, 10, bx("buoy", 0, 0, 5, 5, "a1")),
	}}
	before := e.snapshot()
	_, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "x"})
	if e.wantErr("a record without an image", err, project.ErrInvalid) && !strings.Contains(err.Error(), "gone.jpg") {
		e.t.Errorf("the refusal does not name the record: %v", err)
	}
	only := &formats.Dataset{Images: []formats.ImageRecord{rec("gone.jpg", 10, 10, bx("buoy", 0, 0, 5, 5, "a1"))}}
	e.wantErr("nothing matches, skipping", func() error {
		_, err := e.b.ImportDataset(e.ctx, only, project.ImportOptions{Annotator: "x", SkipUnmatched: true})
		return err
	}(), project.ErrInvalid)
	e.unchanged("refused imports", before)

	rep, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "x", SkipUnmatched: true})
	e.fatal("import skipping unmatched", err)
	if rep.Images != 1 || rep.Labels != 1 || len(rep.Unmatched) != 1 || !strings.Contains(rep.Unmatched[0], "gone.jpg") {
		e.t.Errorf("report %+v", rep)
	}
	if ls := e.labels(project.LabelFilter{}); len(ls) != 1 || ls[0].ImageID != a.ID {
		e.t.Errorf("labels %+v", ls)
	}
}

// Boxes stored already for the annotator (same image, class and corners)
// refuse a second import unless it replaces the annotator's imported
// labels on the file's images or appends.
func importAgain(e *env) {
	a, b, buoy := e.datasetImages()
	x := e.annotator("x")
	other := e.annotator("other")
	ds := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 0, 0, 5, 5, "a0"), bx("buoy", 10, 10, 20, 20, "a1"))}}
	if _, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "x"}); err != nil {
		e.t.Fatal(err)
	}
	if _, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "other"}); err != nil {
		e.t.Fatalf("the same file for another annotator: %v", err)
	}
	drawnA := e.insert(project.Label{ImageID: a.ID, ClassID: buoy.ID, AnnotatorID: x.ID, Box: box(50, 50, 60, 60)})
	onB := e.insert(project.Label{ImageID: b.ID, ClassID: buoy.ID, AnnotatorID: x.ID, Box: box(1, 1, 4, 4), Origin: project.OriginImported})
	before := e.snapshot()
	_, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "x"})
	if e.wantErr("the same file twice", err, project.ErrDuplicate) && !strings.Contains(err.Error(), "a0") {
		e.t.Errorf("the refusal does not name the first repeated box: %v", err)
	}
	e.unchanged("a refused repeat", before)

	rep, err := e.b.ImportDataset(e.ctx, ds, project.ImportOptions{Annotator: "x", Again: project.ImportAgainAppend})
	if err != nil || rep.Labels != 2 {
		e.t.Fatalf("append: %+v %v", rep, err)
	}
	if ls := e.labels(project.LabelFilter{ImageID: a.ID, AnnotatorID: x.ID}); len(ls) != 5 {
		e.t.Errorf("after append %d labels of x on a.jpg, want 5", len(ls))
	}
	changed := &formats.Dataset{Images: []formats.ImageRecord{rec("a.jpg", 100, 80, bx("buoy", 30, 30, 40, 40, "a0"))}}
	rep, err = e.b.ImportDataset(e.ctx, changed, project.ImportOptions{Annotator: "x", Again: project.ImportAgainReplace})
	if err != nil || rep.Replaced != 4 || rep.Labels != 1 {
		e.t.Fatalf("replace: %+v %v, want 4 imported labels replaced", rep, err)
	}
	ls := e.labels(project.LabelFilter{ImageID: a.ID, AnnotatorID: x.ID})
	var boxes []project.Box
	for _, l := range ls {
		boxes = append(boxes, l.Box)
	}
	if len(ls) != 2 || ls[0].ID != drawnA[0] || ls[1].Box != box(30, 30, 40, 40) {
		e.t.Errorf("x's labels on a.jpg after replace %v, want the drawn one and the new import", boxes)
	}
	if _, err := e.b.Label(e.ctx, onB[0]); err != nil {
		e.t.Errorf("an imported label on an image the file does not cover was replaced: %v", err)
	}
	if ls := e.labels(project.LabelFilter{AnnotatorID: other.ID}); len(ls) != 2 {
		e.t.Errorf("another annotator's imported labels: %d, want 2", len(ls))
	}
	if _, err := e.b.ImportDataset(e.ctx, changed, project.ImportOptions{Annotator: "x", Again: "twice"}); !errors.Is(err, project.ErrInvalid) {
		e.t.Errorf("unknown again rule: %v, want ErrInvalid", err)
	}
}

// An export of one annotator has every image not skipped by them that
// carries their labels or that they marked done or reviewed; another's
// marks say nothing about their labels.
func exportImages(e *env) {
	dir, files := e.place(pic{name: "a.jpg", w: 64, h: 48}, pic{name: "b.jpg", w: 32, h: 24}, pic{name: "c.jpg", w: 16, h: 16},
		pic{name: "d.jpg", w: 16, h: 16}, pic{name: "e.jpg", w: 16, h: 16})
	if rep, err := e.b.AddImages(e.ctx, []string{dir}, project.IntakeOptions{}); err != nil || rep.Added != 5 {
		e.t.Fatalf("intake %+v %v", rep, err)
	}
	ims := e.byContent(files)
	a, b, c, d, ei := ims[0], ims[1], ims[2], ims[3], ims[4]
	boat, buoy := e.class("boat"), e.class("buoy")
	ines, omar, tomas := e.annotator("Ines"), e.annotator("Omar"), e.annotator("Tomas")
	e.fatal("status", e.b.SetImageStatus(e.ctx, a.ID, ines.ID, project.StatusReviewed, tomas.ID))
	e.fatal("status", e.b.SetImageStatus(e.ctx, b.ID, ines.ID, project.StatusDone, ines.ID))
	e.fatal("status", e.b.SetImageStatus(e.ctx, d.ID, omar.ID, project.StatusSkipped, omar.ID))
	e.fatal("status", e.b.SetImageStatus(e.ctx, ei.ID, omar.ID, project.StatusDone, omar.ID))
	e.insert(
		project.Label{ImageID: b.ID, ClassID: buoy.ID, AnnotatorID: omar.ID, Box: box(1, 1, 5, 5)},
		project.Label{ImageID: b.ID, ClassID: boat.ID, AnnotatorID: omar.ID, Box: box(2, 2, 9, 9)},
		project.Label{ImageID: c.ID, ClassID: buoy.ID, AnnotatorID: ines.ID, Box: box(1, 1, 3, 3)},
		project.Label{ImageID: d.ID, ClassID: buoy.ID, AnnotatorID: omar.ID, Box: box(1, 1, 3, 3)}, // skipped by Omar: left out
	)
	classes, out, err := e.b.ExportImages(e.ctx, omar.ID)
	e.fatal("export", err)
	if !slices.Equal(classes, []string{"boat", "buoy"}) {
		e.t.Errorf("classes %v, want every class in display order", classes)
	}
	got := map[string]formats.ExportImage{}
	for _, x := range out {
		got[x.Key] = x
	}
	if len(out) != 2 || got[b.SHA256].Key == "" || got[ei.SHA256].Key == "" {
		e.t.Fatalf("Omar's export %+v, want b.jpg (his labels) and e.jpg (done, empty)", out)
	}
	xb := got[b.SHA256]
	if xb.Record.Name != b.Path || xb.Record.Width != 32 || xb.Record.Height != 24 || len(xb.Record.Boxes) != 2 ||
		xb.Record.Boxes[0] != (formats.BoxRecord{Class: "buoy", Box: box(1, 1, 5, 5), Where: xb.Record.Boxes[0].Where}) ||
		xb.Record.Boxes[1].Class != "boat" || xb.Record.Boxes[1].Box != box(2, 2, 9, 9) {
		e.t.Errorf("b.jpg exported as %+v", xb.Record)
	}
	if xb.File == "" || (e.caps.ImagesByReference && xb.File != files[1].path) {
		e.t.Errorf("b.jpg's file %q, want %q", xb.File, files[1].path)
	}
	if xe := got[ei.SHA256]; len(xe.Record.Boxes) != 0 {
		e.t.Errorf("e.jpg exported with boxes %+v", xe.Record.Boxes)
	}
	// Ines: a (reviewed, empty), b (done; Omar's labels are not hers), c (her label).
	_, out, err = e.b.ExportImages(e.ctx, ines.ID)
	e.fatal("export", err)
	keys := map[string]int{}
	for _, x := range out {
		keys[x.Key] = len(x.Record.Boxes)
	}
	if len(out) != 3 || keys[a.SHA256] != 0 || keys[b.SHA256] != 0 || keys[c.SHA256] != 1 {
		e.t.Errorf("Ines's export %v, want a and b empty and c with one box", keys)
	}
	if _, out, err := e.b.ExportImages(e.ctx, tomas.ID); err != nil || len(out) != 0 {
		e.t.Errorf("Tomas reviewed Ines's image, his own export is %+v %v, want empty", out, err)
	}
}
