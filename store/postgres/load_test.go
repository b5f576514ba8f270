package postgres

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"slices"
	"strconv"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"boxwright/project"
	"boxwright/project/formats"
)

// loadSeconds is how long the team load test runs: 10 s in the suite,
// BOXWRIGHT_LOAD_SECONDS when set (make loadtest sets 60). full says
// whether the variable is set: the full-size runs, where the
// latency goal is checked.
func loadSeconds() (d time.Duration, full bool) {
	if v, err := strconv.Atoi(os.Getenv("BOXWRIGHT_LOAD_SECONDS")); err == nil && v > 0 {
		return time.Duration(v) * time.Second, true
	}
	return 10 * time.Second, false
}

// giveUpAfter is how long one edit is tried again before the test counts
// it as given up on: far longer than a fast restart takes.
const giveUpAfter = 30 * time.Second

// percentile is the p-quantile (0 ≤ p ≤ 1) of sorted durations by the
// nearest-rank method (Hyndman & Fan 1996, definition 1).
func percentile(sorted []time.Duration, p float64) time.Duration {
	if len(sorted) == 0 {
		return 0
	}
	k := int(p*float64(len(sorted))+0.999999999) - 1
	return sorted[min(max(k, 0), len(sorted)-1)]
}

// editor is one simulated annotator (or reviewer): its own role and
// connection pool, and what the server acknowledged to it.
type editor struct {
	s     *Store
	name  string
	me    int64
	rng   *rand.Rand
	abort <-chan struct{}

	acked   map[int64]project.Label // label → as last acknowledged
	deleted map[int64]bool          // labels whose deletion was acknowledged

	toDecide []int64                    // reviewer: its share of the pending suggestions
	decided  map[int64]project.Decision // reviewer: acknowledged decisions

	lat            []time.Duration // per acknowledged edit, from first try to answer
	retries        int
	doubtDeletes   int // deletes that came back ErrNotFound on a retry
	doubtDecisions int // decisions that came back "already decided" by itself on a retry
	failures       []string
}

// write runs one edit as the window's retry path does (app/ops.Session
// keeps a failed write queued and tries it again): a failure is tried
// again every 100 ms until the server takes it, and only then is the edit
// acknowledged. try gets whether this is the first attempt, so that it can
// recognise an earlier attempt that committed while its answer was lost.
func (e *editor) write(what string, try func(ctx context.Context, first bool) error) bool {
	start := time.Now()
	for n := 1; ; n++ {
		ctx, cancel := context.WithTimeout(bg, 15*time.Second)
		err := try(ctx, n == 1)
		cancel()
		if err == nil {
			e.lat = append(e.lat, time.Since(start))
			return true
		}
		if time.Since(start) > giveUpAfter {
			e.failures = append(e.failures, fmt.Sprintf("%s: %s: given up after %d tries in %v: %v", e.name, what, n, time.Since(start).Round(time.Millisecond), err))
			return false
		}
		e.retries++
		select {
		case <-e.abort:
			e.failures = append(e.failures, fmt.Sprintf("%s: %s: test aborted: %v", e.name, what, err))
			return false
		case <-time.After(100 * time.Millisecond):
		}
	}
}

// edit is one scripted edit of an annotator's own labels: half the time a
// new box, else a move or a delete of one of its boxes.
func (e *editor) edit(class int64, images int) {
	ids := make([]int64, 0, len(e.acked))
	for id := range e.acked {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	switch r := e.rng.IntN(10); {
	case r < 5 || len(ids) == 0: // draw
		x, y := float64(e.rng.IntN(1200)), float64(e.rng.IntN(900))
		l := project.Label{ImageID: int64(1 + e.rng.IntN(images)), ClassID: class, AnnotatorID: e.me,
			Box: project.Box{X0: x, Y0: y, X1: x + 40, Y1: y + 30}, Origin: project.OriginDrawn}
		var got []int64
		if e.write("draw", func(ctx context.Context, _ bool) (err error) {
			got, err = e.s.ApplyLabelChange(ctx, project.LabelChange{Insert: []project.Label{l}})
			return err
		}) {
			l.ID = got[0]
			e.acked[l.ID] = l
		}
	case r < 8: // move by a pixel or two
		l := e.acked[ids[e.rng.IntN(len(ids))]]
		dx := float64(1 + e.rng.IntN(2))
		if l.Box.X1+dx > 1280 {
			dx = -l.Box.X0
		}
		l.Box.X0, l.Box.X1 = l.Box.X0+dx, l.Box.X1+dx
		if e.write(fmt.Sprintf("move label %d", l.ID), func(ctx context.Context, _ bool) error {
			_, err := e.s.ApplyLabelChange(ctx, project.LabelChange{Update: []project.Label{l}})
			return err
		}) {
			e.acked[l.ID] = l
		}
	default: // delete
		id := ids[e.rng.IntN(len(ids))]
		if e.write(fmt.Sprintf("delete label %d", id), func(ctx context.Context, first bool) error {
			_, err := e.s.ApplyLabelChange(ctx, project.LabelChange{Delete: []int64{id}})
			if !first && errors.Is(err, project.ErrNotFound) {
				// Only this annotator touches its labels: an earlier
				// attempt committed and its answer was lost.
				e.doubtDeletes++
				return nil
			}
			return err
		}) {
			delete(e.acked, id)
			e.deleted[id] = true
		}
	}
}

// decide is one reviewer's key press on the next of its suggestions:
// accept (sometimes with a corrected box) or reject.
func (e *editor) decide() {
	id := e.toDecide[0]
	e.toDecide = e.toDecide[1:]
	d := project.Decision{SuggestionID: id}
	switch r := e.rng.IntN(10); {
	case r < 6:
		d.Accept = true
	case r < 8:
		d.Accept = true
		d.Box = project.Box{X0: 10, Y0: 10, X1: 70, Y1: 50}
	}
	if e.write(fmt.Sprintf("decide suggestion %d", id), func(ctx context.Context, first bool) error {
		_, err := e.s.Decide(ctx, e.me, []project.Decision{d})
		if !first && errors.Is(err, project.ErrInvalid) {
			// "No longer pending": done by an earlier attempt whose
			// answer was lost, if the decider was this reviewer.
			if g, gerr := e.s.Suggestion(ctx, id); gerr == nil && g.State != project.SuggestionPending && g.ReviewerID == e.me {
				e.doubtDecisions++
				return nil
			}
		}
		return err
	}) {
		e.decided[id] = d
	}
}

// 20 members, each logged in as their own role with their own connection
// pool, edit for the run's duration (10 s; BOXWRIGHT_LOAD_SECONDS): 18
// annotators draw, move and delete their own boxes, 2 reviewers decide
// disjoint halves of the pending suggestions one key press at a time. Half
// way through, the server is restarted as `pg_ctl restart -m fast` does,
// cutting every connection. Each edit is retried until the server takes
// it. At the end every acknowledged edit must be in the project with its
// acknowledged values and no edit may have been given up on. Reports edits
// per second, the p50 and p99 latency of an acknowledged edit (from its
// first try, so the restart shows in the tail), retries, and the labels
// left over from inserts that committed while their answer was lost.
func TestTeamLoad(t *testing.T) {
	if testing.Short() {
		t.Skip("load test")
	}
	run, _ := loadSeconds()
	const members, reviewers, images, suggestions = 20, 2, 50, 30000
	srv, owner := ownerProject(t)
	if _, err := owner.pool.Exec(bg, `INSERT INTO classes(name, color, position) VALUES ('buoy', '#00aa88', 1);
		INSERT INTO images(path, sha256, width, height, orientation)
		SELECT 'im' || g || '.jpg', lpad(to_hex(g), 64, '0'), 1280, 960, 1 FROM generate_series(1, 50) g`); err != nil {
		t.Fatal(err)
	}
	var class, firstImage int64
	if err := owner.pool.QueryRow(bg, "SELECT (SELECT id FROM classes), (SELECT min(id) FROM images)").Scan(&class, &firstImage); err != nil || firstImage != 1 {
		t.Fatalf("class %d, first image %d: %v", class, firstImage, err)
	}
	gs := make([]project.Suggestion, suggestions)
	for i := range gs {
		x := float64(i % 1200)
		gs[i] = project.Suggestion{ImageID: int64(1 + i%images), ClassID: class, Box: project.Box{X0: x, Y0: 100, X1: x + 30, Y1: 140},
			Score: float64(i%100) / 100, Source: "det"}
	}
	gids, err := owner.AddSuggestions(bg, gs)
	if err != nil {
		t.Fatal(err)
	}

	abort := make(chan struct{})
	eds := make([]*editor, members)
	for i := range members {
		name, kind := fmt.Sprintf("a%02d", i), KindAnnotator
		if i < reviewers {
			name, kind = fmt.Sprintf("r%02d", i), KindReviewer
		}
		if _, err := owner.AddMember(bg, name, kind, name+"-pw"); err != nil {
			t.Fatal(err)
		}
		s := openAs(t, srv, name)
		me, err := s.AnnotatorByName(bg, name)
		if err != nil {
			t.Fatal(err)
		}
		e := &editor{s: s, name: name, me: me.ID, rng: rand.New(rand.NewPCG(uint64(i), 7)), abort: abort,
			acked: map[int64]project.Label{}, deleted: map[int64]bool{}, decided: map[int64]project.Decision{}}
		if i < reviewers {
			for k := i; k < len(gids); k += reviewers {
				e.toDecide = append(e.toDecide, gids[k])
			}
		}
		eds[i] = e
	}

	var wg sync.WaitGroup
	finished := false
	defer func() {
		if !finished { // a t.Fatal below: stop the editors' retries
			close(abort)
		}
		wg.Wait()
	}()
	start := time.Now()
	end := start.Add(run)
	for i, e := range eds {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for time.Now().Before(end) {
				if i >= reviewers {
					e.edit(class, images)
				} else if len(e.toDecide) > 0 {
					e.decide()
				} else {
					return
				}
			}
		}()
	}
	time.Sleep(run / 2)
	restartAt := time.Now()
	srv.Restart(t)
	restartTook := time.Since(restartAt)
	wg.Wait()
	finished = true
	elapsed := time.Since(start)

	var all []time.Duration
	retries, doubtDeletes, doubtDecisions, decisions := 0, 0, 0, 0
	for _, e := range eds {
		all = append(all, e.lat...)
		retries += e.retries
		doubtDeletes += e.doubtDeletes
		doubtDecisions += e.doubtDecisions
		decisions += len(e.decided)
		for _, f := range e.failures {
			t.Errorf("an edit was given up on: %s", f)
		}
		if len(e.decided) > 0 && len(e.toDecide) == 0 {
			t.Logf("%s decided all its suggestions before the end", e.name)
		}
	}
	if len(all) == 0 {
		t.Fatal("no edit was acknowledged")
	}
	slices.Sort(all)

	// Every acknowledged edit is in the project as acknowledged: the
	// labels as last drawn or moved, the deleted ones gone, the decisions
	// recorded by their reviewer with the label they made.
	type row struct {
		annotator, class int64
		box              project.Box
	}
	have := map[int64]row{}
	rows, err := owner.pool.Query(bg, "SELECT id, annotator_id, class_id, x0, y0, x1, y1 FROM labels")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var id int64
		var r row
		if err := rows.Scan(&id, &r.annotator, &r.class, &r.box.X0, &r.box.Y0, &r.box.X1, &r.box.Y1); err != nil {
			t.Fatal(err)
		}
		have[id] = r
	}
	if rows.Err() != nil {
		t.Fatal(rows.Err())
	}
	lost, extras := 0, 0
	loss := func(format string, a ...any) {
		lost++
		if lost <= 10 {
			t.Errorf(format, a...)
		}
	}
	for _, e := range eds[reviewers:] {
		mine := 0
		for id, l := range e.acked {
			if r, ok := have[id]; !ok || r.annotator != e.me || r.class != l.ClassID || r.box != l.Box {
				loss("%s: label %d acknowledged as %v of class %d, in the project %+v (present: %v)", e.name, id, l.Box, l.ClassID, r, ok)
			}
		}
		for id := range e.deleted {
			if _, ok := have[id]; ok {
				loss("%s: label %d acknowledged as deleted is in the project", e.name, id)
			}
		}
		for id, r := range have {
			if r.annotator == e.me {
				mine++
				if _, ok := e.acked[id]; !ok && !e.deleted[id] {
					extras++ // an insert that committed while its answer was lost, then retried
				}
			}
		}
	}
	for _, e := range eds[:reviewers] {
		for id, d := range e.decided {
			g, err := owner.Suggestion(bg, id)
			if err != nil {
				t.Fatal(err)
			}
			switch {
			case g.ReviewerID != e.me || g.State == project.SuggestionPending:
				loss("%s: decision on suggestion %d acknowledged, in the project %s by %d", e.name, id, g.State, g.ReviewerID)
			case d.Accept != (g.LabelID != 0):
				loss("%s: suggestion %d acknowledged as accept=%v, in the project %s with label %d", e.name, id, d.Accept, g.State, g.LabelID)
			case d.Accept:
				box, _, state, _ := d.Final(g)
				if r, ok := have[g.LabelID]; !ok || r.annotator != e.me || r.box != box || g.State != state {
					loss("%s: suggestion %d accepted as %v (%s), in the project %s with label %d %+v", e.name, id, box, state, g.State, g.LabelID, r)
				}
			}
		}
	}
	if lost > 0 {
		t.Errorf("%d acknowledged edits lost", lost)
	}
	t.Logf("%d members (%d reviewers) for %v, server restarted at %v (took %v): %d edits acknowledged (%d decisions), %.0f a second; "+
		"latency p50 %v, p99 %v, max %v; %d retries; in doubt: %d deletes and %d decisions found done on retry, %d extra labels from inserts retried after a lost answer; %d acknowledged edits lost",
		members, reviewers, elapsed.Round(time.Millisecond), restartAt.Sub(start).Round(time.Millisecond), restartTook.Round(time.Millisecond),
		len(all), decisions, float64(len(all))/elapsed.Seconds(), percentile(all, 0.5).Round(time.Microsecond), percentile(all, 0.99).Round(time.Microsecond),
		all[len(all)-1].Round(time.Millisecond), retries, doubtDeletes, doubtDecisions, extras, lost)
}

// importDataset is images of 1280×960 with 20 boxes each in four classes,
// named as the SQL in TestReadersDuringBigImport names its images.
func importDataset(images int) *formats.Dataset {
	classes := []string{"sailboat", "motorboat", "buoy", "kayak"}
	ds := &formats.Dataset{Classes: classes}
	for i := range images {
		rec := formats.ImageRecord{Name: fmt.Sprintf("img/%05d.jpg", i), Width: 1280, Height: 960}
		for k := range 20 {
			x, y := float64((i*37+k*53)%1200), float64((i*11+k*29)%900)
			rec.Boxes = append(rec.Boxes, formats.BoxRecord{Class: classes[k%4], Box: project.Box{X0: x, Y0: y, X1: x + 40.5, Y1: y + 30.25},
				Where: fmt.Sprintf("record %d box %d", i, k)})
		}
		ds.Images = append(ds.Images, rec)
	}
	return ds
}

// 5 annotators keep doing what the window does on opening an image (the
// image's labels, the per-image counts, the boxes of a few annotators)
// while the owner imports a dataset in one transaction: 20,000 boxes on
// 1,000 images in the suite, 200,000 on 10,000 with BOXWRIGHT_LOAD_SECONDS
// (the size, where the readers' p99 must stay below 100 ms; on a
// shared machine in the suite the figures are only logged). No read may
// fail, and the readers must have read while the import ran.
func TestReadersDuringBigImport(t *testing.T) {
	if testing.Short() {
		t.Skip("load test")
	}
	_, full := loadSeconds()
	images := 1000
	if full {
		images = 10000
	}
	const readers = 5
	srv, owner := ownerProject(t)
	if _, err := owner.pool.Exec(bg, `INSERT INTO classes(name, color, position) VALUES ('sailboat', '#00aa88', 0)`); err != nil {
		t.Fatal(err)
	}
	if _, err := owner.pool.Exec(bg, `INSERT INTO images(path, sha256, width, height, orientation)
		SELECT format('img/%s.jpg', lpad(i::text, 5, '0')), lpad(to_hex(i + 1), 64, '0'), 1280, 960, 1 FROM generate_series(0, $1::int - 1) AS i`, images); err != nil {
		t.Fatal(err)
	}
	var class int64
	if err := owner.pool.QueryRow(bg, "SELECT id FROM classes").Scan(&class); err != nil {
		t.Fatal(err)
	}
	// The readers' own work so far: 200 boxes each on the first images.
	rs := make([]*Store, readers)
	ids := make([]int64, readers)
	for i := range readers {
		name := fmt.Sprintf("a%02d", i)
		if _, err := owner.AddMember(bg, name, KindAnnotator, name+"-pw"); err != nil {
			t.Fatal(err)
		}
		rs[i] = openAs(t, srv, name)
		me, err := rs[i].AnnotatorByName(bg, name)
		if err != nil {
			t.Fatal(err)
		}
		ids[i] = me.ID
		var ls []project.Label
		for k := range 200 {
			x := float64(k * 5 % 1200)
			ls = append(ls, project.Label{ImageID: int64(1 + k%50), ClassID: class, AnnotatorID: ids[i], Box: project.Box{X0: x, Y0: 10, X1: x + 30, Y1: 40}})
		}
		if _, err := rs[i].ApplyLabelChange(bg, project.LabelChange{Insert: ls}); err != nil {
			t.Fatal(err)
		}
	}
	ds := importDataset(images)

	var importing atomic.Bool
	importing.Store(true)
	var wg sync.WaitGroup
	lat := make([][]time.Duration, readers)
	opens := make([][]time.Duration, readers)
	errs := make([][]error, readers)
	for i, s := range rs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 11))
			read := func(f func() error) {
				start := time.Now()
				if err := f(); err != nil {
					errs[i] = append(errs[i], err)
				}
				lat[i] = append(lat[i], time.Since(start))
			}
			for importing.Load() {
				start := time.Now()
				img := int64(1 + rng.IntN(images))
				read(func() error { _, err := s.Labels(bg, project.LabelFilter{ImageID: img}); return err })
				read(func() error { _, err := s.CountsByImage(bg); return err })
				read(func() error {
					_, err := s.BoxesByImage(bg, []int64{ids[i], ids[(i+1)%readers], ids[(i+2)%readers]})
					return err
				})
				opens[i] = append(opens[i], time.Since(start))
			}
		}()
	}
	start := time.Now()
	rep, err := owner.ImportDataset(bg, ds, project.ImportOptions{Annotator: "imported", CreateClasses: true})
	took := time.Since(start)
	importing.Store(false)
	wg.Wait()
	if err != nil || rep.Labels != 20*images {
		t.Fatalf("import: %d labels of %d, %v", rep.Labels, 20*images, err)
	}
	var all, open []time.Duration
	for i := range readers {
		for _, err := range errs[i] {
			t.Errorf("reader %d: %v", i, err)
		}
		all = append(all, lat[i]...)
		open = append(open, opens[i]...)
	}
	if len(open) < readers {
		t.Fatalf("the readers opened %d images during the %v import", len(open), took)
	}
	slices.Sort(all)
	slices.Sort(open)
	p99 := percentile(all, 0.99)
	t.Logf("import of %d boxes on %d images took %v (%.0f boxes a second); %d readers meanwhile made %d reads (%d image openings): "+
		"read p50 %v, p99 %v, max %v; opening an image (3 reads) p50 %v, p99 %v",
		20*images, images, took.Round(time.Millisecond), float64(20*images)/took.Seconds(), readers, len(all), len(open),
		percentile(all, 0.5).Round(time.Microsecond), p99.Round(time.Microsecond), all[len(all)-1].Round(time.Microsecond),
		percentile(open, 0.5).Round(time.Microsecond), percentile(open, 0.99).Round(time.Microsecond))
	if full && p99 >= 100*time.Millisecond {
		t.Errorf("the readers' p99 during the import is %v: the goal is below 100 ms", p99)
	}
}
