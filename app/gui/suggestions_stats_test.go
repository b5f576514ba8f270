package gui

import (
	"cmp"
	"context"
	"slices"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

// openStats opens the statistics window and returns it.
func openStats(t *testing.T, u *ui) fyne.Window {
	t.Helper()
	before := len(u.app.Driver().AllWindows())
	u.showSuggestionStats()
	all := u.app.Driver().AllWindows()
	if len(all) != before+1 {
		t.Fatal("the statistics window did not open")
	}
	return all[len(all)-1]
}

// labelWith finds the label whose text contains part.
func labelWith(t *testing.T, o fyne.CanvasObject, part string) *widget.Label {
	t.Helper()
	for _, x := range test.LaidOutObjects(o) {
		if l, ok := x.(*widget.Label); ok && strings.Contains(l.Text, part) {
			return l
		}
	}
	t.Fatalf("no label says %q", part)
	return nil
}

// decideTop accepts the n highest-scoring pending suggestions.
func decideTop(t *testing.T, u *ui, n int) {
	t.Helper()
	decideSome(t, u, n, 0)
}

// decideSome accepts the n highest-scoring pending suggestions and
// rejects the low lowest-scoring ones.
func decideSome(t *testing.T, u *ui, n, low int) {
	t.Helper()
	ctx := context.Background()
	gs, err := u.st.QuerySuggestions(ctx, project.SuggestionQuery{State: project.SuggestionPending})
	if err != nil {
		t.Fatal(err)
	}
	// Highest score first.
	slices.SortStableFunc(gs, func(a, b project.Suggestion) int { return cmp.Compare(b.Score, a.Score) })
	var ds []project.Decision
	for _, g := range gs[:n] {
		ds = append(ds, project.Decision{SuggestionID: g.ID, Accept: true})
	}
	for _, g := range gs[len(gs)-low:] {
		ds = append(ds, project.Decision{SuggestionID: g.ID, Accept: false})
	}
	if _, err := u.st.Decide(ctx, u.me.ID, ds); err != nil {
		t.Fatal(err)
	}
}

// One accepted suggestion is no ground for a score threshold: the window
// says there is not enough evidence, gives the Wilson interval of the kept
// share (1 of 1: 20.7–100.0 %, statsmodels 0.13.5 proportion_confint(1, 1,
// method="wilson") = (0.2065, 1.0)) and counts "1 decision".
func TestSuggestionStatsOneDecisionIsNotEvidence(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	decideTop(t, u, 1)
	w := openStats(t, u)
	l := labelWith(t, w.Content(), "Pending suggestions are never counted")
	for _, want := range []string{"Not enough evidence", "kept in 1 of 1 decision (100.0 %, 95 % Wilson interval 20.7–100.0 %)", "from 20 decisions on"} {
		if !strings.Contains(l.Text, want) {
			t.Errorf("summary lacks %q: %s", want, l.Text)
		}
	}
	if strings.Contains(l.Text, "1 decisions") {
		t.Errorf("summary says \"1 decisions\": %s", l.Text)
	}
}
