package storetest

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"boxwright/project"
)

func init() {
	register(
		testCase{"LabelChangeInserts", labelChangeInserts},
		testCase{"LabelChangeAllOrNothing", labelChangeAllOrNothing},
		testCase{"LabelFilters", labelFilters},
		testCase{"AddLabelsAllOrNothing", addLabelsAllOrNothing},
		testCase{"ReplaceAnnotatorLabels", replaceAnnotatorLabels},
		testCase{"LabelTallies", labelTallies},
		testCase{"BoxesByImage", boxesByImage},
		testCase{"NonFiniteScoresRefused", nonFiniteScores},
	)
}

// Inserted labels come back as stored, with their IDs in order; the first
// label of an annotator on an image starts the image for them alone, and
// a later label does not move a finished image back.
func labelChangeInserts(e *env) {
	ims := e.images(2)
	c := e.class("buoy")
	ana, ben := e.annotator("ana"), e.annotator("ben")
	l1 := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: ana.ID, Box: box(1.5, 2.25, 30, 40)}
	l2 := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: ana.ID, Box: box(3, 4, 5, 6), Origin: project.OriginImported,
		Source: "old.json", Score: 0.75}
	ids, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Insert: []project.Label{l1, l2}})
	if err != nil || len(ids) != 2 || ids[0] == 0 || ids[1] <= ids[0] {
		e.t.Fatalf("insert: %v %v", ids, err)
	}
	got, err := e.b.Label(e.ctx, ids[0])
	e.fatal("read label", err)
	if got.ID != ids[0] || got.ImageID != l1.ImageID || got.ClassID != c.ID || got.AnnotatorID != ana.ID || got.Box != l1.Box ||
		got.Origin != project.OriginDrawn || got.Source != "" || got.SuggestionID != 0 || got.Created.IsZero() || got.Updated.IsZero() {
		e.t.Errorf("label read back %+v (a zero origin is drawn)", got)
	}
	got, _ = e.b.Label(e.ctx, ids[1])
	if got.Origin != project.OriginImported || got.Source != "old.json" || got.Score != 0.75 || got.Box != l2.Box {
		e.t.Errorf("imported label read back %+v", got)
	}
	if st := e.statusFor(ana.ID); st[ims[0].ID] != project.StatusStarted || st[ims[1].ID] != project.StatusNew {
		e.t.Errorf("ana's statuses after her first labels %v, want image 1 started", st)
	}
	if st := e.statusFor(ben.ID); st[ims[0].ID] != project.StatusNew {
		e.t.Errorf("ben's status %s: another's label started his image", st[ims[0].ID])
	}
	if im, _ := e.b.Image(e.ctx, ims[0].ID); im.Status != project.StatusStarted {
		e.t.Errorf("image status %s over all annotators, want started", im.Status)
	}
	e.fatal("mark done", e.b.SetImageStatus(e.ctx, ims[1].ID, ben.ID, project.StatusDone, ben.ID))
	e.insert(project.Label{ImageID: ims[1].ID, ClassID: c.ID, AnnotatorID: ben.ID, Box: box(0, 0, 4, 4)})
	if st := e.statusFor(ben.ID); st[ims[1].ID] != project.StatusDone {
		e.t.Errorf("a label on a done image moved it to %s", st[ims[1].ID])
	}
	if ids, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{}); err != nil || len(ids) != 0 {
		e.t.Errorf("empty change: %v %v", ids, err)
	}
}

// A change happens whole or not at all: a missing label, a bad box or
// origin, or an unknown image, class or annotator anywhere in it leaves
// everything as it was.
func labelChangeAllOrNothing(e *env) {
	ims := e.images(2)
	c := e.class("buoy")
	a := e.annotator("ana")
	l := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(1, 2, 30, 40)}
	ids := e.insert(l, l)
	moved := l
	moved.ID, moved.Box = ids[0], box(5, 5, 50, 50)
	fresh := project.Label{ImageID: ims[1].ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(1, 1, 2, 2)}
	bad := func(mut func(*project.Label)) project.Label { x := fresh; mut(&x); return x }
	before := e.snapshot()
	for _, k := range []struct {
		name string
		ch   project.LabelChange
		kind error
	}{
		{"delete a missing label", project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1], 99999}, Insert: []project.Label{fresh}}, project.ErrNotFound},
		{"update a missing label", project.LabelChange{Insert: []project.Label{fresh}, Update: []project.Label{{ID: 99999, ClassID: c.ID, Box: box(0, 0, 1, 1)}}}, project.ErrNotFound},
		{"update to an empty box", project.LabelChange{Delete: []int64{ids[1]}, Update: []project.Label{{ID: ids[0], ClassID: c.ID, Box: box(5, 5, 5, 9)}}}, project.ErrInvalid},
		{"update to a NaN box", project.LabelChange{Update: []project.Label{{ID: ids[0], ClassID: c.ID, Box: box(0, 0, math.NaN(), 9)}}}, project.ErrInvalid},
		{"update to a missing class", project.LabelChange{Update: []project.Label{{ID: ids[0], ClassID: 99999, Box: box(0, 0, 1, 1)}}}, project.ErrNotFound},
		{"insert an inverted box", project.LabelChange{Delete: []int64{ids[1]}, Insert: []project.Label{fresh, bad(func(x *project.Label) { x.Box = box(9, 9, 1, 1) })}}, project.ErrInvalid},
		{"insert an unknown origin", project.LabelChange{Insert: []project.Label{fresh, bad(func(x *project.Label) { x.Origin = "guessed" })}}, project.ErrInvalid},
		{"insert on a missing image", project.LabelChange{Update: []project.Label{moved}, Insert: []project.Label{fresh, bad(func(x *project.Label) { x.ImageID = 99999 })}}, project.ErrNotFound},
		{"insert of a missing class", project.LabelChange{Insert: []project.Label{fresh, bad(func(x *project.Label) { x.ClassID = 99999 })}}, project.ErrNotFound},
		{"insert by a missing annotator", project.LabelChange{Insert: []project.Label{fresh, bad(func(x *project.Label) { x.AnnotatorID = 99999 })}}, project.ErrNotFound},
	} {
		if ids, err := e.b.ApplyLabelChange(e.ctx, k.ch); e.wantErr(k.name, err, k.kind) && ids != nil {
			e.t.Errorf("%s: a refused change returned IDs %v", k.name, ids)
		}
	}
	e.unchanged("refused label changes", before)

	ch := project.LabelChange{Update: []project.Label{moved}, Delete: []int64{ids[1]}, Insert: []project.Label{fresh}}
	made, err := e.b.ApplyLabelChange(e.ctx, ch)
	if err != nil || len(made) != 1 {
		e.t.Fatalf("change: %v %v", made, err)
	}
	all := e.labels(project.LabelFilter{})
	if len(all) != 2 || all[0].ID != ids[0] || all[0].Box != moved.Box || all[1].ID != made[0] || all[1].ImageID != ims[1].ID {
		e.t.Fatalf("after the change %+v", all)
	}
	if all[0].Updated.Before(all[0].Created) {
		e.t.Errorf("updated %v before created %v", all[0].Updated, all[0].Created)
	}
	// A change of class moves the label to it.
	other := e.class("kayak")
	moved.ClassID = other.ID
	e.fatal("change class", func() error {
		_, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Update: []project.Label{moved}})
		return err
	}())
	if got, _ := e.b.Label(e.ctx, moved.ID); got.ClassID != other.ID || got.AnnotatorID != a.ID || got.ImageID != ims[0].ID {
		e.t.Errorf("after a change of class %+v", got)
	}
	// A deleted label is gone.
	if _, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Delete: []int64{made[0]}}); err != nil {
		e.t.Fatal(err)
	}
	if _, err := e.b.Label(e.ctx, made[0]); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("deleted label: %v, want ErrNotFound", err)
	}
}

// Labels filters by image, annotator and class together, and lists by
// image, then in the order stored.
func labelFilters(e *env) {
	ims := e.images(3)
	boat, kayak := e.class("boat"), e.class("kayak")
	ines, tomas := e.annotator("Ines"), e.annotator("Tomas")
	type k struct{ im, cl, an int64 }
	var order []k
	for i := 0; i < 12; i++ {
		im, cl, an := ims[(i*2)%3].ID, boat.ID, ines.ID
		if i%3 == 0 {
			cl = kayak.ID
		}
		if i%2 == 0 {
			an = tomas.ID
		}
		e.insert(project.Label{ImageID: im, ClassID: cl, AnnotatorID: an, Box: box(float64(i), 0, float64(i)+5, 5)})
		order = append(order, k{im, cl, an})
	}
	check := func(name string, f project.LabelFilter) {
		e.t.Helper()
		got := e.labels(f)
		var want []project.Label
		for i, o := range order {
			if (f.ImageID == 0 || f.ImageID == o.im) && (f.ClassID == 0 || f.ClassID == o.cl) && (f.AnnotatorID == 0 || f.AnnotatorID == o.an) {
				want = append(want, project.Label{ImageID: o.im, ClassID: o.cl, AnnotatorID: o.an, Box: box(float64(i), 0, float64(i)+5, 5)})
			}
		}
		slices.SortStableFunc(want, func(a, b project.Label) int { return int(a.ImageID - b.ImageID) })
		if len(got) != len(want) {
			e.t.Errorf("%s: %d labels, want %d", name, len(got), len(want))
			return
		}
		for i := range got {
			w := want[i]
			if got[i].ImageID != w.ImageID || got[i].ClassID != w.ClassID || got[i].AnnotatorID != w.AnnotatorID || got[i].Box != w.Box {
				e.t.Errorf("%s: label %d is %+v, want %+v (by image, then as stored)", name, i, got[i], w)
			}
			if i > 0 && got[i-1].ImageID == got[i].ImageID && got[i-1].ID >= got[i].ID {
				e.t.Errorf("%s: IDs out of order within an image", name)
			}
		}
	}
	check("all", project.LabelFilter{})
	check("image", project.LabelFilter{ImageID: ims[1].ID})
	check("annotator", project.LabelFilter{AnnotatorID: ines.ID})
	check("class", project.LabelFilter{ClassID: kayak.ID})
	check("image and annotator", project.LabelFilter{ImageID: ims[0].ID, AnnotatorID: tomas.ID})
	check("everything", project.LabelFilter{ImageID: ims[2].ID, AnnotatorID: tomas.ID, ClassID: kayak.ID})
	if ls := e.labels(project.LabelFilter{ImageID: 99999}); len(ls) != 0 {
		e.t.Errorf("labels of a missing image: %+v", ls)
	}
	if _, err := e.b.Label(e.ctx, 99999); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("missing label: %v, want ErrNotFound", err)
	}
}

func addLabelsAllOrNothing(e *env) {
	ims := e.images(1)
	c := e.class("buoy")
	a := e.annotator("ana")
	good := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(1, 1, 5, 5), Origin: project.OriginImported, Source: "batch"}
	before := e.snapshot()
	for name, bad := range map[string]project.Label{
		"empty box":         {ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(5, 5, 5, 9)},
		"missing class":     {ImageID: ims[0].ID, ClassID: 99999, AnnotatorID: a.ID, Box: box(1, 1, 5, 5)},
		"missing image":     {ImageID: 99999, ClassID: c.ID, AnnotatorID: a.ID, Box: box(1, 1, 5, 5)},
		"missing annotator": {ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: 99999, Box: box(1, 1, 5, 5)},
	} {
		kind := project.ErrNotFound
		if name == "empty box" {
			kind = project.ErrInvalid
		}
		e.wantErr("a batch with a label with "+name, e.b.AddLabels(e.ctx, []project.Label{good, good, bad}), kind)
	}
	e.unchanged("refused batches", before)
	e.fatal("add labels", e.b.AddLabels(e.ctx, []project.Label{good, good}))
	ls := e.labels(project.LabelFilter{})
	if len(ls) != 2 || ls[0].Source != "batch" || ls[0].Origin != project.OriginImported || ls[0].Box != good.Box {
		e.t.Errorf("batch stored as %+v", ls)
	}
	e.fatal("add no labels", e.b.AddLabels(e.ctx, nil))
}

// ReplaceAnnotatorLabels swaps one annotator's labels whole (the labels
// become theirs, imported unless said otherwise); a bad label refuses the
// swap.
func replaceAnnotatorLabels(e *env) {
	ims := e.images(2)
	c := e.class("buoy")
	ana, con := e.annotator("ana"), e.annotator("consensus")
	keep := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: ana.ID, Box: box(1, 1, 9, 9)}
	old := keep
	old.AnnotatorID = con.ID
	e.insert(keep, old, old)
	nl := project.Label{ImageID: ims[1].ID, ClassID: c.ID, AnnotatorID: ana.ID, Box: box(2, 2, 8, 8), Source: "consensus of ana"}
	e.fatal("replace", e.b.ReplaceAnnotatorLabels(e.ctx, con.ID, []project.Label{nl, nl}))
	got := e.labels(project.LabelFilter{AnnotatorID: con.ID})
	if len(got) != 2 || got[0].Box != nl.Box || got[0].ImageID != ims[1].ID || got[0].Origin != project.OriginImported || got[0].Source != nl.Source ||
		got[0].AnnotatorID != con.ID {
		e.t.Fatalf("consensus labels %+v", got)
	}
	if mine := e.labels(project.LabelFilter{AnnotatorID: ana.ID}); len(mine) != 1 || mine[0].Box != keep.Box {
		e.t.Errorf("another annotator's labels changed: %+v", mine)
	}
	before := e.snapshot()
	bad := nl
	bad.Box = box(3, 3, 3, 5)
	if err := e.b.ReplaceAnnotatorLabels(e.ctx, con.ID, []project.Label{nl, bad}); err == nil {
		e.t.Error("a swap with a bad box was accepted")
	}
	missing := nl
	missing.ImageID = 99999
	e.wantErr("a swap with a label on a missing image", e.b.ReplaceAnnotatorLabels(e.ctx, con.ID, []project.Label{nl, missing}), project.ErrNotFound)
	e.wantErr("a swap for a missing annotator", e.b.ReplaceAnnotatorLabels(e.ctx, 99999, []project.Label{nl}), project.ErrNotFound)
	e.unchanged("refused swaps", before)
	e.fatal("replace with nothing", e.b.ReplaceAnnotatorLabels(e.ctx, con.ID, nil))
	if got := e.labels(project.LabelFilter{AnnotatorID: con.ID}); len(got) != 0 {
		e.t.Errorf("labels left after replacing with none: %+v", got)
	}
}

func labelTallies(e *env) {
	ims := e.images(2)
	boat, kayak := e.class("boat"), e.class("kayak")
	ines, tomas := e.annotator("Ines"), e.annotator("Tomas")
	l := func(im project.Image, c project.Class, a project.Annotator, x float64) project.Label {
		return project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(x, 0, x+3, 3)}
	}
	e.insert(l(ims[0], boat, ines, 0), l(ims[0], boat, ines, 1), l(ims[0], boat, tomas, 2), l(ims[1], kayak, ines, 3),
		l(ims[1], boat, ines, 4), l(ims[1], kayak, ines, 5), l(ims[1], kayak, ines, 6))
	got, err := e.b.LabelTallies(e.ctx)
	e.fatal("tallies", err)
	want := []project.LabelTally{
		{ImageID: ims[0].ID, ClassID: boat.ID, AnnotatorID: ines.ID, N: 2},
		{ImageID: ims[0].ID, ClassID: boat.ID, AnnotatorID: tomas.ID, N: 1},
		{ImageID: ims[1].ID, ClassID: kayak.ID, AnnotatorID: ines.ID, N: 3},
		{ImageID: ims[1].ID, ClassID: boat.ID, AnnotatorID: ines.ID, N: 1},
	}
	byKey := func(a, b project.LabelTally) int {
		if a.ImageID != b.ImageID {
			return int(a.ImageID - b.ImageID)
		}
		if a.ClassID != b.ClassID {
			return int(a.ClassID - b.ClassID)
		}
		return int(a.AnnotatorID - b.AnnotatorID)
	}
	slices.SortFunc(got, byKey)
	slices.SortFunc(want, byKey)
	if !slices.Equal(got, want) {
		e.t.Errorf("tallies %+v, want %+v (in any order)", got, want)
	}
}

// BoxesByImage groups by image in image order, each image's boxes in the
// order stored, and keeps to the annotators asked for.
func boxesByImage(e *env) {
	c := e.class("buoy")
	a, b, x := e.annotator("a"), e.annotator("b"), e.annotator("x")
	ims := e.images(5)
	// Interleaved, so that an image's boxes were not stored together.
	want := map[int64][]project.BoxRow{}
	wantAB := map[int64][]project.BoxRow{}
	for round := 0; round < 40; round++ {
		im := ims[(round*3)%len(ims)]
		ann := a.ID
		switch round % 3 {
		case 0:
			ann = b.ID
		case 1:
			if round%2 == 1 {
				ann = x.ID
			}
		}
		bx := box(float64(round), 0, float64(round)+5, 5)
		e.insert(project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: ann, Box: bx})
		row := project.BoxRow{AnnotatorID: ann, ClassID: c.ID, Box: bx}
		if ann == a.ID {
			want[im.ID] = append(want[im.ID], row)
		}
		if ann != x.ID {
			wantAB[im.ID] = append(wantAB[im.ID], row)
		}
	}
	check := func(name string, ids []int64, want map[int64][]project.BoxRow) {
		e.t.Helper()
		got, err := e.b.BoxesByImage(e.ctx, ids)
		e.fatal("boxes by image", err)
		if len(got) != len(want) {
			e.t.Errorf("%s: %d images, want %d", name, len(got), len(want))
		}
		for i, ib := range got {
			if i > 0 && got[i-1].ImageID >= ib.ImageID {
				e.t.Errorf("%s: images out of order: %d after %d", name, ib.ImageID, got[i-1].ImageID)
			}
			if !slices.Equal(ib.Boxes, want[ib.ImageID]) {
				e.t.Errorf("%s: image %d boxes %+v, want %+v", name, ib.ImageID, ib.Boxes, want[ib.ImageID])
			}
		}
	}
	check("annotator a", []int64{a.ID}, want)
	check("annotators a and b", []int64{b.ID, a.ID}, wantAB)

	for name, ids := range map[string][]int64{"nil": nil, "empty": {}} {
		got, err := e.b.BoxesByImage(e.ctx, ids)
		e.fatal("boxes by image", err)
		n := 0
		for _, ib := range got {
			n += len(ib.Boxes)
		}
		if n != 40 {
			e.t.Errorf("annotators %s (everyone): %d boxes, want 40", name, n)
		}
	}
	if got, err := e.b.BoxesByImage(e.ctx, []int64{99999}); err != nil || len(got) != 0 {
		e.t.Errorf("boxes of an unknown annotator: %+v %v", got, err)
	}
}

// A score is a finite number: NaN and infinities are refused (ErrInvalid)
// wherever a label or suggestion is stored, whatever the column type of a
// backend would take.
func nonFiniteScores(e *env) {
	ims := e.images(1)
	c := e.class("buoy")
	a := e.annotator("ana")
	before := e.snapshot()
	for _, v := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
		l := project.Label{ImageID: ims[0].ID, ClassID: c.ID, AnnotatorID: a.ID, Box: box(1, 1, 5, 5), Origin: project.OriginAccepted, Score: v}
		_, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Insert: []project.Label{l}})
		e.wantErr(fmt.Sprintf("a label scored %v", v), err, project.ErrInvalid)
		e.wantErr(fmt.Sprintf("a batch of labels scored %v", v), e.b.AddLabels(e.ctx, []project.Label{l}), project.ErrInvalid)
		e.wantErr(fmt.Sprintf("a swap with labels scored %v", v), e.b.ReplaceAnnotatorLabels(e.ctx, a.ID, []project.Label{l}), project.ErrInvalid)
		_, err = e.b.AddSuggestions(e.ctx, []project.Suggestion{{ImageID: ims[0].ID, ClassID: c.ID, Box: box(1, 1, 5, 5), Score: v, Source: "det"}})
		e.wantErr(fmt.Sprintf("a suggestion scored %v", v), err, project.ErrInvalid)
	}
	e.unchanged("non-finite scores", before)
}
