package store

import (
	"bytes"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
)

// projectWithLabels makes a closed project file with enough labels to
// fill many pages, and returns its path.
func projectWithLabels(t *testing.T, n int) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "p"+Extension)
	s, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	im := addImage(t, s, 0)
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	a, _ := s.AddAnnotator(bg, "Ines")
	ls := make([]project.Label, n)
	for i := range ls {
		x := float64(i % 600)
		ls[i] = project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, Box: project.Box{X0: x, Y0: 1, X1: x + 5, Y1: 9}, Origin: project.OriginDrawn}
	}
	if err := s.AddLabels(bg, ls); err != nil {
		t.Fatal(err)
	}
	s.Close()
	return path
}

// overwritePage fills one page of the file with garbage, as a failing
// disk or a stray write would.
func overwritePage(t *testing.T, path string, page int64) {
	t.Helper()
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := f.WriteAt(bytes.Repeat([]byte{0xde, 0xad}, 2048), 4096*(page-1)); err != nil {
		t.Fatal(err)
	}
}

func TestDamagedFileRefusedForWritingAndOpenForReading(t *testing.T) {
	path := projectWithLabels(t, 3000)
	overwritePage(t, path, 20)
	before, _ := os.ReadFile(path)

	_, err := Open(path)
	var de *DamagedError
	if !errors.As(err, &de) || !errors.Is(err, project.ErrDamaged) {
		t.Fatalf("Open of a damaged file: %v, want a DamagedError", err)
	}
	msg := err.Error()
	for _, want := range []string{path, "nothing is written", "boxwright recover", "backup"} {
		if !strings.Contains(msg, want) {
			t.Errorf("message %q lacks %q", msg, want)
		}
	}
	ro, err := OpenReadOnly(path)
	if err != nil {
		t.Fatalf("OpenReadOnly of a damaged file: %v", err)
	}
	if ro.Damage() == "" {
		t.Error("Damage() is empty for a damaged file")
	}
	found, err := ro.Check(bg)
	if err != nil || len(found) == 0 {
		t.Errorf("Check = %v, %v; want findings", found, err)
	}
	if _, err := ro.AddAnnotator(bg, "Omar"); err == nil {
		t.Error("a write through a read-only open succeeded")
	}
	ro.Close()
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Error("the damaged file changed")
	}
}

func TestBulkWriteChecksBigFiles(t *testing.T) {
	path := projectWithLabels(t, 3000)
	old := quickCheckLimit
	quickCheckLimit = 0 // every file is "big": not checked on open
	t.Cleanup(func() { quickCheckLimit = old })
	s, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.CheckBeforeBulkWrite(bg); err != nil {
		t.Fatalf("sound file: %v", err)
	}
	s.Close()
	overwritePage(t, path, 20)
	if s, err = Open(path); err != nil {
		t.Fatalf("Open does not check big files, yet: %v", err)
	}
	defer s.Close()
	err = s.AddLabels(bg, []project.Label{{ImageID: 1, ClassID: 1, AnnotatorID: 1, Box: project.Box{X0: 1, Y0: 1, X1: 2, Y1: 2}}})
	if !errors.Is(err, project.ErrDamaged) || !strings.Contains(err.Error(), path) {
		t.Fatalf("bulk write into a damaged file: %v, want ErrDamaged naming the file", err)
	}
}

func TestTruncatedFileIsDamage(t *testing.T) {
	path := projectWithLabels(t, 3000)
	st, _ := os.Stat(path)
	if err := os.Truncate(path, st.Size()-1000); err != nil {
		t.Fatal(err)
	}
	_, err := Open(path)
	if !errors.Is(err, project.ErrDamaged) || !strings.Contains(err.Error(), "cut short") {
		t.Fatalf("Open of a cut-short file: %v", err)
	}
}

// The recovery the damaged-file message advises must save every row but
// those on the damaged page, and give a sound project.
func TestRecoverSavesAllButTheDamagedPage(t *testing.T) {
	path := projectWithLabels(t, 3000)
	overwritePage(t, path, labelLeafPage(t, path))
	rec := filepath.Join(t.TempDir(), "r"+Extension)
	report, err := Recover(bg, path, rec)
	if err != nil {
		t.Fatal(err)
	}
	var labels TableRecovery
	for _, r := range report {
		if r.Table == "labels" {
			labels = r
		}
	}
	// One leaf holds some tens of the 3000 rows.
	if labels.Copied < 2800 || labels.Copied >= 3000 || len(labels.Unreadable) == 0 {
		t.Fatalf("labels recovered: %+v; want all but one page's rows", labels)
	}
	s, err := Open(rec)
	if err != nil {
		t.Fatalf("the recovered project: %v", err)
	}
	defer s.Close()
	if found, err := s.Check(bg); err != nil || len(found) != 0 {
		t.Fatalf("check of the recovered copy: %v %v", found, err)
	}
	n, err := s.Counts(bg)
	if err != nil || n.Images != 1 || n.Labels != labels.Copied {
		t.Fatalf("counts of the recovered copy: %+v %v; want 1 image, %d labels", n, err, labels.Copied)
	}
	if _, err := Recover(bg, path, rec); !errors.Is(err, ErrExists) {
		t.Errorf("Recover over an existing file: %v, want ErrExists", err)
	}
}

// labelLeafPage finds a page that holds label rows, with the sqlite3
// tool's dbstat table (Debian package sqlite3).
func labelLeafPage(t *testing.T, path string) int64 {
	t.Helper()
	out, err := exec.Command("sqlite3", path, "SELECT pageno FROM dbstat WHERE name = 'labels' AND pagetype = 'leaf' LIMIT 1 OFFSET 5").Output()
	if err != nil {
		t.Fatal("the sqlite3 tool (Debian package sqlite3, installed by make test-deps) is needed:", err)
	}
	n, err := strconv.ParseInt(strings.TrimSpace(string(out)), 10, 64)
	if err != nil {
		t.Fatalf("dbstat: %q: %v", out, err)
	}
	return n
}

// A read that meets a damaged page says which file is damaged and how to
// get the data back, not only SQLite's "database disk image is malformed"
// (the window showed that alone when the annotators' index was hit).
func TestReadOfDamagedPageNamesFileAndWayBack(t *testing.T) {
	path := projectWithLabels(t, 3000)
	overwritePage(t, path, labelLeafPage(t, path))
	ro, err := OpenReadOnly(path)
	if err != nil {
		t.Fatalf("OpenReadOnly: %v", err)
	}
	defer ro.Close()
	_, err = ro.Labels(bg, project.LabelFilter{})
	var de *DamagedError
	if !errors.As(err, &de) {
		t.Fatalf("Labels over a damaged page: %v (%T), want a DamagedError", err, err)
	}
	for _, want := range []string{path, "boxwright recover"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("message %q lacks %q", err, want)
		}
	}
}
