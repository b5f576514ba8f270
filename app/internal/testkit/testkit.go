// Package testkit holds fixtures that the tests of several app packages
// share: a small demo project and a sample exemplar on it. Only tests
// import it.
package testkit

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	_ "github.com/mattn/go-sqlite3"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/assets/demo"
	"boxwright/project"
)

// SmallDemo writes a three-image demo project into a temporary folder and
// returns the project file's path.
func SmallDemo(tb testing.TB) string {
	tb.Helper()
	dir := tb.TempDir()
	if err := ops.MakeDemo(context.Background(), dir, demo.Config{Seed: 7, Images: 3, Width: 640, Height: 480}, nil); err != nil {
		tb.Fatal(err)
	}
	return filepath.Join(dir, ops.DemoProjectName)
}

// Exemplar is one of Ines's sailboats on the demo, large enough to serve as
// the example of an exemplar search.
func Exemplar(t *testing.T, path string) (project.Image, project.Label) {
	t.Helper()
	s, err := backend.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ctx := context.Background()
	ims, _ := s.Images(ctx)
	ines, _ := s.AnnotatorByName(ctx, "Ines")
	boat, _ := s.ClassByName(ctx, "sailboat")
	for _, im := range ims {
		ls, _ := s.Labels(ctx, project.LabelFilter{ImageID: im.ID, AnnotatorID: ines.ID, ClassID: boat.ID})
		for _, l := range ls {
			if l.Box.Width() >= 16 && l.Box.Height() >= 16 {
				return im, l
			}
		}
	}
	t.Fatal("the demo has no sailboat of Ines to use as an example")
	return project.Image{}, project.Label{}
}

// DamagePage overwrites one page of the project file with garbage, as a
// failing disk would: the page is the n-th (from 0) of the b-tree named
// (a table or an index), found with the sqlite3 tool's dbstat table
// (Debian package sqlite3). It returns the file's bytes afterwards.
func DamagePage(tb testing.TB, path, btree string, n int) []byte {
	tb.Helper()
	out, err := exec.Command("sqlite3", path, fmt.Sprintf(
		"SELECT pageno FROM dbstat WHERE name = '%s' AND pagetype <> 'internal' LIMIT 1 OFFSET %d", btree, n)).Output()
	if err != nil {
		tb.Fatal("the sqlite3 tool (Debian package sqlite3) is needed:", err)
	}
	page, err := strconv.ParseInt(strings.TrimSpace(string(out)), 10, 64)
	if err != nil {
		tb.Fatalf("no page %d of %s: %q", n, btree, out)
	}
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	if _, err := f.WriteAt(bytes.Repeat([]byte{0xde, 0xad}, 2048), 4096*(page-1)); err != nil {
		tb.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	return b
}
