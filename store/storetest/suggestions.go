package storetest

import (
	"errors"
	"math"
	"slices"
	"strconv"
	"strings"

	"boxwright/project"
)

func init() {
	register(
		testCase{"AddSuggestions", addSuggestions},
		testCase{"ImportSuggestionsReplacesPendingOnly", importSuggestionsReplacesPending},
		testCase{"ImportSuggestionsAllOrNothing", importSuggestionsAllOrNothing},
		testCase{"ReplaceSuggestionsOn", replaceSuggestionsOn},
		testCase{"QuerySuggestions", querySuggestions},
		testCase{"DecideVerdicts", decideVerdicts},
		testCase{"DecideRefusals", decideRefusals},
		testCase{"Undecide", undecide},
		testCase{"Counts", counts},
	)
}

// review is the usual fixture of the review cases: two images, two
// classes and a reviewer.
type review struct {
	im1, im2    project.Image
	boat, kayak project.Class
	rev         project.Annotator
}

func (e *env) review() review {
	e.t.Helper()
	ims := e.images(2)
	return review{im1: ims[0], im2: ims[1], boat: e.class("motorboat"), kayak: e.class("kayak"), rev: e.annotator("Ines")}
}

func (e *env) importSuggestions(source string, gs ...project.Suggestion) []project.Suggestion {
	e.t.Helper()
	rep, err := e.b.ImportSuggestions(e.ctx, source, gs)
	e.fatal("import suggestions", err)
	if rep.Added != len(gs) {
		e.t.Fatalf("import of %d suggestions: %+v", len(gs), rep)
	}
	return e.query(project.SuggestionQuery{Source: source})
}

func (e *env) decide(reviewer int64, ds ...project.Decision) map[int64]int64 {
	e.t.Helper()
	made, err := e.b.Decide(e.ctx, reviewer, ds)
	e.fatal("decide", err)
	return made
}

// AddSuggestions stores pending suggestions as given, all or nothing.
func addSuggestions(e *env) {
	f := e.review()
	in := []project.Suggestion{
		{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: box(10, 10, 50, 30), Score: 0.55, Source: "detector-v7"},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(1.5, 2.5, 3.5, 4.5), Score: 0.91, Source: "detector-v7"},
		{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: box(0, 0, 9, 9), Score: 0.30, Source: "exemplar",
			State: project.SuggestionAccepted, ReviewerID: f.rev.ID}, // a new suggestion is pending whatever it says
		{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: box(0, 0, 8, 8), Score: -0.5, Source: "exemplar"},
	}
	ids, err := e.b.AddSuggestions(e.ctx, in)
	if err != nil || len(ids) != len(in) {
		e.t.Fatalf("add: %v %v", ids, err)
	}
	for i, id := range ids {
		g, err := e.b.Suggestion(e.ctx, id)
		e.fatal("read suggestion", err)
		w := in[i]
		if g.ID != id || g.ImageID != w.ImageID || g.ClassID != w.ClassID || g.Box != w.Box || g.Score != w.Score || g.Source != w.Source ||
			g.State != project.SuggestionPending || g.ReviewerID != 0 || !g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 || g.Created.IsZero() {
			e.t.Errorf("suggestion %d read back %+v, want %+v pending", i, g, w)
		}
	}
	// Suggestions lists by image, best score first, then as stored.
	var order []int64
	for _, g := range e.suggestions(project.SuggestionFilter{}) {
		order = append(order, g.ID)
	}
	if want := []int64{ids[1], ids[2], ids[3], ids[0]}; !slices.Equal(order, want) {
		e.t.Errorf("order %v, want %v (by image, best score first)", order, want)
	}
	if gs := e.suggestions(project.SuggestionFilter{ImageID: f.im1.ID, Source: "exemplar"}); len(gs) != 2 || gs[0].ID != ids[2] {
		e.t.Errorf("filter by image and source: %+v", gs)
	}
	if gs := e.suggestions(project.SuggestionFilter{State: project.SuggestionAccepted}); len(gs) != 0 {
		e.t.Errorf("filter by state: %+v", gs)
	}
	if src, err := e.b.SuggestionSources(e.ctx); err != nil || !slices.Equal(src, []string{"detector-v7", "exemplar"}) {
		e.t.Errorf("sources %v %v", src, err)
	}
	if _, err := e.b.Suggestion(e.ctx, 99999); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("missing suggestion: %v, want ErrNotFound", err)
	}

	good := in[0]
	before := e.snapshot()
	for _, k := range []struct {
		name string
		mut  func(*project.Suggestion)
		kind error
	}{
		{"unknown class", func(g *project.Suggestion) { g.ClassID = 99999 }, project.ErrNotFound},
		{"unknown image", func(g *project.Suggestion) { g.ImageID = 99999 }, project.ErrNotFound},
		{"empty box", func(g *project.Suggestion) { g.Box = box(5, 5, 5, 9) }, project.ErrInvalid},
		{"no source", func(g *project.Suggestion) { g.Source = " " }, project.ErrInvalid},
	} {
		bad := good
		k.mut(&bad)
		ids, err := e.b.AddSuggestions(e.ctx, []project.Suggestion{good, bad})
		if e.wantErr("a batch with "+k.name, err, k.kind) && len(ids) != 0 {
			e.t.Errorf("%s: refused batch returned IDs %v", k.name, ids)
		}
	}
	e.unchanged("refused batches", before)
}

// An import replaces the source's pending suggestions and leaves decided
// ones and other sources alone.
func importSuggestionsReplacesPending(e *env) {
	f := e.review()
	first := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: box(20, 20, 40, 40), Score: 0.6, Source: "det"},
		{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: box(5, 5, 15, 25), Score: 0.3},
	}
	rep, err := e.b.ImportSuggestions(e.ctx, "det", first)
	if err != nil || rep != (project.SuggestionImportReport{Source: "det", Added: 3}) {
		e.t.Fatalf("first import: %+v %v", rep, err)
	}
	if _, err := e.b.ImportSuggestions(e.ctx, "other", first[:1]); err != nil {
		e.t.Fatal(err)
	}
	gs := e.query(project.SuggestionQuery{Source: "det"})
	if len(gs) != 3 || gs[0].Score != 0.9 || gs[0].Source != "det" || gs[0].State != project.SuggestionPending || gs[0].Box != first[0].Box {
		e.t.Fatalf("after import: %+v", gs)
	}
	e.decide(f.rev.ID, project.Decision{SuggestionID: gs[0].ID, Accept: true}, project.Decision{SuggestionID: gs[1].ID})
	second := []project.Suggestion{
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(1, 1, 2, 2), Score: 0.5},
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(3, 3, 4, 4), Score: 0.45},
	}
	rep, err = e.b.ImportSuggestions(e.ctx, "det", second)
	if err != nil || rep != (project.SuggestionImportReport{Source: "det", Added: 2, ReplacedPending: 1, KeptReviewed: 2}) {
		e.t.Fatalf("re-import: %+v %v", rep, err)
	}
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{Source: "det"}); n != 2 {
		e.t.Errorf("pending after re-import: %d, want 2", n)
	}
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{Source: "other"}); n != 1 {
		e.t.Errorf("another source's pending suggestion was touched: %d", n)
	}
	if g, _ := e.b.Suggestion(e.ctx, gs[0].ID); g.State != project.SuggestionAccepted || g.LabelID == 0 {
		e.t.Errorf("accepted suggestion after re-import: %+v", g)
	}
	if g, _ := e.b.Suggestion(e.ctx, gs[1].ID); g.State != project.SuggestionRejected {
		e.t.Errorf("rejected suggestion after re-import: %+v", g)
	}
	if _, err := e.b.Suggestion(e.ctx, gs[2].ID); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("replaced pending suggestion still there: %v", err)
	}
	// Importing nothing would silently delete the pending ones: refused.
	before := e.snapshot()
	if _, err := e.b.ImportSuggestions(e.ctx, "det", nil); !errors.Is(err, project.ErrInvalid) {
		e.t.Errorf("empty import over pending suggestions: %v, want ErrInvalid", err)
	}
	e.unchanged("a refused empty import", before)
	if rep, err := e.b.ImportSuggestions(e.ctx, "fresh", nil); err != nil || rep.Added != 0 {
		e.t.Errorf("empty import of a source with nothing pending: %+v %v", rep, err)
	}
}

func importSuggestionsAllOrNothing(e *env) {
	f := e.review()
	good := project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9}
	e.importSuggestions("det", good)
	// 300 rows, so that the good ones before the bad one may fill a batch.
	bad := func(i int, mutate func(*project.Suggestion)) []project.Suggestion {
		gs := make([]project.Suggestion, 300)
		for k := range gs {
			gs[k] = good
		}
		mutate(&gs[i])
		return gs
	}
	before := e.snapshot()
	for _, c := range []struct {
		name string
		gs   []project.Suggestion
		want string
		is   error
	}{
		{"empty box", bad(290, func(g *project.Suggestion) { g.Box = box(5, 5, 5, 9) }), "suggestion 290", project.ErrInvalid},
		{"NaN coordinate", bad(3, func(g *project.Suggestion) { g.Box.X1 = math.NaN() }), "suggestion 3", project.ErrInvalid},
		{"NaN score", bad(7, func(g *project.Suggestion) { g.Score = math.NaN() }), "suggestion 7", project.ErrInvalid},
		{"infinite score", bad(8, func(g *project.Suggestion) { g.Score = math.Inf(1) }), "suggestion 8", project.ErrInvalid},
		{"unknown image", bad(299, func(g *project.Suggestion) { g.ImageID = 99999 }), "suggestion 299", project.ErrNotFound},
		{"unknown class", bad(0, func(g *project.Suggestion) { g.ClassID = 99999 }), "suggestion 0", project.ErrNotFound},
		{"other source", bad(1, func(g *project.Suggestion) { g.Source = "exemplar" }), "suggestion 1", project.ErrInvalid},
	} {
		rep, err := e.b.ImportSuggestions(e.ctx, "det", c.gs)
		if !errors.Is(err, c.is) || !strings.Contains(err.Error(), c.want) {
			e.t.Errorf("%s: %v, want %v naming %q", c.name, err, c.is, c.want)
		}
		if rep.Added != 0 || rep.ReplacedPending != 0 || rep.KeptReviewed != 0 {
			e.t.Errorf("%s: report of a failed import %+v", c.name, rep)
		}
	}
	for _, src := range []string{"", " ", " det", "det "} {
		if _, err := e.b.ImportSuggestions(e.ctx, src, []project.Suggestion{good}); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("source %q: %v, want ErrInvalid", src, err)
		}
	}
	e.unchanged("refused imports", before)
}

// ReplaceSuggestionsOn replaces the source's pending suggestions on the
// images named, and nowhere else.
func replaceSuggestionsOn(e *env) {
	f := e.review()
	g := func(img int64, x float64) project.Suggestion {
		return project.Suggestion{ImageID: img, ClassID: f.boat.ID, Box: box(x, 0, x+5, 5), Score: 0.7}
	}
	gs := e.importSuggestions("exemplar", g(f.im1.ID, 0), g(f.im1.ID, 10), g(f.im1.ID, 30), g(f.im2.ID, 0))
	e.importSuggestions("det", g(f.im1.ID, 50))
	e.decide(f.rev.ID, project.Decision{SuggestionID: gs[2].ID})
	rep, err := e.b.ReplaceSuggestionsOn(e.ctx, "exemplar", []int64{f.im1.ID}, []project.Suggestion{g(f.im1.ID, 20)})
	if err != nil || rep != (project.SuggestionImportReport{Source: "exemplar", Added: 1, ReplacedPending: 2, KeptReviewed: 1}) {
		e.t.Fatalf("replace on image 1: %+v, %v", rep, err)
	}
	onA := e.suggestions(project.SuggestionFilter{ImageID: f.im1.ID, Source: "exemplar", State: project.SuggestionPending})
	onB := e.suggestions(project.SuggestionFilter{ImageID: f.im2.ID})
	if len(onB) != 1 || len(onA) != 1 || onA[0].Box.X0 != 20 {
		e.t.Errorf("image 1: %+v, image 2: %+v", onA, onB)
	}
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{Source: "det"}); n != 1 {
		e.t.Errorf("another source's suggestion was replaced")
	}
	before := e.snapshot()
	if _, err := e.b.ReplaceSuggestionsOn(e.ctx, "exemplar", []int64{f.im1.ID}, []project.Suggestion{g(f.im1.ID, 1), g(f.im2.ID, 30)}); !errors.Is(err, project.ErrInvalid) {
		e.t.Errorf("a suggestion outside the replaced images: %v, want ErrInvalid", err)
	}
	e.unchanged("a refused replacement", before)
	// Replacing on an image with nothing clears the source's pending ones there.
	if rep, err := e.b.ReplaceSuggestionsOn(e.ctx, "exemplar", []int64{f.im2.ID}, nil); err != nil || rep.ReplacedPending != 1 {
		e.t.Errorf("replace with nothing on image 2: %+v %v", rep, err)
	}
	if rep, err := e.b.ReplaceSuggestionsOn(e.ctx, "exemplar", nil, nil); err != nil || rep.ReplacedPending != 0 {
		e.t.Errorf("replace on no images: %+v %v", rep, err)
	}
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{Source: "exemplar"}); n != 1 {
		e.t.Errorf("pending exemplar suggestions %d, want 1", n)
	}
}

func querySuggestions(e *env) {
	f := e.review()
	b := box(0, 0, 10, 10)
	det := e.importSuggestions("det",
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: b, Score: 0.9},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: b, Score: 0.5},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: b, Score: 0.5},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: b, Score: 0.3},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: b, Score: -1.5},
	)
	e.importSuggestions("exemplar", project.Suggestion{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: b, Score: 0.7})
	// Ties in score keep the order stored.
	if det[1].Score != 0.5 || det[2].Score != 0.5 || det[1].ImageID != f.im2.ID || det[1].ID >= det[2].ID {
		e.t.Errorf("a tie in score is not in the order stored: %+v", det[1:3])
	}
	for _, c := range []struct {
		name   string
		q      project.SuggestionQuery
		scores []float64
	}{
		{"everything pending", project.SuggestionQuery{}, []float64{0.9, 0.7, 0.5, 0.5, 0.3, -1.5}},
		{"min inclusive", project.SuggestionQuery{MinScore: 0.5}, []float64{0.9, 0.7, 0.5, 0.5}},
		{"max exclusive", project.SuggestionQuery{MinScore: 0.3, MaxScore: 0.7}, []float64{0.5, 0.5, 0.3}},
		{"negative bound", project.SuggestionQuery{MinScore: -2, MaxScore: 0.31}, []float64{0.3, -1.5}},
		{"class", project.SuggestionQuery{ClassID: f.kayak.ID}, []float64{0.7, 0.3, -1.5}},
		{"image", project.SuggestionQuery{ImageID: f.im1.ID}, []float64{0.9, 0.7, 0.5}},
		{"source", project.SuggestionQuery{Source: "exemplar"}, []float64{0.7}},
		{"all together", project.SuggestionQuery{Source: "det", ImageID: f.im2.ID, ClassID: f.boat.ID, MinScore: 0.5, MaxScore: 0.6}, []float64{0.5}},
		{"limit", project.SuggestionQuery{Limit: 2}, []float64{0.9, 0.7}},
		{"rejected", project.SuggestionQuery{State: project.SuggestionRejected}, nil},
	} {
		var got []float64
		for _, g := range e.query(c.q) {
			got = append(got, g.Score)
		}
		if !slices.Equal(got, c.scores) {
			e.t.Errorf("%s: scores %v, want %v", c.name, got, c.scores)
		}
		n, err := e.b.CountSuggestions(e.ctx, c.q)
		want := len(c.scores)
		if c.q.Limit > 0 {
			want = 6 // the count of a bulk action ignores a queue's limit
		}
		if err != nil || n != want {
			e.t.Errorf("%s: count %d %v, want %d", c.name, n, err, want)
		}
	}
	top := e.query(project.SuggestionQuery{Limit: 1})[0]
	e.decide(f.rev.ID, project.Decision{SuggestionID: top.ID})
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{}); n != 5 {
		e.t.Errorf("pending after a decision: %d", n)
	}
	if gs := e.query(project.SuggestionQuery{State: project.SuggestionRejected}); len(gs) != 1 || gs[0].ID != top.ID {
		e.t.Errorf("rejected: %+v", gs)
	}
	for name, q := range map[string]project.SuggestionQuery{
		"unknown state": {State: "maybe"},
		"NaN bound":     {MinScore: math.NaN()},
	} {
		if _, err := e.b.CountSuggestions(e.ctx, q); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("count with %s: %v, want ErrInvalid", name, err)
		}
		if _, err := e.b.QuerySuggestions(e.ctx, q); !errors.Is(err, project.ErrInvalid) {
			e.t.Errorf("query with %s: %v, want ErrInvalid", name, err)
		}
	}
}

// Decide: accepted as it is, corrected (box or class changed), rejected;
// the labels made are the reviewer's, with the suggestion's provenance,
// and accepting starts the reviewer's work on the image.
func decideVerdicts(e *env) {
	f := e.review()
	q := e.importSuggestions("det",
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.8},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.7},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(50, 50, 60, 60), Score: 0.2},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(0, 0, 10, 10), Score: 0.1},
	)
	acc, cor, recls, rej, shift := q[0].ID, q[1].ID, q[2].ID, q[3].ID, q[4].ID
	made := e.decide(f.rev.ID, project.Decision{SuggestionID: rej})
	if len(made) != 0 {
		e.t.Errorf("a rejection made labels %v", made)
	}
	if st := e.statusFor(f.rev.ID); st[f.im2.ID] != project.StatusNew {
		e.t.Errorf("after a rejection image 2 is %s for the reviewer, want new (no label of theirs)", st[f.im2.ID])
	}
	made = e.decide(f.rev.ID,
		project.Decision{SuggestionID: acc, Accept: true},
		project.Decision{SuggestionID: cor, Accept: true, Box: box(0, 0, 10, 5)},
		project.Decision{SuggestionID: recls, Accept: true, ClassID: f.kayak.ID},
		project.Decision{SuggestionID: shift, Accept: true, Box: box(5, 0, 15, 10), ClassID: f.kayak.ID},
	)
	if len(made) != 4 {
		e.t.Fatalf("labels made: %v", made)
	}
	// IoU by hand (intersection over union, as project.Box.IoU):
	// [0,0,10,5] inside [0,0,10,10]: 50 / 100 = 0.5; [0,0,10,10] against
	// [5,0,15,10]: 50 / 150 = 1/3.
	want := map[int64]struct {
		state  project.SuggestionState
		origin project.Origin
		box    project.Box
		class  int64
		image  int64
		iou    float64
	}{
		acc:   {project.SuggestionAccepted, project.OriginAccepted, box(0, 0, 10, 10), f.boat.ID, f.im1.ID, 1},
		cor:   {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 5), f.boat.ID, f.im1.ID, 0.5},
		recls: {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 10), f.kayak.ID, f.im1.ID, 1},
		// The class given is the suggestion's own, the box is new:
		// corrected (Decision.Final).
		shift: {project.SuggestionCorrected, project.OriginCorrected, box(5, 0, 15, 10), f.kayak.ID, f.im2.ID, 1.0 / 3},
	}
	for id, w := range want {
		g, err := e.b.Suggestion(e.ctx, id)
		e.fatal("read suggestion", err)
		if g.State != w.state || g.ReviewerID != f.rev.ID || g.Reviewed.IsZero() || g.LabelID != made[id] || math.Abs(g.FinalIoU-w.iou) > 1e-12 {
			e.t.Errorf("suggestion %d: %+v, want %+v", id, g, w)
		}
		l, err := e.b.Label(e.ctx, made[id])
		if err != nil || l.Origin != w.origin || l.Box != w.box || l.ClassID != w.class || l.AnnotatorID != f.rev.ID ||
			l.SuggestionID != id || l.Source != "det" || l.Score != g.Score || l.ImageID != w.image {
			e.t.Errorf("label of suggestion %d: %+v %v", id, l, err)
		}
	}
	g, _ := e.b.Suggestion(e.ctx, rej)
	if g.State != project.SuggestionRejected || g.ReviewerID != f.rev.ID || g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 {
		e.t.Errorf("rejected: %+v", g)
	}
	if st := e.statusFor(f.rev.ID); st[f.im1.ID] != project.StatusStarted || st[f.im2.ID] != project.StatusStarted {
		e.t.Errorf("after accepting, the reviewer's statuses are %v, want both started", st)
	}
	rows, err := e.b.ReviewRows(e.ctx, "")
	if err != nil || len(rows) != 5 {
		e.t.Fatalf("review rows: %+v %v", rows, err)
	}
	if rows[1] != (project.ReviewRow{Source: "det", ClassID: f.boat.ID, Score: 0.8, State: project.SuggestionCorrected, FinalIoU: 0.5}) {
		e.t.Errorf("review row in the order stored: %+v", rows[1])
	}
	if rows[3] != (project.ReviewRow{Source: "det", ClassID: f.kayak.ID, Score: 0.2, State: project.SuggestionRejected}) {
		e.t.Errorf("review row of the rejection: %+v", rows[3])
	}
	if rows, err := e.b.ReviewRows(e.ctx, "nobody"); err != nil || len(rows) != 0 {
		e.t.Errorf("review rows of an unknown source: %+v %v", rows, err)
	}
	if rows, err := e.b.ReviewRows(e.ctx, "det"); err != nil || len(rows) != 5 {
		e.t.Errorf("review rows of det: %d %v", len(rows), err)
	}
	// A label made from a suggestion is an ordinary label: it can be
	// deleted, and the suggestion no longer names it.
	if _, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Delete: []int64{made[cor]}}); err != nil {
		e.t.Fatal(err)
	}
	if g, _ := e.b.Suggestion(e.ctx, cor); g.LabelID != 0 || g.State != project.SuggestionCorrected {
		e.t.Errorf("after its label was deleted the suggestion is %+v", g)
	}
}

// A refused Decide changes nothing: a suggestion already decided (by
// anyone), decided twice in one call, missing, or given a bad box or a
// missing class; an unknown reviewer.
func decideRefusals(e *env) {
	f := e.review()
	other := e.annotator("Tomas")
	q := e.importSuggestions("det",
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.8},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.7},
	)
	a, b, c := q[0].ID, q[1].ID, q[2].ID
	e.decide(other.ID, project.Decision{SuggestionID: a})
	e.decide(other.ID, project.Decision{SuggestionID: c, Accept: true})
	before := e.snapshot()
	for _, k := range []struct {
		name string
		ds   []project.Decision
		kind error
		says string
	}{
		{"rejected by someone else", []project.Decision{{SuggestionID: b, Accept: true}, {SuggestionID: a, Accept: true}}, project.ErrInvalid, strconv.FormatInt(a, 10)},
		{"accepted by someone else", []project.Decision{{SuggestionID: b}, {SuggestionID: c}}, project.ErrInvalid, strconv.FormatInt(c, 10)},
		{"twice in one call", []project.Decision{{SuggestionID: b, Accept: true}, {SuggestionID: b}}, project.ErrInvalid, strconv.FormatInt(b, 10)},
		{"missing", []project.Decision{{SuggestionID: b}, {SuggestionID: 99999}}, project.ErrNotFound, "99999"},
		{"bad final box", []project.Decision{{SuggestionID: b, Accept: true, Box: box(3, 3, 1, 1)}}, project.ErrInvalid, ""},
		{"unknown class", []project.Decision{{SuggestionID: b, Accept: true, ClassID: 99999}}, project.ErrNotFound, ""},
	} {
		made, err := e.b.Decide(e.ctx, f.rev.ID, k.ds)
		if !e.wantErr(k.name, err, k.kind) {
			continue
		}
		if made != nil {
			e.t.Errorf("%s: a refused call returned labels %v", k.name, made)
		}
		if !strings.Contains(err.Error(), k.says) {
			e.t.Errorf("%s: %v, want it to name suggestion %s", k.name, err, k.says)
		}
	}
	if _, err := e.b.Decide(e.ctx, 99999, []project.Decision{{SuggestionID: b}}); !errors.Is(err, project.ErrNotFound) {
		e.t.Errorf("unknown reviewer: %v, want ErrNotFound", err)
	}
	e.unchanged("refused decisions", before)
	if g, _ := e.b.Suggestion(e.ctx, a); g.ReviewerID != other.ID {
		e.t.Errorf("the first decision lost its reviewer: %+v", g)
	}
	if made, err := e.b.Decide(e.ctx, f.rev.ID, nil); err != nil || len(made) != 0 {
		e.t.Errorf("no decisions: %v %v", made, err)
	}
}

// Undecide returns decisions to pending and deletes the labels made from
// them, even edited since; a missing or pending suggestion refuses all.
func undecide(e *env) {
	f := e.review()
	q := e.importSuggestions("det",
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.8},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 30, 10), Score: 0.7},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: box(0, 0, 30, 10), Score: 0.6},
	)
	a, b, c, d := q[0].ID, q[1].ID, q[2].ID, q[3].ID
	made := e.decide(f.rev.ID, project.Decision{SuggestionID: a, Accept: true}, project.Decision{SuggestionID: b, Accept: true, Box: box(1, 1, 20, 10)},
		project.Decision{SuggestionID: c})
	l, _ := e.b.Label(e.ctx, made[b])
	l.Box = box(2, 2, 20, 10)
	if _, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Update: []project.Label{l}}); err != nil {
		e.t.Fatal(err)
	}
	drawn := e.insert(project.Label{ImageID: f.im1.ID, ClassID: f.boat.ID, AnnotatorID: f.rev.ID, Box: box(40, 40, 50, 50)})
	before := e.snapshot()
	e.wantErr("undo with a missing suggestion", e.b.Undecide(e.ctx, []int64{a, c, 99999}), project.ErrNotFound)
	e.wantErr("undo with a pending suggestion", e.b.Undecide(e.ctx, []int64{a, d}), project.ErrInvalid)
	e.unchanged("refused undos", before)
	e.fatal("undo", e.b.Undecide(e.ctx, []int64{a, b, c}))
	for _, id := range []int64{a, b, c} {
		g, _ := e.b.Suggestion(e.ctx, id)
		if g.State != project.SuggestionPending || g.ReviewerID != 0 || !g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 {
			e.t.Errorf("after undo %d: %+v", id, g)
		}
	}
	if ls := e.labels(project.LabelFilter{}); len(ls) != 1 || ls[0].ID != drawn[0] {
		e.t.Errorf("labels after undo %+v, want only the drawn one", ls)
	}
	if n, _ := e.b.CountSuggestions(e.ctx, project.SuggestionQuery{}); n != 4 {
		e.t.Errorf("pending after undo %d, want 4", n)
	}
	// Decided again after the undo, as if never decided.
	if made, err := e.b.Decide(e.ctx, f.rev.ID, []project.Decision{{SuggestionID: a, Accept: true}}); err != nil || made[a] == 0 {
		e.t.Errorf("deciding again after undo: %v %v", made, err)
	}
}

// Counts agree with what was stored; CountsByImage has every image with
// labels or pending suggestions, and only those.
func counts(e *env) {
	f := e.review()
	third := e.images(1)[0]
	buoy := e.class("buoy")
	tomas := e.annotator("Tomas")
	e.annotator("Zeno") // no labels: still counted, with zero
	e.insert(
		project.Label{ImageID: f.im1.ID, ClassID: f.boat.ID, AnnotatorID: f.rev.ID, Box: box(0, 0, 5, 5)},
		project.Label{ImageID: f.im1.ID, ClassID: f.boat.ID, AnnotatorID: tomas.ID, Box: box(0, 0, 5, 5)},
		project.Label{ImageID: f.im1.ID, ClassID: buoy.ID, AnnotatorID: tomas.ID, Box: box(9, 9, 15, 15)},
	)
	q := e.importSuggestions("det",
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		project.Suggestion{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(0, 0, 10, 10), Score: 0.8},
		project.Suggestion{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: box(0, 0, 10, 10), Score: 0.7},
		project.Suggestion{ImageID: third.ID, ClassID: f.kayak.ID, Box: box(0, 0, 10, 10), Score: 0.6},
	)
	e.decide(f.rev.ID, project.Decision{SuggestionID: q[0].ID, Accept: true}, project.Decision{SuggestionID: q[3].ID})
	e.fatal("status", e.b.SetImageStatus(e.ctx, f.im1.ID, tomas.ID, project.StatusDone, tomas.ID))

	c := e.counts()
	if c.Images != 3 || c.Labels != 4 {
		e.t.Errorf("images %d labels %d, want 3 and 4", c.Images, c.Labels)
	}
	wantImages := map[project.ImageStatus]int{project.StatusDone: 1, project.StatusStarted: 1, project.StatusNew: 1}
	for _, st := range project.ImageStatuses {
		if c.ImagesBy[st] != wantImages[st] {
			e.t.Errorf("ImagesBy[%s] = %d, want %d", st, c.ImagesBy[st], wantImages[st])
		}
	}
	wantStates := map[project.SuggestionState]int{project.SuggestionPending: 2, project.SuggestionAccepted: 1, project.SuggestionRejected: 1}
	for _, st := range project.SuggestionStates {
		if got, ok := c.Suggestions[st]; !ok || got != wantStates[st] {
			e.t.Errorf("Suggestions[%s] = %d (present %v), want %d", st, got, ok, wantStates[st])
		}
	}
	wantClasses := []project.NamedCount{{ID: f.boat.ID, Name: "motorboat", Count: 2}, {ID: f.kayak.ID, Name: "kayak", Count: 1}, {ID: buoy.ID, Name: "buoy", Count: 1}}
	if !slices.Equal(c.LabelsByClass, wantClasses) {
		e.t.Errorf("LabelsByClass %+v, want %+v (every class, in class order)", c.LabelsByClass, wantClasses)
	}
	zeno, _ := e.b.AnnotatorByName(e.ctx, "Zeno")
	wantAnn := []project.NamedCount{{ID: f.rev.ID, Name: "Ines", Count: 2}, {ID: tomas.ID, Name: "Tomas", Count: 2}, {ID: zeno.ID, Name: "Zeno", Count: 0}}
	if !slices.Equal(c.LabelsByAnnotator, wantAnn) {
		e.t.Errorf("LabelsByAnnotator %+v, want %+v (every annotator, by name)", c.LabelsByAnnotator, wantAnn)
	}
	wantBy := map[string]map[project.ImageStatus]int{
		"Ines":  {project.StatusStarted: 2, project.StatusNew: 1},
		"Tomas": {project.StatusDone: 1, project.StatusNew: 2},
		"Zeno":  {project.StatusNew: 3},
	}
	if len(c.StatusByAnnotator) != 3 {
		e.t.Errorf("StatusByAnnotator has %d annotators, want 3", len(c.StatusByAnnotator))
	}
	for name, w := range wantBy {
		for _, st := range project.ImageStatuses {
			if got, ok := c.StatusByAnnotator[name][st]; !ok || got != w[st] {
				e.t.Errorf("StatusByAnnotator[%s][%s] = %d (present %v), want %d", name, st, got, ok, w[st])
			}
		}
	}
	per, err := e.b.CountsByImage(e.ctx)
	e.fatal("counts by image", err)
	wantPer := map[int64]project.ImageCounts{f.im1.ID: {Labels: 3, Pending: 1}, f.im2.ID: {Labels: 1, Pending: 1}}
	if len(per) != len(wantPer) || per[f.im1.ID] != wantPer[f.im1.ID] || per[f.im2.ID] != wantPer[f.im2.ID] {
		e.t.Errorf("CountsByImage %+v, want %+v (the third image has only a rejected suggestion)", per, wantPer)
	}
}
