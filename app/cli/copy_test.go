package cli

import (
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
	"boxwright/store/postgres/pgtest"
)

// agreeOf is `agree --json` of the demo's annotators with the images
// named by base name (each copy keeps the files elsewhere).
func agreeOf(t *testing.T, project string) string {
	t.Helper()
	out := mustCLI(t, "agree", project, "--annotators", "Ines,Tomas", "--json")
	return regexp.MustCompile(`"image": "[^"]*/`).ReplaceAllString(out, `"image": "`)
}

// infoOf is `info --json` without what names the project's place.
func infoOf(t *testing.T, project string) string {
	t.Helper()
	return regexp.MustCompile(`"schema_version": \d+`).ReplaceAllString(mustCLI(t, "info", project, "--json"), "")
}

// boxwright copy moves the demo file → server → file: `agree --json` and
// `info --json` are the same on the original and both copies, each stage
// reports its progress on stderr, and a target that exists is refused
// before anything is written.
func TestCopyCommand(t *testing.T) {
	t.Setenv("XDG_CACHE_HOME", t.TempDir())
	orig := testkit.SmallDemo(t)
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(t, "postgres", `CREATE DATABASE harbour OWNER olga`)
	url := srv.URL("olga", "olga-pw", "harbour")

	code, out, errs := cli(t, "copy", orig, url)
	if code != 0 {
		t.Fatalf("copy to the server: exit %d, %s", code, errs)
	}
	for _, stage := range []string{"classes 4 / 4", "images 3 / 3", "labels ", "suggestions ", "statuses 2 / 2"} {
		if !strings.Contains(errs, stage) {
			t.Errorf("no progress line %q on stderr:\n%s", stage, errs)
		}
	}
	if !strings.Contains(out, "3 images") || strings.Contains(out+errs, "olga-pw") {
		t.Errorf("copy printed:\n%s%s", out, errs)
	}
	back := filepath.Join(t.TempDir(), "snapshot.boxw")
	mustCLI(t, "copy", url, back)
	if _, err := os.Stat(filepath.Join(filepath.Dir(back), "snapshot-images")); err != nil {
		t.Errorf("no image folder beside the snapshot: %v", err)
	}
	want := agreeOf(t, orig)
	if !strings.Contains(want, `"krippendorff_alpha"`) {
		t.Fatalf("agree printed %s", want)
	}
	for _, p := range []string{url, back} {
		if got := agreeOf(t, p); got != want {
			t.Errorf("agree --json on %s differs:\n%s\noriginal:\n%s", p, got, want)
		}
		if got, w := infoOf(t, p), infoOf(t, orig); got != w {
			t.Errorf("info --json on %s differs:\n%s\noriginal:\n%s", p, got, w)
		}
	}

	// A target that exists: refused, untouched.
	if code, _, errs := cli(t, "copy", orig, back); code != 1 || !strings.Contains(errs, "already exists") {
		t.Errorf("copy onto an existing file: exit %d, %s", code, errs)
	}
	if code, _, errs := cli(t, "copy", orig, url); code != 1 || !strings.Contains(errs, "already holds a Boxwright project") {
		t.Errorf("copy onto an existing server project: exit %d, %s", code, errs)
	}
	if got := agreeOf(t, url); got != want {
		t.Error("a refused copy changed the server project")
	}
}

func TestCopyUsage(t *testing.T) {
	for _, args := range [][]string{{"copy"}, {"copy", "a.boxw"}, {"copy", "a.boxw", "b.boxw", "c.boxw"}, {"copy", "a.boxw", "b.boxw", "--fast"}} {
		if code, _, errs := cli(t, args...); code != 2 || !strings.Contains(errs, "usage: boxwright copy FROM TO") {
			t.Errorf("%v: exit %d, %q", args, code, errs)
		}
	}
	dir := t.TempDir()
	if code, _, errs := cli(t, "copy", filepath.Join(dir, "none.boxw"), filepath.Join(dir, "b.boxw")); code != 1 || errs == "" {
		t.Errorf("copy of a project that does not exist: exit %d, %q", code, errs)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("a failed copy wrote %v", entries)
	}
	if code, _, errs := cli(t, "copy", testkit.SmallDemo(t), filepath.Join(dir, "b.txt")); code != 1 || !strings.Contains(errs, ".boxw") {
		t.Errorf("copy to a file without .boxw: exit %d, %q", code, errs)
	}
}
