package store

import (
	"database/sql"
	"errors"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"boxwright/project"
)

type reviewFixture struct {
	s           *Store
	im1, im2    project.Image
	boat, kayak project.Class
	rev         project.Annotator
}

func newReviewFixture(t *testing.T, s *Store) reviewFixture {
	t.Helper()
	f := reviewFixture{s: s, im1: addImage(t, s, 0), im2: addImage(t, s, 1)}
	var err error
	if f.boat, err = s.AddClass(bg, project.Class{Name: "motorboat"}); err != nil {
		t.Fatal(err)
	}
	if f.kayak, err = s.AddClass(bg, project.Class{Name: "kayak"}); err != nil {
		t.Fatal(err)
	}
	if f.rev, err = s.AddAnnotator(bg, "Ines"); err != nil {
		t.Fatal(err)
	}
	return f
}

func box(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }

func mustQuery(t *testing.T, s *Store, q project.SuggestionQuery) []project.Suggestion {
	t.Helper()
	gs, err := s.QuerySuggestions(bg, q)
	if err != nil {
		t.Fatal(err)
	}
	return gs
}

func TestMigrationAddsFinalIoU(t *testing.T) {
	s := newStore(t)
	var n int
	if err := s.db.QueryRow("SELECT count(*) FROM pragma_table_info('suggestions') WHERE name = 'final_iou'").Scan(&n); err != nil || n != 1 {
		t.Fatalf("final_iou column: %d, %v", n, err)
	}
	for _, ix := range []string{"suggestions_for_review", "suggestions_by_label", "labels_by_suggestion"} {
		if err := s.db.QueryRow("SELECT count(*) FROM sqlite_master WHERE type = 'index' AND name = ?", ix).Scan(&n); err != nil || n != 1 {
			t.Errorf("index %s: %d, %v", ix, n, err)
		}
	}
}

// A file written by a program that knew only schema 1 is brought up to date
// on open and keeps its data; old decisions read back with final_iou 0.
func TestMigrationFromSchema1KeepsSuggestions(t *testing.T) {
	path := filepath.Join(t.TempDir(), "v1.boxw")
	db, err := sql.Open("sqlite3", path+"?_foreign_keys=1")
	if err != nil {
		t.Fatal(err)
	}
	v1 := migrations()[0]
	if v1.version != 1 {
		t.Fatalf("first migration is %d", v1.version)
	}
	for _, q := range []string{
		"CREATE TABLE schema_migrations (version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)",
		"PRAGMA application_id = " + strconv.Itoa(applicationID),
		v1.sql,
		"INSERT INTO schema_migrations VALUES (1, 'initial', '2026-01-01T00:00:00Z')",
		"PRAGMA user_version = 1",
		"INSERT INTO images VALUES (1, 'a.jpg', '" + hash(0) + "', 640, 480, 1, 'new', '2026-01-01T00:00:00Z')",
		"INSERT INTO classes VALUES (1, 'buoy', '#ff8800', '', 0)",
		"INSERT INTO annotators VALUES (1, 'Ines', '2026-01-01T00:00:00Z')",
		"INSERT INTO suggestions(id, image_id, class_id, x0, y0, x1, y1, score, source, state, reviewer_id, reviewed_at, created_at) VALUES (1, 1, 1, 0, 0, 10, 10, 0.8, 'det', 'rejected', 1, '2026-01-02T00:00:00Z', '2026-01-01T00:00:00Z')",
		"INSERT INTO suggestions(id, image_id, class_id, x0, y0, x1, y1, score, source, state, created_at) VALUES (2, 1, 1, 5, 5, 20, 20, 0.4, 'det', 'pending', '2026-01-01T00:00:00Z')",
	} {
		if _, err := db.Exec(q); err != nil {
			t.Fatalf("%.60s: %v", q, err)
		}
	}
	db.Close()

	s, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if v, _ := s.SchemaVersion(bg); v != latestVersion() || v < 2 {
		t.Errorf("schema version %d after open, want %d", v, latestVersion())
	}
	g, err := s.Suggestion(bg, 1)
	if err != nil || g.State != project.SuggestionRejected || g.ReviewerID != 1 || g.FinalIoU != 0 || g.Box != box(0, 0, 10, 10) {
		t.Errorf("old rejected suggestion: %+v %v", g, err)
	}
	made, err := s.Decide(bg, 1, []project.Decision{{SuggestionID: 2, Accept: true}})
	if err != nil {
		t.Fatal(err)
	}
	if g, _ := s.Suggestion(bg, 2); g.State != project.SuggestionAccepted || g.FinalIoU != 1 || g.LabelID != made[2] {
		t.Errorf("old pending suggestion accepted after migration: %+v", g)
	}
}

func TestImportSuggestionsReplacesOnlyPending(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	first := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: box(20, 20, 40, 40), Score: 0.6, Source: "det"},
		{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: box(5, 5, 15, 25), Score: 0.3},
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
	// Decide two of them, then import again: those two stay, the third is replaced.
	if _, err := s.Decide(bg, f.rev.ID, []project.Decision{{SuggestionID: gs[0].ID, Accept: true}, {SuggestionID: gs[1].ID}}); err != nil {
		t.Fatal(err)
	}
	second := []project.Suggestion{
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(1, 1, 2, 2), Score: 0.5},
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(3, 3, 4, 4), Score: 0.45},
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
	if g, _ := s.Suggestion(bg, gs[1].ID); g.State != project.SuggestionRejected {
		t.Errorf("rejected suggestion after re-import: %+v", g)
	}
	if _, err := s.Suggestion(bg, gs[2].ID); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("replaced pending suggestion still there: %v", err)
	}
}

func TestImportSuggestionsAllOrNothing(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	good := project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9}
	if _, err := s.ImportSuggestions(bg, "det", []project.Suggestion{good}); err != nil {
		t.Fatal(err)
	}
	// 300 rows, so that the good ones before the bad one fill a whole batch.
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
	if _, err := s.ImportSuggestions(bg, " ", nil); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("blank source: %v", err)
	}
	if gs := mustQuery(t, s, project.SuggestionQuery{}); len(gs) != 1 || gs[0].Box != good.Box {
		t.Errorf("failed imports changed the suggestions: %+v", gs)
	}
}

func TestDecideRecordsVerdicts(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	s.now = func() time.Time { return time.Date(2026, 3, 4, 5, 6, 7, 0, time.UTC) }
	gs := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.8},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.7},
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: box(50, 50, 60, 60), Score: 0.2},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	acc, cor, recls, rej := q[0].ID, q[1].ID, q[2].ID, q[3].ID
	made, err := s.Decide(bg, f.rev.ID, []project.Decision{
		{SuggestionID: acc, Accept: true},
		{SuggestionID: cor, Accept: true, Box: box(0, 0, 10, 5)},
		{SuggestionID: recls, Accept: true, ClassID: f.kayak.ID},
		{SuggestionID: rej},
	})
	if err != nil {
		t.Fatal(err)
	}
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
		acc:   {project.SuggestionAccepted, project.OriginAccepted, box(0, 0, 10, 10), f.boat.ID, 1},
		cor:   {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 5), f.boat.ID, 0.5},
		recls: {project.SuggestionCorrected, project.OriginCorrected, box(0, 0, 10, 10), f.kayak.ID, 1},
	}
	for id, w := range want {
		g, _ := s.Suggestion(bg, id)
		if g.State != w.state || g.ReviewerID != f.rev.ID || !g.Reviewed.Equal(s.now()) || g.LabelID != made[id] || g.FinalIoU != w.iou {
			t.Errorf("suggestion %d: %+v, want %+v", id, g, w)
		}
		l, err := s.Label(bg, made[id])
		if err != nil || l.Origin != w.origin || l.Box != w.box || l.ClassID != w.class || l.AnnotatorID != f.rev.ID ||
			l.SuggestionID != id || l.Source != "det" || l.Score != g.Score || l.ImageID != f.im1.ID {
			t.Errorf("label of suggestion %d: %+v %v", id, l, err)
		}
	}
	g, _ := s.Suggestion(bg, rej)
	if g.State != project.SuggestionRejected || g.ReviewerID != f.rev.ID || g.Reviewed.IsZero() || g.LabelID != 0 || g.FinalIoU != 0 {
		t.Errorf("rejected: %+v", g)
	}
	rows, err := s.ReviewRows(bg, "")
	if err != nil || len(rows) != 4 {
		t.Fatalf("review rows: %+v %v", rows, err)
	}
	if rows[1] != (project.ReviewRow{Source: "det", ClassID: f.boat.ID, Score: 0.8, State: project.SuggestionCorrected, FinalIoU: 0.5}) {
		t.Errorf("review row: %+v", rows[1])
	}
	if rows, _ := s.ReviewRows(bg, "nobody"); len(rows) != 0 {
		t.Errorf("review rows of an unknown source: %+v", rows)
	}
}

func TestAcceptSuggestionRecordsFinalIoU(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	ids, err := s.AddSuggestions(bg, []project.Suggestion{{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9, Source: "det"}})
	if err != nil {
		t.Fatal(err)
	}
	// [0,0,10,10] against [5,0,15,10]: overlap 50, union 150, IoU 1/3.
	if _, err := acceptOne(s, ids[0], f.rev.ID, box(5, 0, 15, 10), f.boat.ID); err != nil {
		t.Fatal(err)
	}
	if g, _ := s.Suggestion(bg, ids[0]); math.Abs(g.FinalIoU-1.0/3) > 1e-12 {
		t.Errorf("final IoU %v, want 1/3", g.FinalIoU)
	}
}

func TestDecideRefusesDecidedSuggestions(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	other, _ := s.AddAnnotator(bg, "Tomas")
	gs := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.8},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	a, b := q[0].ID, q[1].ID
	if _, err := s.Decide(bg, other.ID, []project.Decision{{SuggestionID: a}}); err != nil {
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
		made, err := s.Decide(bg, f.rev.ID, ds)
		if err == nil || made != nil {
			t.Errorf("%s: accepted (%v)", name, made)
			continue
		}
		if name == "decided by someone else" && (!errors.Is(err, project.ErrInvalid) || !strings.Contains(err.Error(), "suggestion "+itoa(a)+" is no longer pending")) {
			t.Errorf("%s: %v", name, err)
		}
		if name == "missing" && (!errors.Is(err, project.ErrNotFound) || !strings.Contains(err.Error(), "999")) {
			t.Errorf("%s: %v", name, err)
		}
		if name == "unknown class" && !errors.Is(err, project.ErrNotFound) {
			t.Errorf("%s: %v", name, err)
		}
	}
	if _, err := s.Decide(bg, 999, []project.Decision{{SuggestionID: b}}); !errors.Is(err, project.ErrNotFound) {
		t.Errorf("unknown reviewer: %v", err)
	}
	if g, _ := s.Suggestion(bg, b); g.State != project.SuggestionPending || g.ReviewerID != 0 || !g.Reviewed.IsZero() {
		t.Errorf("failed calls changed suggestion %d: %+v", b, g)
	}
	if after := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionRejected}); len(after) != 1 || after[0] != before[0] || after[0].ReviewerID != other.ID {
		t.Errorf("failed calls changed the decided suggestion: %+v", after)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{}); len(ls) != 0 {
		t.Errorf("failed calls left labels: %+v", ls)
	}
}

func itoa(n int64) string { return strconv.FormatInt(n, 10) }

func TestUndecideRestoresPending(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	gs := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.8},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 30, 10), Score: 0.7},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	a, b, c := q[0].ID, q[1].ID, q[2].ID
	made, err := s.Decide(bg, f.rev.ID, []project.Decision{{SuggestionID: a, Accept: true}, {SuggestionID: b, Accept: true, Box: box(1, 1, 20, 10)}, {SuggestionID: c}})
	if err != nil {
		t.Fatal(err)
	}
	// An edit after the decision does not keep the label from the undo.
	l, _ := s.Label(bg, made[b])
	l.Box = box(2, 2, 20, 10)
	if err := s.UpdateLabel(bg, l); err != nil {
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
	// Decided again after the undo, as if never decided.
	if _, err := s.Decide(bg, f.rev.ID, []project.Decision{{SuggestionID: a}}); err != nil {
		t.Errorf("deciding again after undo: %v", err)
	}
}

func TestQuerySuggestionsFilters(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	b := box(0, 0, 10, 10)
	if _, err := s.ImportSuggestions(bg, "det", []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: b, Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: b, Score: 0.5},
		{ImageID: f.im2.ID, ClassID: f.boat.ID, Box: b, Score: 0.5},
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: b, Score: 0.3},
		{ImageID: f.im2.ID, ClassID: f.kayak.ID, Box: b, Score: -1.5},
	}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.ImportSuggestions(bg, "exemplar", []project.Suggestion{{ImageID: f.im1.ID, ClassID: f.kayak.ID, Box: b, Score: 0.7}}); err != nil {
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
		{"class", project.SuggestionQuery{ClassID: f.kayak.ID}, []float64{0.7, 0.3, -1.5}},
		{"image", project.SuggestionQuery{ImageID: f.im1.ID}, []float64{0.9, 0.7, 0.5}},
		{"source", project.SuggestionQuery{Source: "exemplar"}, []float64{0.7}},
		{"all together", project.SuggestionQuery{Source: "det", ImageID: f.im2.ID, ClassID: f.boat.ID, MinScore: 0.5, MaxScore: 0.6}, []float64{0.5}},
		{"limit", project.SuggestionQuery{Limit: 2}, []float64{0.9, 0.7}},
		{"rejected", project.SuggestionQuery{State: project.SuggestionRejected}, nil},
	}
	for _, c := range cases {
		gs := mustQuery(t, s, c.q)
		var got []float64
		for _, g := range gs {
			got = append(got, g.Score)
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
	top := mustQuery(t, s, project.SuggestionQuery{Limit: 1})[0]
	if _, err := s.Decide(bg, f.rev.ID, []project.Decision{{SuggestionID: top.ID}}); err != nil {
		t.Fatal(err)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{}); n != 5 {
		t.Errorf("pending after a decision: %d", n)
	}
	if gs := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionRejected}); len(gs) != 1 || gs[0].ID != top.ID {
		t.Errorf("rejected: %+v", gs)
	}
	if _, err := s.CountSuggestions(bg, project.SuggestionQuery{State: "maybe"}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("unknown state: %v", err)
	}
}

func TestReviewSurvivesReopen(t *testing.T) {
	path := filepath.Join(t.TempDir(), "review.boxw")
	s, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	f := newReviewFixture(t, s)
	gs := []project.Suggestion{
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 20, 10), Score: 0.8},
		{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 30, 10), Score: 0.7},
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil {
		t.Fatal(err)
	}
	q := mustQuery(t, s, project.SuggestionQuery{})
	made, err := s.Decide(bg, f.rev.ID, []project.Decision{{SuggestionID: q[0].ID, Accept: true, Box: box(0, 0, 10, 5)}, {SuggestionID: q[1].ID}})
	if err != nil {
		t.Fatal(err)
	}
	want := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionCorrected})
	s.Close()

	s, err = Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	got := mustQuery(t, s, project.SuggestionQuery{State: project.SuggestionCorrected})
	if len(got) != 1 || got[0] != want[0] || got[0].FinalIoU != 0.5 || got[0].LabelID != made[q[0].ID] {
		t.Errorf("corrected after reopen: %+v, want %+v", got, want)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{State: project.SuggestionRejected}); n != 1 {
		t.Errorf("rejected after reopen: %d", n)
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{}); n != 1 {
		t.Errorf("pending after reopen: %d", n)
	}
	if err := s.Undecide(bg, []int64{q[0].ID}); err != nil {
		t.Errorf("undo after reopen: %v", err)
	}
}

// A big import drops and rebuilds the review index; it must be back after
// the import, and still there after one that failed half-way.
func TestBulkImportKeepsReviewIndex(t *testing.T) {
	s := newStore(t)
	f := newReviewFixture(t, s)
	gs := make([]project.Suggestion, 12000)
	for i := range gs {
		gs[i] = project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: float64(i%100) / 100}
	}
	hasIndex := func() bool {
		var n int
		s.db.QueryRow("SELECT count(*) FROM sqlite_master WHERE type = 'index' AND name = ?", reviewIndex).Scan(&n)
		return n == 1
	}
	if _, err := s.ImportSuggestions(bg, "det", gs); err != nil || !hasIndex() {
		t.Fatalf("bulk import: %v, index there: %v", err, hasIndex())
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{ClassID: f.boat.ID, MinScore: 0.9}); n != 1200 {
		t.Errorf("count after bulk import: %d", n)
	}
	// A refusal by the database while inserting, after the index was dropped.
	if _, err := s.db.Exec("CREATE TRIGGER refuse BEFORE INSERT ON suggestions WHEN NEW.score = 42 BEGIN SELECT RAISE(ABORT, 'refused'); END"); err != nil {
		t.Fatal(err)
	}
	gs[11000].Score = 42
	if _, err := s.ImportSuggestions(bg, "det", gs); err == nil || !strings.Contains(err.Error(), "suggestions 10752 to 11007") {
		t.Fatalf("refused import: %v", err)
	}
	if !hasIndex() {
		t.Errorf("failed import left the review index dropped")
	}
	if n, _ := s.CountSuggestions(bg, project.SuggestionQuery{}); n != 12000 {
		t.Errorf("failed import changed the suggestions: %d", n)
	}
}

func TestReplaceSuggestionsOnTouchesOnlyThoseImages(t *testing.T) {
	s := newStore(t)
	a, b := addImage(t, s, 0), addImage(t, s, 1)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	g := func(img int64, x float64) project.Suggestion {
		return project.Suggestion{ImageID: img, ClassID: c.ID, Box: project.Rect(x, 0, x+5, 5), Score: 0.7}
	}
	if _, err := s.ImportSuggestions(bg, "exemplar", []project.Suggestion{g(a.ID, 0), g(a.ID, 10), g(b.ID, 0)}); err != nil {
		t.Fatal(err)
	}
	rep, err := s.ReplaceSuggestionsOn(bg, "exemplar", []int64{a.ID}, []project.Suggestion{g(a.ID, 20)})
	if err != nil || rep.ReplacedPending != 2 || rep.Added != 1 {
		t.Fatalf("replace on image a: %+v, %v", rep, err)
	}
	onB, _ := s.Suggestions(bg, project.SuggestionFilter{ImageID: b.ID})
	onA, _ := s.Suggestions(bg, project.SuggestionFilter{ImageID: a.ID})
	if len(onB) != 1 || len(onA) != 1 || onA[0].Box.X0 != 20 {
		t.Errorf("a: %+v, b: %+v", onA, onB)
	}
	if _, err := s.ReplaceSuggestionsOn(bg, "exemplar", []int64{a.ID}, []project.Suggestion{g(b.ID, 30)}); err == nil {
		t.Errorf("a suggestion outside the replaced images was accepted")
	}
}
