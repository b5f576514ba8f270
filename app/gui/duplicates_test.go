package gui

import (
	"context"
	"fmt"
	"strings"
	"testing"

	"fyne.io/fyne/v2"

	"boxwright/app/internal/testkit"
	"boxwright/app/ops"
	"boxwright/project"
)

// coveredOnScreen is a pending suggestion on the image on screen that one
// of the person's own boxes covers, with that box's key.
func coveredOnScreen(t *testing.T, u *ui) (project.Suggestion, int64) {
	t.Helper()
	for id, c := range u.coveredHere() {
		g, _ := u.suggestion(id)
		return g, c.Key
	}
	t.Skip("no covered suggestion on the demo's first image")
	return project.Suggestion{}, 0
}

func ownCount(t *testing.T, u *ui) int {
	t.Helper()
	boxes, err := u.sess.Boxes(context.Background(), u.imageID)
	if err != nil {
		t.Fatal(err)
	}
	return len(boxes)
}

// Accepting a suggestion that repeats one of the person's own boxes asks
// first: nothing is stored until the answer, and each answer does what it
// says (this used to store a second box on the same boat silently).
func TestAcceptingACoveredSuggestionAsks(t *testing.T) {
	for _, answer := range []string{"Reject the suggestion", "Replace my box", "Keep both"} {
		t.Run(answer, func(t *testing.T) {
			u, _ := openDemoAs(t, "Ines")
			g, own := coveredOnScreen(t, u)
			before := ownCount(t, u)
			// The person can tell: the suggestion's tag says it is covered.
			for _, it := range u.view.Items() {
				if it.Key == suggestionKey(g.ID) && !strings.Contains(it.Caption, "covered by yours") {
					t.Errorf("covered suggestion's caption %q", it.Caption)
				}
			}
			u.view.Select(suggestionKey(g.ID))
			u.view.TypedRune('a')
			if u.overlapAsk == nil {
				t.Fatal("accepting a covered suggestion did not ask")
			}
			if st := stateOf(t, u, g.ID).State; st != project.SuggestionPending || ownCount(t, u) != before {
				t.Fatalf("stored before the answer: state %s, %d boxes (was %d)", st, ownCount(t, u), before)
			}
			if !u.overlapAsk.choose(answer) {
				t.Fatalf("no choice %q in %+v", answer, u.overlapAsk.choices)
			}
			st := stateOf(t, u, g.ID).State
			boxes, _ := u.sess.Boxes(context.Background(), u.imageID)
			_, ownLeft := boxes[own]
			switch answer {
			case "Reject the suggestion":
				if st != project.SuggestionRejected || len(boxes) != before || !ownLeft {
					t.Errorf("state %s, %d boxes (was %d), own box kept %v", st, len(boxes), before, ownLeft)
				}
			case "Replace my box":
				if st != project.SuggestionAccepted || len(boxes) != before || ownLeft {
					t.Errorf("state %s, %d boxes (was %d), own box kept %v", st, len(boxes), before, ownLeft)
				}
			case "Keep both":
				if st != project.SuggestionAccepted || len(boxes) != before+1 || !ownLeft {
					t.Errorf("state %s, %d boxes (was %d), own box kept %v", st, len(boxes), before, ownLeft)
				}
			}
		})
	}
}

// Drawing a box over one of the person's own of the same class asks; the
// new one can be discarded, or replace the old.
func TestDrawingOverAnOwnBoxAsks(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	boxes, _ := u.sess.Boxes(context.Background(), u.imageID)
	var key int64
	var old project.Label
	for k, l := range boxes {
		key, old = k, l
		break
	}
	if key == 0 {
		t.Skip("Ines has no box on the demo's first image")
	}
	u.current = old.ClassID
	before := len(boxes)
	u.createBox(old.Box.Translate(1, 0))
	if u.overlapAsk == nil {
		t.Fatal("drawing over an own box did not ask")
	}
	u.overlapAsk.choose("Discard the new box")
	if n := ownCount(t, u); n != before {
		t.Fatalf("after discarding: %d boxes, want %d", n, before)
	}
	u.createBox(old.Box.Translate(1, 0))
	u.overlapAsk.choose("Replace the old box")
	boxes, _ = u.sess.Boxes(context.Background(), u.imageID)
	if _, left := boxes[key]; left || len(boxes) != before {
		t.Fatalf("after replacing: old box left %v, %d boxes, want %d", left, len(boxes), before)
	}
	// A box far from every own box of its class is not asked about.
	u.overlapAsk = nil
	u.createBox(project.Box{X0: 1, Y0: 1, X1: 4, Y1: 4})
	if u.overlapAsk != nil {
		t.Errorf("asked about a box that repeats nothing: %s", u.overlapAsk.message)
	}
}

// "Reject suggestions my boxes already cover" rejects exactly the covered
// ones across the project as one undoable step.
func TestRejectCoveredSuggestions(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	gs, err := u.coveredInProject()
	if err != nil {
		t.Fatal(err)
	}
	if len(gs) == 0 {
		t.Skip("no covered suggestion in the demo")
	}
	ctx := context.Background()
	pendingBefore, _ := u.st.Suggestions(ctx, project.SuggestionFilter{State: project.SuggestionPending})
	if err := u.rejectCovered(gs); err != nil {
		t.Fatal(err)
	}
	for _, g := range gs {
		if st := stateOf(t, u, g.ID).State; st != project.SuggestionRejected {
			t.Errorf("covered suggestion %d is %s", g.ID, st)
		}
	}
	pendingAfter, _ := u.st.Suggestions(ctx, project.SuggestionFilter{State: project.SuggestionPending})
	if len(pendingAfter) != len(pendingBefore)-len(gs) {
		t.Errorf("pending %d → %d, rejected %d", len(pendingBefore), len(pendingAfter), len(gs))
	}
	if again, _ := u.coveredInProject(); len(again) != 0 {
		t.Errorf("%d covered suggestions still pending", len(again))
	}
	u.undo()
	if st := stateOf(t, u, gs[0].ID).State; st != project.SuggestionPending {
		t.Errorf("after undo: %s", st)
	}
}

// Shift+A asks about the suggestions above the threshold that repeat own
// boxes; "leave the repeats pending" accepts only the others.
func TestAcceptAllAboveAsksAboutRepeats(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.suggestionThreshold = 0
	covered := u.coveredHere()
	if len(covered) == 0 || len(covered) == len(u.suggestions) {
		t.Skipf("%d of %d suggestions covered; the test needs some of each", len(covered), len(u.suggestions))
	}
	all := append([]project.Suggestion(nil), u.suggestions...)
	u.acceptAllAbove()
	if u.overlapAsk == nil {
		t.Fatal("Shift+A over repeats did not ask")
	}
	var leave string
	for _, c := range u.overlapAsk.choices {
		if strings.Contains(c.label, "leave the repeats pending") {
			leave = c.label
		}
	}
	u.overlapAsk.choose(leave)
	for _, g := range all {
		st := stateOf(t, u, g.ID).State
		if _, rep := covered[g.ID]; rep != (st == project.SuggestionPending) {
			t.Errorf("suggestion %d (repeat %v) is %s", g.ID, rep, st)
		}
	}
}

// The crop grid flags the suggestions Ines's own boxes already cover, and
// "Mark covered" marks exactly those for rejection.
func TestCropGridFlagsCoveredSuggestions(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	var cl countingLoader
	g := newCropGrid(u, cl.load)
	g.win.Resize(fyne.NewSize(900, 700))
	if err := g.refreshClasses(); err != nil {
		t.Fatal(err)
	}
	waitIdle(t, g)
	own, err := u.st.Labels(context.Background(), project.LabelFilter{AnnotatorID: u.me.ID, ClassID: g.classID})
	if err != nil {
		t.Fatal(err)
	}
	want := ops.CoveredSuggestions(g.items, own, u.dupIoU)
	if len(want) == 0 {
		t.Skip("no covered suggestion in the busiest class")
	}
	if len(g.covered) != len(want) || !strings.Contains(g.info.Text, fmt.Sprintf("%d already covered", len(want))) {
		t.Fatalf("grid knows %d covered, want %d; info %q", len(g.covered), len(want), g.info.Text)
	}
	g.markCovered()
	if len(g.marked) != len(want) {
		t.Fatalf("%d marked, want the %d covered", len(g.marked), len(want))
	}
	for id := range want {
		if !g.marked[id] {
			t.Errorf("covered suggestion %d not marked", id)
		}
	}
}

// The review queue says when one of the reviewer's own boxes already
// covers the item on screen.
func TestReviewQueueFlagsCoveredItem(t *testing.T) {
	u := openDemoForReview(t, testkit.SmallDemo(t))
	q, shown := newShownQueue(u)
	if err := q.load(); err != nil {
		t.Fatal(err)
	}
	own, err := u.st.Labels(context.Background(), project.LabelFilter{AnnotatorID: u.me.ID})
	if err != nil {
		t.Fatal(err)
	}
	cov := ops.CoveredSuggestions(q.items, own, u.dupIoU)
	pos := -1
	for i, g := range q.items {
		if _, ok := cov[g.ID]; ok {
			pos = i
			break
		}
	}
	if pos < 0 {
		t.Skip("no covered item in the queue")
	}
	q.pos = pos
	q.show()
	waitShown(t, shown, q.items[pos].ID)
	if !strings.Contains(q.status.Text, "already covers it") {
		t.Errorf("status %q", q.status.Text)
	}
	// An item nobody's box covers says nothing of the kind.
	for i, g := range q.items {
		if _, ok := cov[g.ID]; !ok {
			q.pos = i
			q.show()
			waitShown(t, shown, g.ID)
			if strings.Contains(q.status.Text, "covers") {
				t.Errorf("uncovered item: status %q", q.status.Text)
			}
			break
		}
	}
}
