package storetest

import (
	"errors"
	"sync"

	"boxwright/project"
)

func init() {
	register(
		testCase{"ConcurrentDecideOnce", concurrentDecide},
		testCase{"ConcurrentEdits", concurrentEdits},
		testCase{"ConcurrentEnsureAnnotator", concurrentEnsure},
		testCase{"ConcurrentAddClass", concurrentAddClass},
	)
}

// parallel runs f(i) for i in 0..n-1 at once and returns their errors.
func parallel(n int, f func(i int) error) []error {
	errs := make([]error, n)
	var wg sync.WaitGroup
	start := make(chan struct{})
	for i := 0; i < n; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			<-start
			errs[i] = f(i)
		}()
	}
	close(start)
	wg.Wait()
	return errs
}

// Reviewers deciding one suggestion at the same time: exactly one
// decision is recorded, with at most one label; every other call is
// refused (the suggestion is no longer pending) and changes nothing.
func concurrentDecide(e *env) {
	f := e.review()
	reviewers := []project.Annotator{f.rev, e.annotator("Omar"), e.annotator("Rita"), e.annotator("Tomas"), e.annotator("Ute"), e.annotator("Vera")}
	g := e.importSuggestions("det", project.Suggestion{ImageID: f.im1.ID, ClassID: f.boat.ID, Box: box(0, 0, 10, 10), Score: 0.9})[0]
	made := make([]map[int64]int64, len(reviewers))
	errs := parallel(len(reviewers), func(i int) error {
		var err error
		made[i], err = e.b.Decide(e.ctx, reviewers[i].ID, []project.Decision{{SuggestionID: g.ID, Accept: i%2 == 0}})
		return err
	})
	winner := -1
	for i, err := range errs {
		switch {
		case err == nil && winner >= 0:
			e.t.Errorf("both reviewer %d and %d decided suggestion %d", winner, i, g.ID)
		case err == nil:
			winner = i
		case !errors.Is(err, project.ErrInvalid):
			e.t.Errorf("reviewer %d: %v, want the refusal of a decided suggestion (ErrInvalid)", i, err)
		}
	}
	if winner < 0 {
		e.t.Fatalf("nobody decided: %v", errs)
	}
	got, err := e.b.Suggestion(e.ctx, g.ID)
	e.fatal("read suggestion", err)
	if got.ReviewerID != reviewers[winner].ID {
		e.t.Errorf("suggestion decided by %d, but the call that succeeded was %d's", got.ReviewerID, reviewers[winner].ID)
	}
	ls := e.labels(project.LabelFilter{})
	if winner%2 == 0 {
		if got.State != project.SuggestionAccepted || len(ls) != 1 || ls[0].ID != made[winner][g.ID] || ls[0].AnnotatorID != reviewers[winner].ID {
			e.t.Errorf("accepted by %d: suggestion %+v, labels %+v", winner, got, ls)
		}
	} else if got.State != project.SuggestionRejected || len(ls) != 0 {
		e.t.Errorf("rejected by %d: suggestion %+v, labels %+v", winner, got, ls)
	}
}

// Edits from several goroutines at once are all stored, each with its own
// ID.
func concurrentEdits(e *env) {
	ims := e.images(2)
	c := e.class("buoy")
	as := []project.Annotator{e.annotator("a"), e.annotator("b"), e.annotator("c"), e.annotator("d")}
	const each = 25
	ids := make([][]int64, len(as))
	errs := parallel(len(as), func(i int) error {
		for k := 0; k < each; k++ {
			got, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Insert: []project.Label{
				{ImageID: ims[k%2].ID, ClassID: c.ID, AnnotatorID: as[i].ID, Box: box(float64(k), 0, float64(k)+5, 5)}}})
			if err != nil {
				return err
			}
			ids[i] = append(ids[i], got...)
		}
		return nil
	})
	seen := map[int64]bool{}
	for i, err := range errs {
		if err != nil {
			e.t.Errorf("annotator %d: %v", i, err)
		}
		for _, id := range ids[i] {
			if seen[id] {
				e.t.Errorf("label ID %d given twice", id)
			}
			seen[id] = true
		}
	}
	if ls := e.labels(project.LabelFilter{}); len(ls) != len(as)*each || len(seen) != len(as)*each {
		e.t.Errorf("%d labels stored, %d IDs returned, want %d", len(ls), len(seen), len(as)*each)
	}
	for _, a := range as {
		if st := e.statusFor(a.ID); st[ims[0].ID] != project.StatusStarted || st[ims[1].ID] != project.StatusStarted {
			e.t.Errorf("annotator %s: statuses %v, want both started", a.Name, st)
		}
	}
}

// EnsureAnnotator called at once for one new name: every call gets the
// one annotator, none fails.
func concurrentEnsure(e *env) {
	const n = 8
	got := make([]project.Annotator, n)
	errs := parallel(n, func(i int) error {
		var err error
		got[i], err = e.b.EnsureAnnotator(e.ctx, "Ines")
		return err
	})
	for i, err := range errs {
		if err != nil {
			e.t.Errorf("call %d: %v", i, err)
		} else if got[i].ID != got[0].ID && errs[0] == nil {
			e.t.Errorf("call %d got annotator %d, call 0 got %d", i, got[i].ID, got[0].ID)
		}
	}
	if as, _ := e.b.Annotators(e.ctx); len(as) != 1 {
		e.t.Errorf("annotators %+v, want one", as)
	}
}

// AddClass called at once for one name: one class, the other calls get
// ErrDuplicate.
func concurrentAddClass(e *env) {
	const n = 6
	errs := parallel(n, func(i int) error {
		_, err := e.b.AddClass(e.ctx, project.Class{Name: "buoy"})
		return err
	})
	ok := 0
	for i, err := range errs {
		switch {
		case err == nil:
			ok++
		case !errors.Is(err, project.ErrDuplicate):
			e.t.Errorf("call %d: %v, want ErrDuplicate", i, err)
		}
	}
	if cs, _ := e.b.Classes(e.ctx); ok != 1 || len(cs) != 1 {
		e.t.Errorf("%d calls succeeded, classes %+v; want one", ok, cs)
	}
}
