package store

import (
	"errors"
	"fmt"
	"os/exec"
	"strings"
	"sync"
	"testing"
	"time"

	"boxwright/project"
)

// holdWriteLock has the sqlite3 tool (another process) hold the project's
// write lock for the given time, and returns once it holds it.
func holdWriteLock(t *testing.T, path string, hold time.Duration) *exec.Cmd {
	t.Helper()
	script := fmt.Sprintf("BEGIN IMMEDIATE;\nINSERT INTO annotators(name, created_at) VALUES ('held %d', '2026-01-01T00:00:00Z');\n.print held\n.shell sleep %.1f\nCOMMIT;\n", time.Now().UnixNano(), hold.Seconds())
	cmd := exec.Command("sqlite3", "-bail", path)
	cmd.Stdin = strings.NewReader(script)
	cmd.Stderr = &testWriter{t}
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal("the sqlite3 tool (Debian package sqlite3) is needed:", err)
	}
	buf := make([]byte, 5)
	if _, err := out.Read(buf); err != nil || string(buf) != "held\n" {
		t.Fatalf("sqlite3 did not take the lock: %q %v", buf, err)
	}
	return cmd
}

func TestWriterWaitsAndNamesTheHolder(t *testing.T) {
	path := projectWithLabels(t, 10)
	s, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()

	// A writer that gives up names the process holding the file.
	holder := holdWriteLock(t, path, 4*time.Second)
	s.WriteWait = 1500 * time.Millisecond
	_, err = s.AddAnnotator(bg, "Omar")
	if !errors.Is(err, project.ErrBusy) || !strings.Contains(err.Error(), fmt.Sprintf("process %d (sqlite3", holder.Process.Pid)) {
		t.Fatalf("write while another process holds the lock: %v; want ErrBusy naming process %d", err, holder.Process.Pid)
	}
	// Readers do not wait for the writer.
	start := time.Now()
	r, err := OpenReadOnly(path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := r.Counts(bg); err != nil {
		t.Fatal(err)
	}
	r.Close()
	if d := time.Since(start); d > time.Second {
		t.Errorf("a read waited %v for the writer", d)
	}
	holder.Wait()

	// A writer within its wait gets through once the holder is done, and
	// hears about the wait on the way.
	holder = holdWriteLock(t, path, 3*time.Second)
	var mu sync.Mutex
	var notices []string
	s.WriteWait = 30 * time.Second
	s.Notice = func(m string) { mu.Lock(); notices = append(notices, m); mu.Unlock() }
	start = time.Now()
	if _, err := s.AddAnnotator(bg, "Omar"); err != nil {
		t.Fatalf("write after the holder finished: %v", err)
	}
	t.Logf("the write waited %v", time.Since(start))
	holder.Wait()
	mu.Lock()
	defer mu.Unlock()
	if len(notices) == 0 || !strings.Contains(notices[0], "is writing to it") || !strings.Contains(notices[0], path) {
		t.Errorf("notices while waiting: %q", notices)
	}
}

type testWriter struct{ t *testing.T }

func (w *testWriter) Write(b []byte) (int, error) { w.t.Logf("sqlite3: %s", b); return len(b), nil }
