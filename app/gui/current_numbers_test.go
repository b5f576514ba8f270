package gui

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/ops"
	"boxwright/project"
)

// The summary follows drawing and deciding at once (it used to keep the
// numbers from when the project was opened).
func TestSummaryFollowsEdits(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	counts, err := u.st.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	labels, pending := counts.Labels, counts.Suggestions[project.SuggestionPending]
	want := func(l, p int) {
		t.Helper()
		if s := fmt.Sprintf("%s, %s", ops.Plural(l, "label"), ops.Plural(p, "pending suggestion")); !strings.Contains(u.summary.Text, s) {
			t.Errorf("summary %q, want %q", u.summary.Text, s)
		}
	}
	want(labels, pending)
	u.createBox(project.Box{X0: 1, Y0: 1, X1: 5, Y1: 5})
	want(labels+1, pending)
	u.dupIoU = 1.01
	u.view.Select(suggestionKey(u.suggestions[0].ID))
	u.acceptSuggestion()
	want(labels+2, pending-1)
	if !strings.Contains(u.summary.Text, "Ines: ") {
		t.Errorf("summary %q does not say whose statuses", u.summary.Text)
	}
}

// The class bar says whose boxes "here" counts.
func TestClassBarSaysWhoseBoxes(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	mine, all := map[int64]int{}, map[int64]int{}
	boxes, _ := u.sess.Boxes(context.Background(), u.imageID)
	for _, l := range boxes {
		mine[l.ClassID]++
		all[l.ClassID]++
	}
	for _, l := range u.other {
		if l.AnnotatorID != u.me.ID {
			all[l.ClassID]++
		}
	}
	differs := false
	for _, r := range u.bar.rows {
		id := r.class.ID
		if want := countsText(mine[id], all[id], u.classTotal[id], "Ines"); r.counts.Text != want {
			t.Errorf("class %s: %q, want %q", r.class.Name, r.counts.Text, want)
		}
		if mine[id] != all[id] {
			differs = true
			if !strings.Contains(r.counts.Text, fmt.Sprintf("%d Ines's", mine[id])) {
				t.Errorf("class %s: %q does not give Ines's %d", r.class.Name, r.counts.Text, mine[id])
			}
		}
	}
	if !differs {
		t.Skip("Ines and everyone have the same counts on the first image")
	}
}

// After Project ▸ New the status line and the view no longer show the
// previous project's image.
func TestNewProjectClearsTheStatusLine(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	if !strings.Contains(u.status.Text, ".jpg") {
		t.Fatalf("status %q before", u.status.Text)
	}
	p := filepath.Join(t.TempDir(), "empty.boxw")
	if err := u.createProject(p); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(u.status.Text, ".jpg") || u.view.Image() != nil {
		t.Errorf("after New: status %q, image shown %v", u.status.Text, u.view.Image() != nil)
	}
}
