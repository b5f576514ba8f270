package storetest

import (
	"errors"
	"image/color"
	"slices"
	"strings"

	"boxwright/project"
)

func init() {
	register(
		testCase{"Empty", emptyProject},
		testCase{"ClassColoursAndHotKeys", classColoursAndHotKeys},
		testCase{"ClassRefusals", classRefusals},
		testCase{"ClassUpdateRenameOrder", classUpdateRenameOrder},
		testCase{"ClassDeleteAndMerge", classDeleteAndMerge},
		testCase{"Annotators", annotators},
		testCase{"NamesSortByCodePoint", namesSortByCodePoint},
	)
}

// A new project holds nothing, and says so without errors.
func emptyProject(e *env) {
	ctx, b := e.ctx, e.b
	if v, err := b.SchemaVersion(ctx); err != nil || v < 1 {
		e.t.Errorf("schema version %d, %v", v, err)
	}
	if b.Path() == "" {
		e.t.Errorf("Path is empty: a project must be named")
	}
	if cs, err := b.Classes(ctx); err != nil || len(cs) != 0 {
		e.t.Errorf("classes %v %v", cs, err)
	}
	if as, err := b.Annotators(ctx); err != nil || len(as) != 0 {
		e.t.Errorf("annotators %v %v", as, err)
	}
	if ims, err := b.Images(ctx); err != nil || len(ims) != 0 {
		e.t.Errorf("images %v %v", ims, err)
	}
	if ms, err := b.MissingImages(ctx); err != nil || len(ms) != 0 {
		e.t.Errorf("missing images %v %v", ms, err)
	}
	if ls := e.labels(project.LabelFilter{}); len(ls) != 0 {
		e.t.Errorf("labels %v", ls)
	}
	if gs := e.suggestions(project.SuggestionFilter{}); len(gs) != 0 {
		e.t.Errorf("suggestions %v", gs)
	}
	if src, err := b.SuggestionSources(ctx); err != nil || len(src) != 0 {
		e.t.Errorf("sources %v %v", src, err)
	}
	if ms, err := b.Models(ctx); err != nil || len(ms) != 0 {
		e.t.Errorf("models %v %v", ms, err)
	}
	if _, err := b.CurrentModel(ctx); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("current model of a new project: %v, want ErrNotFound", err)
	}
	if bx, err := b.BoxesByImage(ctx, nil); err != nil || len(bx) != 0 {
		e.t.Errorf("boxes %v %v", bx, err)
	}
	if tl, err := b.LabelTallies(ctx); err != nil || len(tl) != 0 {
		e.t.Errorf("tallies %v %v", tl, err)
	}
	if per, err := b.CountsByImage(ctx); err != nil || len(per) != 0 {
		e.t.Errorf("counts by image %v %v", per, err)
	}
	c := e.counts()
	if c.Images != 0 || c.Labels != 0 || len(c.LabelsByClass) != 0 || len(c.LabelsByAnnotator) != 0 || len(c.StatusByAnnotator) != 0 {
		e.t.Errorf("counts of an empty project: %+v", c)
	}
	// Every status and state has its entry, zero here.
	for _, st := range project.ImageStatuses {
		if n, ok := c.ImagesBy[st]; !ok || n != 0 {
			e.t.Errorf("ImagesBy[%s] = %d (present %v)", st, n, ok)
		}
	}
	for _, st := range project.SuggestionStates {
		if n, ok := c.Suggestions[st]; !ok || n != 0 {
			e.t.Errorf("Suggestions[%s] = %d (present %v)", st, n, ok)
		}
	}
}

// New classes take the palette's colours in order and the digits 1..9, 0
// as hot keys while free; given colours and keys are kept.
func classColoursAndHotKeys(e *env) {
	var got []project.Class
	for i := 0; i < 11; i++ {
		got = append(got, e.class("class "+string(rune('a'+i))))
	}
	for i, c := range got {
		if c.Color != project.PaletteColor(i) {
			e.t.Errorf("class %d colour %v, want palette colour %v", i, c.Color, project.PaletteColor(i))
		}
		want := ""
		if i < 10 {
			want = string("1234567890"[i])
		}
		if c.HotKey != want {
			e.t.Errorf("class %d hot key %q, want %q", i, c.HotKey, want)
		}
		if c.ID == 0 {
			e.t.Errorf("class %d has no ID", i)
		}
		if back, err := e.b.Class(e.ctx, c.ID); err != nil || back != c {
			e.t.Errorf("class %d read back %+v %v, want %+v", i, back, err, c)
		}
	}
	pink := color.NRGBA{0xFF, 0x10, 0x80, 0xFF}
	c, err := e.b.AddClass(e.ctx, project.Class{Name: "flagged", Color: pink, HotKey: "f"})
	if err != nil || c.Color != pink || c.HotKey != "f" {
		e.t.Errorf("class with its own colour and key: %+v %v", c, err)
	}
	if back, err := e.b.ClassByName(e.ctx, "flagged"); err != nil || back != c {
		e.t.Errorf("read back by name %+v %v", back, err)
	}
	// A key freed by a recolour goes to the next new class.
	first := got[0]
	first.HotKey = "q"
	e.fatal("re-key class", e.b.UpdateClass(e.ctx, first))
	if c := e.class("late"); c.HotKey != "1" {
		e.t.Errorf("new class after key 1 was freed got %q, want 1", c.HotKey)
	}
}

// Duplicate names, bad names and bad keys are refused and change nothing;
// missing classes are ErrNotFound.
func classRefusals(e *env) {
	kayak := e.class("kayak")
	sail := e.class("sailboat")
	before := e.snapshot()
	if _, err := e.b.AddClass(e.ctx, project.Class{Name: "kayak"}); !errors.Is(err, project.ErrDuplicate) {
		e.t.Errorf("duplicate class: %v, want ErrDuplicate", err)
	}
	for _, bad := range []string{"", "  ", "tab\there", " lead", "trail ", strings.Repeat("x", 101)} {
		if _, err := e.b.AddClass(e.ctx, project.Class{Name: bad}); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("class name %q: %v, want ErrInvalid", bad, err)
		}
	}
	for _, key := range []string{"F5", "ab", "!", " "} {
		if _, err := e.b.AddClass(e.ctx, project.Class{Name: "x", HotKey: key}); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("hot key %q: %v, want ErrInvalid", key, err)
		}
	}
	if err := e.b.RenameClass(e.ctx, "kayak", "sailboat"); !errors.Is(err, project.ErrDuplicate) {
		e.t.Errorf("rename onto an existing name: %v, want ErrDuplicate", err)
	}
	dup := kayak
	dup.Name = sail.Name
	if err := e.b.UpdateClass(e.ctx, dup); !errors.Is(err, project.ErrDuplicate) {
		e.t.Errorf("update onto an existing name: %v, want ErrDuplicate", err)
	}
	blank := kayak
	blank.Name = ""
	if err := e.b.UpdateClass(e.ctx, blank); !errors.Is(err, project.ErrInvalid) {
		e.t.Errorf("update to a blank name: %v, want ErrInvalid", err)
	}
	badKey := kayak
	badKey.HotKey = "F1"
	if err := e.b.UpdateClass(e.ctx, badKey); !errors.Is(err, project.ErrInvalid) {
		e.t.Errorf("update to a bad key: %v, want ErrInvalid", err)
	}
	if err := e.b.UpdateClass(e.ctx, project.Class{ID: 99999, Name: "ghost"}); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("update of a missing class: %v, want ErrNotFound", err)
	}
	if err := e.b.RenameClass(e.ctx, "ghost", "spirit"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("rename of a missing class: %v, want ErrNotFound", err)
	}
	if _, err := e.b.Class(e.ctx, 99999); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("missing class by ID: %v", err)
	}
	if _, err := e.b.ClassByName(e.ctx, "ghost"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("missing class by name: %v", err)
	}
	if _, err := e.b.ClassByName(e.ctx, "Kayak"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("class names are exact (case matters): %v", err)
	}
	e.unchanged("refused class changes", before)
}

// UpdateClass and RenameClass keep the class's ID, place and labels;
// Classes lists in display order (the order added).
func classUpdateRenameOrder(e *env) {
	im := e.images(1)[0]
	ann := e.annotator("Ines")
	names := []string{"sailboat", "kayak", "buoy", "Zodiac", "ápex"}
	var cs []project.Class
	for _, n := range names {
		cs = append(cs, e.class(n))
	}
	e.insert(project.Label{ImageID: im.ID, ClassID: cs[1].ID, AnnotatorID: ann.ID, Box: box(1, 1, 10, 10)})
	cs[1].Color = project.Palette[5]
	cs[1].HotKey = "k"
	cs[1].Name = "canoe"
	e.fatal("update class", e.b.UpdateClass(e.ctx, cs[1]))
	if got, err := e.b.Class(e.ctx, cs[1].ID); err != nil || got != cs[1] {
		e.t.Errorf("after update %+v %v, want %+v", got, err, cs[1])
	}
	e.fatal("rename class", e.b.RenameClass(e.ctx, "buoy", "float"))
	cs[2].Name = "float"
	list, err := e.b.Classes(e.ctx)
	e.fatal("list classes", err)
	if !slices.Equal(list, cs) {
		e.t.Errorf("classes %+v, want them in the order added %+v", list, cs)
	}
	if ls := e.labels(project.LabelFilter{ClassID: cs[1].ID}); len(ls) != 1 {
		e.t.Errorf("the label of the renamed class: %+v", ls)
	}
	if _, err := e.b.ClassByName(e.ctx, "kayak"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("old name still found: %v", err)
	}
}

// A class in use is not deleted unless its labels and suggestions move to
// another class or go with it.
func classDeleteAndMerge(e *env) {
	ims := e.images(2)
	ann := e.annotator("Ines")
	kayak, boat, unused, hint := e.class("kayak"), e.class("boat"), e.class("unused"), e.class("hint")
	for i := 0; i < 3; i++ {
		e.insert(project.Label{ImageID: ims[i%2].ID, ClassID: kayak.ID, AnnotatorID: ann.ID, Box: box(float64(i), 0, 10, 10)})
	}
	_, err := e.b.AddSuggestions(e.ctx, []project.Suggestion{
		{ImageID: ims[0].ID, ClassID: kayak.ID, Box: box(1, 1, 5, 5), Score: 0.9, Source: "det"},
		{ImageID: ims[1].ID, ClassID: hint.ID, Box: box(2, 2, 6, 6), Score: 0.4, Source: "det"},
	})
	e.fatal("add suggestions", err)

	before := e.snapshot()
	err = e.b.DeleteClass(e.ctx, kayak.ID, project.DeleteClassOptions{})
	if e.wantErr("delete a class with labels", err, project.ErrInUse) && !strings.Contains(err.Error(), "kayak") {
		e.t.Errorf("the refusal does not name the class: %v", err)
	}
	e.wantErr("delete a class with only a suggestion", e.b.DeleteClass(e.ctx, hint.ID, project.DeleteClassOptions{}), project.ErrInUse)
	e.wantErr("merge a class into itself", e.b.DeleteClass(e.ctx, kayak.ID, project.DeleteClassOptions{MoveTo: kayak.ID}), project.ErrInvalid)
	e.wantErr("merge into a missing class", e.b.DeleteClass(e.ctx, kayak.ID, project.DeleteClassOptions{MoveTo: 99999}), project.ErrNotFound)
	e.wantErr("delete a missing class", e.b.DeleteClass(e.ctx, 99999, project.DeleteClassOptions{}), project.ErrNotFound)
	e.wantErr("merge from a missing class", e.b.MergeClass(e.ctx, "ghost", "boat"), project.ErrNotFound)
	e.wantErr("merge into a missing class by name", e.b.MergeClass(e.ctx, "kayak", "ghost"), project.ErrNotFound)
	e.unchanged("refused deletes", before)

	e.fatal("delete an unused class", e.b.DeleteClass(e.ctx, unused.ID, project.DeleteClassOptions{}))
	if _, err := e.b.Class(e.ctx, unused.ID); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("deleted class still there: %v", err)
	}

	e.fatal("merge", e.b.MergeClass(e.ctx, "kayak", "boat"))
	if ls := e.labels(project.LabelFilter{ClassID: boat.ID}); len(ls) != 3 {
		e.t.Errorf("after merge: %d labels of boat, want 3", len(ls))
	}
	if gs := e.suggestions(project.SuggestionFilter{ImageID: ims[0].ID}); len(gs) != 1 || gs[0].ClassID != boat.ID {
		e.t.Errorf("after merge the suggestion is %+v, want it on boat", gs)
	}
	if _, err := e.b.ClassByName(e.ctx, "kayak"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("merged class still there: %v", err)
	}
	if ls := e.labels(project.LabelFilter{ClassID: kayak.ID}); len(ls) != 0 {
		e.t.Errorf("labels of the merged class left: %+v", ls)
	}

	e.fatal("delete with labels", e.b.DeleteClass(e.ctx, boat.ID, project.DeleteClassOptions{DeleteLabels: true}))
	c := e.counts()
	if c.Labels != 0 || c.Suggestions[project.SuggestionPending] != 1 {
		e.t.Errorf("delete with labels left %d labels and %v suggestions (want 0 and hint's 1 pending)", c.Labels, c.Suggestions)
	}
	list, _ := e.b.Classes(e.ctx)
	if len(list) != 1 || list[0].ID != hint.ID {
		e.t.Errorf("classes left %+v, want hint only", list)
	}
}

func annotators(e *env) {
	a, err := e.b.AddAnnotator(e.ctx, "Tomas")
	e.fatal("add annotator", err)
	if a.ID == 0 || a.Name != "Tomas" || a.Created.IsZero() {
		e.t.Errorf("new annotator %+v", a)
	}
	before := e.snapshot()
	if _, err := e.b.AddAnnotator(e.ctx, "Tomas"); !errors.Is(err, project.ErrDuplicate) {
		e.t.Errorf("duplicate annotator: %v, want ErrDuplicate", err)
	}
	for _, bad := range []string{"", " ", "line\nbreak", " Tomas"} {
		if _, err := e.b.AddAnnotator(e.ctx, bad); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("annotator name %q: %v, want ErrInvalid", bad, err)
		}
		if _, err := e.b.EnsureAnnotator(e.ctx, bad); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("ensure annotator %q: %v, want ErrInvalid", bad, err)
		}
	}
	if got, err := e.b.EnsureAnnotator(e.ctx, "Tomas"); err != nil || got.ID != a.ID {
		e.t.Errorf("EnsureAnnotator of a known name: %+v %v, want ID %d", got, err, a.ID)
	}
	if _, err := e.b.AnnotatorByName(e.ctx, "Nobody"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("unknown annotator: %v, want ErrNotFound", err)
	}
	if _, err := e.b.AnnotatorByName(e.ctx, "tomas"); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("annotator names are exact (case matters): %v", err)
	}
	e.unchanged("refused annotators", before)
	ines, err := e.b.EnsureAnnotator(e.ctx, "Ines")
	if err != nil || ines.ID == 0 || ines.ID == a.ID {
		e.t.Fatalf("EnsureAnnotator of a new name: %+v %v", ines, err)
	}
	if got, err := e.b.AnnotatorByName(e.ctx, "Ines"); err != nil || got.ID != ines.ID || got.Created.IsZero() {
		e.t.Errorf("by name %+v %v", got, err)
	}
	as, err := e.b.Annotators(e.ctx)
	e.fatal("list annotators", err)
	if len(as) != 2 || as[0].Name != "Ines" || as[1].Name != "Tomas" {
		e.t.Errorf("annotators %+v, want Ines, Tomas (by name)", as)
	}
}

// Lists "by name" or "by path" are in code-point order (Go's string
// order, SQLite's BINARY collation), the same on every backend: a server
// whose database collates by locale must say COLLATE "C".
func namesSortByCodePoint(e *env) {
	names := []string{"adam", "Zoe", "Émile", "bea", "Bea", "_x", "émile"}
	for _, n := range names {
		e.annotator(n)
	}
	want := slices.Clone(names)
	slices.Sort(want)
	as, err := e.b.Annotators(e.ctx)
	e.fatal("list annotators", err)
	var got []string
	for _, a := range as {
		got = append(got, a.Name)
	}
	if !slices.Equal(got, want) {
		e.t.Errorf("annotators in order %q, want %q", got, want)
	}
	got = got[:0]
	for _, nc := range e.counts().LabelsByAnnotator {
		got = append(got, nc.Name)
	}
	if !slices.Equal(got, want) {
		e.t.Errorf("Counts.LabelsByAnnotator in order %q, want %q", got, want)
	}
	ims := e.pictures(pic{name: "apple.jpg", w: 8, h: 8}, pic{name: "Zed.jpg", w: 8, h: 8}, pic{name: "Écluse.jpg", w: 8, h: 8},
		pic{name: "banana.jpg", w: 8, h: 8})
	list, err := e.b.Images(e.ctx)
	e.fatal("list images", err)
	if len(list) != len(ims) || !slices.IsSortedFunc(list, func(a, b project.Image) int { return strings.Compare(a.Path, b.Path) }) {
		var paths []string
		for _, im := range list {
			paths = append(paths, im.Path)
		}
		e.t.Errorf("images not in path order: %q", paths)
	}
	forA, err := e.b.ImagesFor(e.ctx, as[0].ID)
	e.fatal("images for", err)
	for i := range forA {
		if i < len(list) && forA[i].ID != list[i].ID {
			e.t.Errorf("ImagesFor lists in another order than Images at %d", i)
		}
	}
}
