package cli

import (
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"boxwright/app/ops"
)

// With stderr a pipe, as when the demo runs under a script or CI, its
// progress comes as whole lines ending in \n, not as \r updates that a log
// shows as one endless line (issue 15).
func TestDemoProgressThroughAPipe(t *testing.T) {
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	got := make(chan string)
	go func() {
		b, _ := io.ReadAll(r)
		got <- string(b)
	}()
	dir := t.TempDir()
	code := Run([]string{"demo", dir, "--no-open", "--images", "3", "--seed", "3"}, io.Discard, w, noWindow)
	w.Close()
	errs := <-got
	if code != 0 {
		t.Fatalf("demo: exit %d, stderr %q", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, ops.DemoProjectName)); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(errs, "\r") {
		t.Errorf("progress through a pipe has carriage returns: %q", errs)
	}
	if !strings.HasPrefix(errs, "drawing images 1 / 3\n") || !strings.HasSuffix(errs, "drawing images 3 / 3\n") {
		t.Errorf("progress through a pipe: %q, want whole lines from 1 / 3 to 3 / 3", errs)
	}
}

// Off a terminal the progress is throttled: the first and the last image,
// and in between one line per demoProgressEvery.
func TestDemoProgressThrottled(t *testing.T) {
	var b strings.Builder
	clock := time.Unix(0, 0)
	p := demoProgress(&b, func() time.Time { return clock })
	for done := 1; done <= 10; done++ {
		p(done, 10)
		clock = clock.Add(demoProgressEvery / 2)
	}
	lines := strings.Split(strings.TrimSuffix(b.String(), "\n"), "\n")
	want := []string{"drawing images 1 / 10", "drawing images 3 / 10", "drawing images 5 / 10", "drawing images 7 / 10", "drawing images 9 / 10", "drawing images 10 / 10"}
	if !slices.Equal(lines, want) {
		t.Errorf("lines %q, want %q", lines, want)
	}
}

// add-images reports a long intake in whole lines off a terminal too.
func TestIntakeProgressOffATerminal(t *testing.T) {
	var b strings.Builder
	quiet := false
	p := progressPrinter(&b, &quiet)
	for done := 1; done <= 300; done++ {
		p(done, 300)
	}
	if s := b.String(); strings.Contains(s, "\r") || !strings.HasPrefix(s, "100 / 300 files\n") || !strings.HasSuffix(s, "300 / 300 files\n") {
		t.Errorf("progress %q", s)
	}
}
