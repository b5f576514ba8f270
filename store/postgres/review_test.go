package postgres

import (
	"errors"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"boxwright/project"
)

func mustQuery(t *testing.T, s *Store, q project.SuggestionQuery) []project.Suggestion {
	t.Helper()
	gs, err := s.QuerySuggestions(bg, q)
	if err != nil {
		t.Fatal(err)
	}
	return gs
}

func itoa(n int64) string { return strconv.FormatInt(n, 10) }

// AddSuggestions returns the IDs in the order given and stores nothing of
// a batch with one bad suggestion; Suggestions filters and sorts by image,
// then best score; SuggestionSources lists each source once.
func TestAddSuggestionsAndFilters(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	b := box(10, 10, 50, 30)
	ids, err := s.AddSuggestions(bg, []project.Suggestion{
		{ImageID: f.im2, ClassID: f.boat, Box: b, Score: 0.91, Source: "detector-v7"},
		{ImageID: f.im1, ClassID: f.boat, Box: b.Translate(100, 0), Score: 0.55, Source: "detector-v7"},
		{ImageID: f.im1, ClassID: f.kayak, Box: b.Translate(0, 100), Score: 0.80, Source: "exemplar"},
	})
	if err != nil || len(ids) != 3 {
		t.Fatal(ids, err)
	}
	for i, want := range []float64{0.91, 0.55, 0.80} {
		if g, err := s.Suggestion(bg, ids[i]); err != nil || g.Score != want || g.State != project.SuggestionPending || g.Created.Location() != time.UTC {
			t.Errorf("suggestion %d (id %d): %+v %v, want score %v", i, ids[i], g, err, want)
		}
	}
	for name, c := range map[string]struct {
		g    project.Suggestion
		is   error
		want string
	}{
		"unknown class": {project.Suggestion{ImageID: f.im1, ClassID: 77, Box: b, Source: "x"}, project.ErrNotFound, "suggestion 1: class 77"},
		"unknown image": {project.Suggestion{ImageID: 77, ClassID: f.boat, Box: b, Source: "x"}, project.ErrNotFound, "suggestion 1: image 77"},
		"no source":     {project.Suggestion{ImageID: f.im1, ClassID: f.boat, Box: b, Source: " "}, project.ErrInvalid, "suggestion 1: source name is empty"},
		"no area":       {project.Suggestion{ImageID: f.im1, ClassID: f.boat, Box: box(1, 1, 1, 5), Source: "x"}, project.ErrInvalid, "suggestion 1"},
	} {
		_, err := s.AddSuggestions(bg, []project.Suggestion{{ImageID: f.im1, ClassID: f.boat, Box: b, Source: "x"}, c.g})
		if !errors.Is(err, c.is) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %v and %q", name, err, c.is, c.want)
		}
	}
	gs, _ := s.Suggestions(bg, project.SuggestionFilter{})
	if len(gs) != 3 || gs[0].ID != ids[2] || gs[1].ID != ids[1] || gs[2].ID != ids[0] {
		t.Errorf("bad batches left suggestions, or the order is not image, best score: %+v", gs)
	}
	if gs, _ := s.Suggestions(bg, project.SuggestionFilter{Source: "detector-v7", ImageID: f.im1}); len(gs) != 1 || gs[0].ID != ids[1] {
		t.Errorf("filter by source and image: %+v", gs)
	}
	if gs, _ := s.Suggestions(bg, project.SuggestionFilter{State: project.SuggestionRejected}); len(gs) != 0 {
		t.Errorf("filter by state: %+v", gs)
	}
	if src, err := s.SuggestionSources(bg); err != nil || !slices.Equal(src, []string{"detector-v7", "exemplar"}) {
		t.Errorf("sources %v %v", src, err)
	}
	if _, err := s.Suggestion(bg, 999); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("missing suggestion: %v", err)
	}
}

func TestImportSuggestionsReplacesOnlyPending(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	first := []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1, ClassID: f.kayak, Box: box(20, 20, 40, 40), Score: 0.6, Source: "det"},
		{ImageID: f.im2, ClassID: f.boat, Box: box(5, 5, 15, 25), Score: 0.3},
	}
	rep, err := s.ImportSuggestions(bg, "det", first)
	if err != nil || rep != (project.SuggestionImportReport{Source: "det", Added: 3}) {
		t.Fatalf("first import: %+v %v", rep, err)
	}
	if _, err := s.ImportSuggestions(bg, "other", first[:1]); err != nil {
		t.Fatal(err)
	}
	gs := mustQuery(t, s, project.SuggestionQuery{Source: "det"})
	if len(gs) != 3 || gs[0].Score != 0.9 || gs[0].Source != "det" || gs[0].State != project.SuggestionPending {
		t.Fatalf("after import: %+v", gs)
	}
	if _, err := s.Decide(bg, f.olga, []project.Decision{{SuggestionID: gs[0].ID, Accept: true}, {SuggestionID: gs[1].ID}}); err != nil {
		t.Fatal(err)
	}
	second := []project.Suggestion{
		{ImageID: f.im2, ClassID: f.kayak, Box: box(1, 1, 2, 2), Score: 0.5},
		{ImageID: f.im2, ClassID: f.kayak, Box: box(3, 3, 4, 4), Score: 0.45},
	}
	rep, err = s.ImportSuggestions(bg, "det", second)
	if err != nil || rep != (project.SuggestionImportReport{Source: "det", Added: 2, ReplacedPending: 1, KeptReviewed: 2}) {
		t.Fatalf("re-import: %+v %v", rep, err)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{Source: "det"}); n != 2 {
		t.Errorf("pending after re-import: %d, want 2", n)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{Source: "other"}); n != 1 {
		t.Errorf("another source's pending suggestion was touched: %d", n)
	}
	if g, _ := s.Suggestion(bg, gs[0].ID); g.State != project.SuggestionAccepted || g.LabelID == 0 {
		t.Errorf("accepted suggestion after re-import: %+v", g)
	}
	if _, err := s.Suggestion(bg, gs[2].ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("replaced pending suggestion still there: %v", err)
	}
	// An empty import would delete the pending ones: refused.
	if _, err := s.ImportSuggestions(bg, "det", nil); !errors.Is(err, project.ErrInvalid) || !strings.Contains(err.Error(), "2 pending") {
		t.Errorf("empty import: %v", err)
	}
}

func TestImportSuggestionsAllOrNothing(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	good := project.Suggestion{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9}
	if _, err := s.ImportSuggestions(bg, "det", []project.Suggestion{good}); err != nil {
		t.Fatal(err)
	}
	bad := func(i int, mutate func(*project.Suggestion)) []project.Suggestion {
		gs := make([]project.Suggestion, 300)
		for k := range gs {
			gs[k] = good
		}
		mutate(&gs[i])
		return gs
	}
	cases := []struct {
		name string
		gs   []project.Suggestion
		want string
		is   error
	}{
		{"empty box", bad(290, func(g *project.Suggestion) { g.Box = box(5, 5, 5, 9) }), "suggestion 290", project.ErrInvalid},
		{"NaN coordinate", bad(3, func(g *project.Suggestion) { g.Box.X1 = math.NaN() }), "suggestion 3", project.ErrInvalid},
		{"NaN score", bad(7, func(g *project.Suggestion) { g.Score = math.NaN() }), "suggestion 7", project.ErrInvalid},
		{"unknown image", bad(299, func(g *project.Suggestion) { g.ImageID = 999 }), "suggestion 299: image 999", project.ErrNotFound},
		{"unknown class", bad(0, func(g *project.Suggestion) { g.ClassID = 999 }), "suggestion 0: class 999", project.ErrNotFound},
		{"other source", bad(1, func(g *project.Suggestion) { g.Source = "exemplar" }), "suggestion 1", project.ErrInvalid},
	}
	for _, c := range cases {
		rep, err := s.ImportSuggestions(bg, "det", c.gs)
		if !errors.Is(err, c.is) || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "nothing was stored") {
			t.Errorf("%s: %v, want %q and %v", c.name, err, c.want, c.is)
		}
		if rep.Added != 0 || rep.ReplacedPending != 0 {
			t.Errorf("%s: report of a failed import %+v", c.name, rep)
		}
	}
	// A refusal by the server while inserting, after the pending ones
	// were deleted, leaves them in place too.
	f.srv.Exec(t, "harbour", `CREATE FUNCTION refuse() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RAISE EXCEPTION 'refused'; END $$;
		CREATE TRIGGER refuse BEFORE INSERT ON suggestions FOR EACH ROW WHEN (NEW.score = 42) EXECUTE FUNCTION refuse()`)
	if _, err := s.ImportSuggestions(bg, "det", bad(150, func(g *project.Suggestion) { g.Score = 42 })); err == nil || !strings.Contains(err.Error(), "suggestions 0 to 299") {
		t.Errorf("refused by the server: %v", err)
	}
	if _, err := s.ImportSuggestions(bg, " ", nil); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("blank source: %v", err)
	}
	if gs := mustQuery(t, s, project.SuggestionQuery{}); len(gs) != 1 || gs[0].Box != good.Box {
		t.Errorf("failed imports changed the suggestions: %+v", gs)
	}
}

func TestReplaceSuggestionsOnTouchesOnlyThoseImages(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	g := func(img int64, x float64) project.Suggestion {
		return project.Suggestion{ImageID: img, ClassID: f.boat, Box: project.Rect(x, 0, x+5, 5), Score: 0.7}
	}
	if _, err := s.ImportSuggestions(bg, "exemplar", []project.Suggestion{g(f.im1, 0), g(f.im1, 10), g(f.im2, 0)}); err != nil {
		t.Fatal(err)
	}
	rep, err := s.ReplaceSuggestionsOn(bg, "exemplar", []int64{f.im1}, []project.Suggestion{g(f.im1, 20)})
	if err != nil || rep.ReplacedPending != 2 || rep.Added != 1 {
		t.Fatalf("replace on image a: %+v, %v", rep, err)
	}
	onB, _ := s.Suggestions(bg, project.SuggestionFilter{ImageID: f.im2})
	onA, _ := s.Suggestions(bg, project.SuggestionFilter{ImageID: f.im1})
	if len(onB) != 1 || len(onA) != 1 || onA[0].Box.X0 != 20 {
		t.Errorf("a: %+v, b: %+v", onA, onB)
	}
	if _, err := s.ReplaceSuggestionsOn(bg, "exemplar", []int64{f.im1}, []project.Suggestion{g(f.im2, 30)}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("a suggestion outside the replaced images: %v", err)
	}
	// Nothing on the images: the pending ones there go, nothing else.
	if rep, err := s.ReplaceSuggestionsOn(bg, "exemplar", []int64{f.im1}, nil); err != nil || rep.ReplacedPending != 1 {
		t.Errorf("replace with nothing: %+v %v", rep, err)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{}); n != 1 {
		t.Errorf("%d pending left, want image b's 1", n)
	}
}

func TestDecideRecordsVerdicts(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	gs := []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.8},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.7},
		{ImageID: f.im2, ClassID: f.kayak, Box: box(50, 50, 60, 60), Score: 0.2},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	acc, cor, recls, rej := q[0].ID, q[1].ID, q[2].ID, q[3].ID
	var before, after time.Time
	f.sql.QueryRow(bg, "SELECT now()").Scan(&before)
	made, err := s.Decide(bg, f.olga, []project.Decision{
		{SuggestionID: acc, Accept: true},
		{SuggestionID: cor, Accept: true, Box: box(0, 0, 10, 5)},
		{SuggestionID: recls, Accept: true, ClassID: f.kayak},
		{SuggestionID: rej},
	})
	if err != nil {
		t.Fatal(err)
	}
	f.sql.QueryRow(bg, "SELECT now()").Scan(&after)
	if len(made) != 3 || made[rej] != 0 {
		t.Fatalf("labels made: %v", made)
	}
	// IoU by hand: [0,0,10,5] lies inside [0,0,10,10]; 50 / (100 + 50 - 50) = 0.5.
	want := map[int64]struct {
		state  project.SuggestionState
		origin project.Origin
		box    project.Box
		class  int64
		iou    float64
	}{
		acc:   {project.SuggestionAccepted, project.OriginAccepted, box(0, 0, 10, 10), f.boat, 1},
		cor:   {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 5), f.boat, 0.5},
		recls: {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 10), f.kayak, 1},
	}
	for id, w := range want {
		g, _ := s.Suggestion(bg, id)
		if g.State != w.state || g.ReviewerID != f.olga || g.Reviewed.Before(before) || g.Reviewed.After(after) || g.Reviewed.Location() != time.UTC ||
			g.LabelID != made[id] || g.FinalIoU != w.iou {
			t.Errorf("suggestion %d: %+v, want %+v", id, g, w)
		}
		l, err := s.Label(bg, made[id])
		if err != nil || l.Origin != w.origin || l.Box != w.box || l.ClassID != w.class || l.AnnotatorID != f.olga ||
			l.SuggestionID != id || l.Source != "det" || l.Score != g.Score || l.ImageID != f.im1 {
			t.Errorf("label of suggestion %d: %+v %v", id, l, err)
		}
	}
	g, _ := s.Suggestion(bg, rej)
	if g.State != project.SuggestionRejected || g.ReviewerID != f.olga || g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 {
		t.Errorf("rejected: %+v", g)
	}
	rows, err := s.ReviewRows(bg, "")
	if err != nil || len(rows) != 4 {
		t.Fatalf("review rows: %+v %v", rows, err)
	}
	if rows[1] != (project.ReviewRow{Source: "det", ClassID: f.boat, Score: 0.8, State: project.SuggestionCorrected, FinalIoU: 0.5}) {
		t.Errorf("review row: %+v", rows[1])
	}
	if rows, _ := s.ReviewRows(bg, "nobody"); len(rows) != 0 {
		t.Errorf("review rows of an unknown source: %+v", rows)
	}
}

// A decision on a suggestion someone else decided says who and when, and
// every refused call changes nothing.
func TestDecideRefusesDecidedSuggestions(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	other := f.annotator("Tomas")
	gs := []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 20, 10), Score: 0.8},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	a, b := q[0].ID, q[1].ID
	if _, err := s.Decide(bg, other, []project.Decision{{SuggestionID: a}}); err != nil {
		t.Fatal(err)
	}
	before := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionRejected})
	for name, ds := range map[string][]project.Decision{
		"decided by someone else": {{SuggestionID: b, Accept: true}, {SuggestionID: a, Accept: true}},
		"twice in one call":       {{SuggestionID: b, Accept: true}, {SuggestionID: b}},
		"missing":                 {{SuggestionID: b}, {SuggestionID: 999}},
		"bad final box":           {{SuggestionID: b, Accept: true, Box: box(3, 3, 1, 1)}},
		"unknown class":           {{SuggestionID: b, Accept: true, ClassID: 999}},
	} {
		made, err := s.Decide(bg, f.olga, ds)
		if err == nil || made != nil {
			t.Errorf("%s: accepted (%v)", name, made)
			continue
		}
		wantIs := map[string]error{"decided by someone else": project.ErrInvalid, "twice in one call": project.ErrInvalid,
			"missing": project.ErrNotFound, "bad final box": project.ErrInvalid, "unknown class": project.ErrNotFound}[name]
		if !errors.Is(err, wantIs) {
			t.Errorf("%s: %v, want %v", name, err, wantIs)
		}
		if name == "decided by someone else" {
			msg := "suggestion " + itoa(a) + " is no longer pending: already decided (rejected) by Tomas at " + when(before[0].Reviewed)
			if !strings.Contains(err.Error(), msg) {
				t.Errorf("%s: %v, want it to say %q", name, err, msg)
			}
		}
		if name == "missing" && !strings.Contains(err.Error(), "999") {
			t.Errorf("%s: %v", name, err)
		}
	}
	if _, err := s.Decide(bg, 999, []project.Decision{{SuggestionID: b}}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("unknown reviewer: %v", err)
	}
	if g, _ := s.Suggestion(bg, b); g.State != project.SuggestionPending || g.ReviewerID != 0 || !g.Reviewed.IsZero() {
		t.Errorf("failed calls changed suggestion %d: %+v", b, g)
	}
	if after := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionRejected}); len(after) != 1 || after[0] != before[0] || after[0].ReviewerID != other {
		t.Errorf("failed calls changed the decided suggestion: %+v", after)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{}); len(ls) != 0 {
		t.Errorf("failed calls left labels: %+v", ls)
	}
}

// Two reviewers deciding the same suggestion at the same moment: both
// calls are made to wait on one lock, released together; exactly one
// wins, the other is refused with who decided and when, and there is one
// label, not two.
func TestDecideTwoReviewersAtOnce(t *testing.T) {
	f := newLabFix(t, true)
	ritaID := f.annotator("rita")
	rita := f.as("rita")
	olga := f.s
	for round := range 3 {
		ids, err := olga.AddSuggestions(bg, []project.Suggestion{{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9, Source: "det"}})
		if err != nil {
			t.Fatal(err)
		}
		// A third connection holds the row, so that both decisions are
		// waiting on it when it is let go.
		hold, err := f.sql.Begin(bg)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := hold.Exec(bg, "SELECT 1 FROM suggestions WHERE id = $1 FOR UPDATE", ids[0]); err != nil {
			t.Fatal(err)
		}
		var wg sync.WaitGroup
		errs := make([]error, 2)
		for i, who := range []struct {
			s  *Store
			id int64
		}{{rita, ritaID}, {olga, f.olga}} {
			wg.Add(1)
			go func() {
				defer wg.Done()
				// Accept for one, reject for the other, in turn.
				_, errs[i] = who.s.Decide(bg, who.id, []project.Decision{{SuggestionID: ids[0], Accept: (i+round)%2 == 0}})
			}()
		}
		deadline := time.Now().Add(20 * time.Second)
		for f.count("SELECT count(*) FROM pg_locks WHERE NOT granted") < 2 {
			if time.Now().After(deadline) {
				t.Fatal("the two decisions never waited on the row")
			}
			time.Sleep(10 * time.Millisecond)
		}
		hold.Commit(bg)
		wg.Wait()
		won, lost := -1, -1
		for i, err := range errs {
			if err == nil {
				won = i
			} else {
				lost = i
			}
		}
		if won < 0 || lost < 0 {
			t.Fatalf("round %d: errors %v, want one decision to win and one refused", round, errs)
		}
		g, _ := olga.Suggestion(bg, ids[0])
		winner := []string{"rita", "olga"}[won]
		msg := "already decided (" + string(g.State) + ") by " + winner + " at " + when(g.Reviewed)
		if !errors.Is(errs[lost], project.ErrInvalid) || !strings.Contains(errs[lost].Error(), msg) {
			t.Errorf("round %d: the second reviewer got %v, want %q", round, errs[lost], msg)
		}
		wantLabels := 0
		if g.State == project.SuggestionAccepted {
			wantLabels = 1
		}
		if n := f.count("SELECT count(*) FROM labels WHERE suggestion_id = $1", ids[0]); n != wantLabels {
			t.Errorf("round %d: %d labels from one %s suggestion", round, n, g.State)
		}
	}
}

// An annotator cannot decide, undo decisions or import suggestions; a
// reviewer can; and a reviewer cannot undo another reviewer's accepted
// suggestion, whose label is not theirs to delete.
func TestReviewHonoursRowLevelSecurity(t *testing.T) {
	f := newLabFix(t, true)
	inesID, ritaID := f.annotator("ines"), f.annotator("rita")
	ines, rita := f.as("ines"), f.as("rita")
	ids, err := f.s.AddSuggestions(bg, []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9, Source: "det"},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 20, 10), Score: 0.8, Source: "det"},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 30, 10), Score: 0.7, Source: "det"},
	})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ines.Decide(bg, inesID, []project.Decision{{SuggestionID: ids[0], Accept: true}}); !errors.Is(err, project.ErrNotAllowed) ||
		!strings.Contains(err.Error(), "reviewer") {
		t.Errorf("an annotator deciding: %v", err)
	}
	if _, err := ines.ImportSuggestions(bg, "det", []project.Suggestion{{ImageID: f.im1, ClassID: f.boat, Box: box(1, 1, 2, 2), Score: 0.1}}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator importing suggestions: %v", err)
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 0 {
		t.Errorf("the annotator's decision left %d labels", n)
	}
	made, err := rita.Decide(bg, ritaID, []project.Decision{{SuggestionID: ids[0], Accept: true}, {SuggestionID: ids[1]}})
	if err != nil || made[ids[0]] == 0 {
		t.Fatalf("the reviewer deciding: %v %v", made, err)
	}
	// A reviewer recording an accepted label as someone else is refused.
	if _, err := rita.Decide(bg, inesID, []project.Decision{{SuggestionID: ids[2], Accept: true}}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("a reviewer accepting as ines: %v", err)
	}
	if err := ines.Undecide(bg, []int64{ids[0]}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator undoing a decision: %v", err)
	}
	if _, err := f.s.Decide(bg, f.olga, []project.Decision{{SuggestionID: ids[2], Accept: true}}); err != nil {
		t.Fatal(err)
	}
	if err := rita.Undecide(bg, []int64{ids[1], ids[2]}); !errors.Is(err, project.ErrNotAllowed) || !strings.Contains(err.Error(), "it is olga's") {
		t.Errorf("a reviewer undoing the owner's acceptance: %v", err)
	}
	if g, _ := f.s.Suggestion(bg, ids[1]); g.State != project.SuggestionRejected {
		t.Errorf("a refused undo changed suggestion %d: %+v", ids[1], g)
	}
	if err := rita.Undecide(bg, []int64{ids[0], ids[1]}); err != nil {
		t.Errorf("the reviewer undoing her own decisions: %v", err)
	}
	if n := f.count("SELECT count(*) FROM labels"); n != 1 {
		t.Errorf("%d labels, want the owner's 1", n)
	}
}

func TestUndecideRestoresPending(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	gs := []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 20, 10), Score: 0.8},
		{ImageID: f.im1, ClassID: f.boat, Box: box(0, 0, 30, 10), Score: 0.7},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	a, b, c := q[0].ID, q[1].ID, q[2].ID
	made, err := s.Decide(bg, f.olga, []project.Decision{{SuggestionID: a, Accept: true}, {SuggestionID: b, Accept: true, Box: box(1, 1, 20, 10)}, {SuggestionID: c}})
	if err != nil {
		t.Fatal(err)
	}
	// An edit after the decision does not keep the label from the undo.
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Update: []project.Label{{ID: made[b], ClassID: f.boat, Box: box(2, 2, 20, 10)}}}); err != nil {
		t.Fatal(err)
	}
	if err := s.Undecide(bg, []int64{a, c, 999}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("undo with a missing suggestion: %v", err)
	}
	if g, _ := s.Suggestion(bg, a); g.State != project.SuggestionAccepted {
		t.Errorf("failed undo changed suggestion %d: %+v", a, g)
	}
	if err := s.Undecide(bg, []int64{a, b, c}); err != nil {
		t.Fatal(err)
	}
	for _, id := range []int64{a, b, c} {
		g, _ := s.Suggestion(bg, id)
		if g.State != project.SuggestionPending || g.ReviewerID != 0 || !g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 {
			t.Errorf("after undo %d: %+v", id, g)
		}
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{}); len(ls) != 0 {
		t.Errorf("labels left after undo: %+v", ls)
	}
	if err := s.Undecide(bg, []int64{a}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("undo of a pending suggestion: %v", err)
	}
	if _, err := s.Decide(bg, f.olga, []project.Decision{{SuggestionID: a}}); err != nil {
		t.Errorf("deciding again after undo: %v", err)
	}
}

func TestQuerySuggestionsFilters(t *testing.T) {
	f := newLabFix(t, false)
	s := f.s
	b := box(0, 0, 10, 10)
	if _, err := s.ImportSuggestions(bg, "det", []project.Suggestion{
		{ImageID: f.im1, ClassID: f.boat, Box: b, Score: 0.9},
		{ImageID: f.im1, ClassID: f.boat, Box: b, Score: 0.5},
		{ImageID: f.im2, ClassID: f.boat, Box: b, Score: 0.5},
		{ImageID: f.im2, ClassID: f.kayak, Box: b, Score: 0.3},
		{ImageID: f.im2, ClassID: f.kayak, Box: b, Score: -1.5},
	}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.ImportSuggestions(bg, "exemplar", []project.Suggestion{{ImageID: f.im1, ClassID: f.kayak, Box: b, Score: 0.7}}); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name   string
		q      project.SuggestionQuery
		scores []float64
	}{
		{"everything pending", project.SuggestionQuery{}, []float64{0.9, 0.7, 0.5, 0.5, 0.3, -1.5}},
		{"min inclusive", project.SuggestionQuery{MinScore: 0.5}, []float64{0.9, 0.7, 0.5, 0.5}},
		{"max exclusive", project.SuggestionQuery{MinScore: 0.3, MaxScore: 0.7}, []float64{0.5, 0.5, 0.3}},
		{"zero bounds are no bounds", project.SuggestionQuery{MaxScore: 0}, []float64{0.9, 0.7, 0.5, 0.5, 0.3, -1.5}},
		{"class", project.SuggestionQuery{ClassID: f.kayak}, []float64{0.7, 0.3, -1.5}},
		{"image", project.SuggestionQuery{ImageID: f.im1}, []float64{0.9, 0.7, 0.5}},
		{"source", project.SuggestionQuery{Source: "exemplar"}, []float64{0.7}},
		{"all together", project.SuggestionQuery{Source: "det", ImageID: f.im2, ClassID: f.boat, MinScore: 0.5, MaxScore: 0.6}, []float64{0.5}},
		{"limit", project.SuggestionQuery{Limit: 2}, []float64{0.9, 0.7}},
		{"rejected", project.SuggestionQuery{State: project.SuggestionRejected}, nil},
	}
	for _, c := range cases {
		gs := mustQuery(t, s, c.q)
		var got []float64
		for i, g := range gs {
			got = append(got, g.Score)
			if i > 0 && g.Score == gs[i-1].Score && g.ID < gs[i-1].ID {
				t.Errorf("%s: ties not in stored order", c.name)
			}
		}
		if !slices.Equal(got, c.scores) {
			t.Errorf("%s: scores %v, want %v", c.name, got, c.scores)
		}
		n, err := s.CountSuggestions(bg, c.q)
		want := len(c.scores)
		if c.q.Limit > 0 {
			want = 6 // the count of a bulk action ignores a queue's limit
		}
		if err != nil || n != want {
			t.Errorf("%s: count %d %v, want %d", c.name, n, err, want)
		}
	}
	if _, err := s.CountSuggestions(bg, project.SuggestionQuery{State: "maybe"}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("unknown state: %v", err)
	}
	if _, err := s.QuerySuggestions(bg, project.SuggestionQuery{MinScore: math.NaN()}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("NaN bound: %v", err)
	}
}
