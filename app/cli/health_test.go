package cli

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"boxwright/app/internal/testkit"
)

// Commands that only read leave the project file as it was: its bytes,
// its time stamp, and no -wal/-shm files beside it.
func TestReadCommandsChangeNothing(t *testing.T) {
	path := testkit.SmallDemo(t)
	old := time.Now().Add(-time.Hour).Truncate(time.Second)
	os.Chtimes(path, old, old)
	before, _ := os.ReadFile(path)
	out := t.TempDir()
	for _, args := range [][]string{
		{"info", path}, {"images", path}, {"check", path}, {"classes", path, "list"},
		{"agree", path, "--annotators", "Ines,Tomas"}, {"suggestions", "stats", path}, {"models", path},
		{"export", path, "--layout", "json", "--annotator", "Ines", "--out", filepath.Join(out, "e"), "--images", "none"},
	} {
		mustCLI(t, args...)
		st, _ := os.Stat(path)
		now, _ := os.ReadFile(path)
		if !st.ModTime().Equal(old) || !bytes.Equal(now, before) {
			t.Errorf("boxwright %s changed the project file", strings.Join(args, " "))
		}
		if _, err := os.Stat(path + "-wal"); err == nil {
			t.Errorf("boxwright %s left a -wal file", strings.Join(args, " "))
		}
	}
}

// A damaged project: writes are refused with the file named and the way
// to recover; check says what is wrong; recover saves the rest.
func TestDamagedProjectCommands(t *testing.T) {
	path := testkit.SmallDemo(t)
	before := testkit.DamagePage(t, path, "labels", 2)

	labels := filepath.Join(t.TempDir(), "l.json")
	os.WriteFile(labels, []byte(`{"images":[],"annotations":[],"categories":[]}`), 0o644)
	for _, args := range [][]string{
		{"import", path, "--layout", "json", "--annotator", "Omar", labels},
		{"add-images", path, t.TempDir()},
		{"classes", path, "add", "ferry"},
	} {
		code, _, errs := cli(t, args...)
		if code != 1 || !strings.Contains(errs, path) || !strings.Contains(errs, "damaged") || !strings.Contains(errs, "boxwright recover") {
			t.Errorf("boxwright %s on a damaged file: exit %d, %q", args[0], code, errs)
		}
	}
	if now, _ := os.ReadFile(path); !bytes.Equal(now, before) {
		t.Fatal("a refused write changed the damaged file")
	}
	code, stdout, _ := cli(t, "check", path)
	if code != 1 || !strings.Contains(stdout, "page") {
		t.Errorf("check of a damaged file: exit %d, %q", code, stdout)
	}
	rec := filepath.Join(filepath.Dir(path), "recovered.boxw")
	stdout = mustCLI(t, "recover", path, rec)
	if !strings.Contains(stdout, "labels") || !strings.Contains(stdout, "unreadable ids") {
		t.Errorf("recover report: %q", stdout)
	}
	if s := mustCLI(t, "check", rec); !strings.Contains(s, "sound") {
		t.Errorf("check of the recovered project: %q", s)
	}
}
