package store

import (
	"bytes"
	"database/sql"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/mattn/go-sqlite3"

	"boxwright/project"
)

// fileState is what a read must not change: the bytes, the time stamp,
// and the absence of -wal and -shm files.
func fileState(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	st, _ := os.Stat(path)
	_, wal := os.Stat(path + "-wal")
	_, shm := os.Stat(path + "-shm")
	return string(b) + st.ModTime().String() + (func() string {
		if wal == nil || shm == nil {
			return "+sidecar files"
		}
		return ""
	})()
}

func TestReadingChangesNothing(t *testing.T) {
	path := projectWithLabels(t, 200)
	old := time.Now().Add(-time.Hour)
	os.Chtimes(path, old, old)
	before := fileState(t, path)
	for i, open := range []func(string) (*Store, error){OpenReadOnly, Open} {
		s, err := open(path)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.Counts(bg); err != nil {
			t.Fatal(err)
		}
		if _, err := s.Images(bg); err != nil {
			t.Fatal(err)
		}
		s.Close()
		if after := fileState(t, path); after != before {
			t.Fatalf("opening (read-only %v) and reading changed the file, its time stamp or left -wal/-shm files", i == 0)
		}
	}
	s, _ := OpenReadOnly(path)
	defer s.Close()
	_, err := s.AddAnnotator(bg, "Omar")
	if !errors.Is(err, project.ErrReadOnly) || !strings.Contains(err.Error(), "read-only") {
		t.Errorf("write through a read-only open: %v, want ErrReadOnly", err)
	}
}

// TestReadOnlyFolder is the user's case: a project in a folder this user
// cannot write. As root (who may write anywhere) the test runs itself
// again as the unprivileged user nobody.
func TestReadOnlyFolder(t *testing.T) {
	dir := os.Getenv("BOXWRIGHT_RO_DIR")
	if dir == "" {
		dir, err := os.MkdirTemp("", "ro-project")
		if err != nil {
			t.Fatal(err)
		}
		defer os.RemoveAll(dir)
		src := projectWithLabels(t, 200)
		b, _ := os.ReadFile(src)
		if err := os.WriteFile(filepath.Join(dir, "p"+Extension), b, 0o444); err != nil {
			t.Fatal(err)
		}
		os.Chmod(dir, 0o555)
		defer os.Chmod(dir, 0o755)
		if os.Geteuid() != 0 {
			readOnlyChecks(t, dir)
			return
		}
		// Run this test again as nobody, from a copy of the test binary
		// that nobody may execute.
		bin := filepath.Join(dir+"-bin", "store.test")
		os.MkdirAll(filepath.Dir(bin), 0o755)
		defer os.RemoveAll(filepath.Dir(bin))
		self, _ := os.ReadFile(os.Args[0])
		if err := os.WriteFile(bin, self, 0o755); err != nil {
			t.Fatal(err)
		}
		cmd := exec.Command(bin, "-test.run", "^TestReadOnlyFolder$", "-test.v")
		cmd.Env = append(os.Environ(), "BOXWRIGHT_RO_DIR="+dir)
		cmd.Dir = filepath.Dir(bin)
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
		out, err := cmd.CombinedOutput()
		if err != nil || !bytes.Contains(out, []byte("--- PASS: TestReadOnlyFolder")) {
			t.Fatalf("as nobody: %v\n%s", err, out)
		}
		return
	}
	readOnlyChecks(t, dir)
}

func readOnlyChecks(t *testing.T, dir string) {
	path := filepath.Join(dir, "p"+Extension)
	if f, err := os.OpenFile(path, os.O_WRONLY, 0); err == nil {
		f.Close()
		t.Fatal("the test file is writable for this user; the test proves nothing")
	}
	_, err := Open(path)
	if err == nil {
		t.Fatal("Open for writing of a read-only project succeeded")
	}
	if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "read-only") {
		t.Errorf("Open for writing: %v; want the file named and read-only said", err)
	}
	s, err := OpenReadOnly(path)
	if err != nil {
		t.Fatalf("OpenReadOnly of a read-only project: %v", err)
	}
	c, err := s.Counts(bg)
	if err != nil || c.Labels != 200 {
		t.Fatalf("counts: %+v %v", c, err)
	}
	s.Close()
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("the folder holds %d entries after the failed write and the read, want only the project", len(entries))
	}
}

// A write refused because the file is read-only (for example a project
// whose write-ahead files exist but whose file this user may not write)
// names the file and what to do, in every write path that runs in a
// transaction: not the database's "attempt to write a readonly database:
// read-only", and whatever the step that met it.
func TestReadOnlyWriteErrorNamesTheFile(t *testing.T) {
	path := projectWithLabels(t, 1)
	s, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	refused := sqlite3.Error{Code: sqlite3.ErrReadonly, ExtendedCode: sqlite3.ErrReadonlyDbMoved}
	for _, got := range []error{
		s.tx(bg, func(*sql.Tx) error { return refused }),
		s.translate(s.tx(bg, func(*sql.Tx) error { return refused })), // translated twice: the same
	} {
		want := "cannot write to " + path + ": the file or its folder is read-only for this user (make both writable, or work on a copy)"
		if !errors.Is(got, project.ErrReadOnly) || got.Error() != want {
			t.Errorf("read-only write: %v, want %q", got, want)
		}
	}
}

// Opening what is not a project file and creating where that cannot be
// done say so once, in words, without the bare kind at the end ("not a
// regular file: not a Boxwright project", "open X: no such file or
// directory").
func TestOpenAndCreateSayWhy(t *testing.T) {
	dir := t.TempDir()
	pipe := filepath.Join(dir, "p.boxw")
	if err := syscall.Mkfifo(pipe, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	link := filepath.Join(dir, "gone.boxw")
	if err := os.Symlink(filepath.Join(dir, "nowhere"), link); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	for _, c := range []struct {
		err  error
		kind error
		want string
	}{
		{errOf(Open(pipe)), ErrNotProject, "open project " + pipe + ": it is a named pipe, not a project file"},
		{errOf(Open(dir)), ErrNotProject, "open project " + dir + ": it is a folder, not a project file"},
		{errOf(Create(filepath.Join(dir, "no", "p.boxw"))), os.ErrNotExist, "the folder " + filepath.Join(dir, "no") + " does not exist (make it first)"},
		{errOf(Create(link)), ErrExists, "a link of that name exists, leading nowhere"},
	} {
		if c.err == nil || !errors.Is(c.err, c.kind) || !strings.HasSuffix(c.err.Error(), c.want) && !strings.Contains(c.err.Error(), c.want+";") {
			t.Errorf("%v; want %q (and errors.Is %v)", c.err, c.want, c.kind)
		}
	}
}

func errOf(s *Store, err error) error {
	if s != nil {
		s.Close()
	}
	return err
}
