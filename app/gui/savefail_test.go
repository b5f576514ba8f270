package gui

import (
	"context"
	"database/sql"
	"strings"
	"testing"
	"time"

	"boxwright/project"
	"boxwright/store"
)

// A write the disk refuses is reported, the box stays on screen and in the
// undo history, and it reaches the file once writing works again.
func TestSaveFailureKeepsTheEditAndRetries(t *testing.T) {
	u, path := openDemoAs(t, "Ines")

	// A second connection makes every label insert fail, as a full disk
	// would.
	db, err := sql.Open("sqlite3", path+"?_busy_timeout=5000")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if _, err := db.Exec("CREATE TRIGGER refuse BEFORE INSERT ON labels BEGIN SELECT RAISE(ABORT, 'database or disk is full (test)'); END"); err != nil {
		t.Fatal(err)
	}
	count := func() int {
		var n int
		db.QueryRow("SELECT count(*) FROM labels l JOIN annotators a ON a.id = l.annotator_id WHERE a.name = 'Ines' AND l.image_id = ?", u.imageID).Scan(&n)
		return n
	}
	before := count()
	shown := len(u.view.Items())

	u.createBox(project.Rect(5, 5, 25, 25))
	if !strings.Contains(u.saved.Text, "NOT SAVED") || u.retry.Hidden {
		t.Errorf("indicator %q, retry hidden %v: the failure must be plain", u.saved.Text, u.retry.Hidden)
	}
	if got := len(u.view.Items()); got != shown+1 {
		t.Errorf("the unsaved box is not on screen: %d items, want %d", got, shown+1)
	}
	if u.sess.CanUndo() == "" || u.sess.Unsaved() != 1 {
		t.Errorf("undo %q, unsaved %d", u.sess.CanUndo(), u.sess.Unsaved())
	}
	if count() != before {
		t.Fatalf("the refused write reached the file")
	}
	// Nothing written while it fails; then writing works again.
	u.flush()
	if u.sess.Unsaved() != 1 {
		t.Errorf("retry while still failing: unsaved %d", u.sess.Unsaved())
	}
	if _, err := db.Exec("DROP TRIGGER refuse"); err != nil {
		t.Fatal(err)
	}
	u.flush()
	if u.sess.Unsaved() != 0 || !strings.Contains(u.saved.Text, "saved") || strings.Contains(u.saved.Text, "NOT") || !u.retry.Hidden {
		t.Errorf("after retry: unsaved %d, indicator %q", u.sess.Unsaved(), u.saved.Text)
	}
	if count() != before+1 {
		t.Errorf("after retry the file holds %d boxes, want %d", count(), before+1)
	}
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ls, _ := s.Labels(context.Background(), project.LabelFilter{ImageID: u.imageID})
	found := false
	for _, l := range ls {
		found = found || l.Box == project.Rect(5, 5, 25, 25)
	}
	if !found {
		t.Errorf("the retried box is not in the project")
	}
}

// Unwritten edits are tried again by themselves once writing works.
func TestSaveFailureRetriesByItself(t *testing.T) {
	old := retryEvery
	retryEvery = 50 * time.Millisecond
	defer func() { retryEvery = old }()
	u, path := openDemoAs(t, "Ines")
	db, err := sql.Open("sqlite3", path+"?_busy_timeout=5000")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	db.Exec("CREATE TRIGGER refuse BEFORE INSERT ON labels BEGIN SELECT RAISE(ABORT, 'database or disk is full (test)'); END")
	u.createBox(project.Rect(5, 5, 25, 25))
	if u.sess.Unsaved() != 1 {
		t.Fatalf("unsaved %d, want 1", u.sess.Unsaved())
	}
	time.Sleep(200 * time.Millisecond) // a few quiet retries fail
	db.Exec("DROP TRIGGER refuse")
	for i := 0; u.sess.Unsaved() > 0; i++ {
		if i == 100 {
			t.Fatal("the edit was not written by the quiet retries")
		}
		time.Sleep(50 * time.Millisecond)
	}
	if !strings.Contains(u.saved.Text, "saved") || strings.Contains(u.saved.Text, "NOT") {
		t.Errorf("indicator %q after the retry", u.saved.Text)
	}
}
