package gui

import (
	"bufio"
	"database/sql"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/internal/testkit"
	"boxwright/project"
)

// traceLines reads the trace file back, one decoded object per line.
func traceLines(t *testing.T, path string) []map[string]any {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []map[string]any
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		var m map[string]any
		if err := json.Unmarshal(sc.Bytes(), &m); err != nil {
			t.Fatalf("trace line %d is not JSON: %v: %s", len(out)+1, err, sc.Text())
		}
		out = append(out, m)
	}
	return out
}

// Without the variable nothing is traced and the store is not wrapped.
func TestEditTraceOffWhenUnset(t *testing.T) {
	tr, err := openEditTrace("")
	if tr != nil || err != nil {
		t.Fatalf("openEditTrace(\"\") = %v, %v; want no trace", tr, err)
	}
	tr.ack(&ui{}) // a nil trace must be a no-op
	tr.close()
	if got := traceWrites(nil, nil); got != nil {
		t.Errorf("traceWrites with no trace wrapped the store: %T", got)
	}
	if _, err := openEditTrace(filepath.Join(t.TempDir(), "no-such-folder", "trace")); err == nil {
		t.Error("a trace file that cannot be created gave no error")
	}
}

// With a trace, a drawn box is traced as an intent before the write and
// acknowledged after it with the row's ID and box as the file holds them;
// a write the file refuses leaves its intent but no acknowledgement.
func TestEditTraceIntentThenAck(t *testing.T) {
	path := testkit.SmallDemo(t)
	tracePath := filepath.Join(t.TempDir(), "edits.jsonl")
	if err := os.WriteFile(tracePath, []byte(`{"earlier":true}`+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	tr, err := openEditTrace(tracePath)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(tr.close) // after closeProject, which may write once more
	u := newUI(test.NewTempApp(t))
	u.trace = tr
	u.annotatorFlag = "tracer"
	u.win.Resize(fyne.NewSize(1200, 800))
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(u.closeProject)
	waitDecoded(t, decoded)

	box := project.Rect(10.5, 20.25, 60, 80.125)
	u.createBox(box)
	lines := traceLines(t, tracePath)
	if len(lines) < 3 || lines[0]["earlier"] != true {
		t.Fatalf("trace %v: want the earlier line kept, then an intent and an acknowledgement", lines)
	}
	in, ack := lines[1], lines[2]
	if in["intent"] != 1.0 || in["op"] != "labels" {
		t.Fatalf("first traced line %v: want intent 1 of op labels", in)
	}
	ins := in["insert"].([]any)
	if len(ins) != 1 || ins[0].(map[string]any)["origin"] != "drawn" {
		t.Fatalf("intent inserts %v: want the one drawn box", ins)
	}
	if ack["ack"] != 1.0 || ack["image"] != float64(u.imageID) {
		t.Fatalf("acknowledgement %v: want ack 1 of image %d", ack, u.imageID)
	}
	ls := ack["labels"].([]any)
	if len(ls) != 1 {
		t.Fatalf("acknowledged labels %v: want the drawn box", ls)
	}
	l := ls[0].(map[string]any)
	id := int64(l["id"].(float64))
	b := l["box"].([]any)
	got := project.Rect(b[0].(float64), b[1].(float64), b[2].(float64), b[3].(float64))
	if id == 0 || got != box {
		t.Fatalf("acknowledged label %v: want a row ID and box %v", l, box)
	}

	db, err := sql.Open("sqlite3", path+"?_busy_timeout=5000")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var row project.Box
	if err := db.QueryRow("SELECT x0, y0, x1, y1 FROM labels WHERE id = ?", id).Scan(&row.X0, &row.Y0, &row.X1, &row.Y1); err != nil {
		t.Fatalf("the acknowledged label %d is not in the file: %v", id, err)
	}
	if row != box {
		t.Errorf("label %d in the file is %v, the trace says %v", id, row, box)
	}

	// A refused write: its intent is traced, no acknowledgement follows.
	if _, err := db.Exec("CREATE TRIGGER refuse BEFORE INSERT ON labels BEGIN SELECT RAISE(ABORT, 'database or disk is full (test)'); END"); err != nil {
		t.Fatal(err)
	}
	u.createBox(project.Rect(100, 100, 140, 150))
	lines = traceLines(t, tracePath)
	if len(lines) != 4 || lines[3]["intent"] != 2.0 {
		t.Fatalf("after a refused write the trace ends %v: want intent 2 and no acknowledgement", lines[len(lines)-1])
	}
}
