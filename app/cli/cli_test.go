package cli

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image"
	"image/jpeg"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/ops"
)

// cli runs a command line and returns its exit status, stdout and stderr.
func cli(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := Run(args, &out, &errb, noWindow)
	return code, out.String(), errb.String()
}

// noWindow stands in for the window, which no command-line test opens.
func noWindow(path, annotator string, stderr io.Writer) int {
	fmt.Fprintf(stderr, "a test tried to open the window on %q\n", path)
	return 1
}

func mustCLI(t *testing.T, args ...string) string {
	t.Helper()
	code, out, errs := cli(t, args...)
	if code != 0 {
		t.Fatalf("boxwright %s: exit %d, stderr %s", strings.Join(args, " "), code, errs)
	}
	return out
}

func TestCommandLineRoundTrip(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "survey.boxw")
	mustCLI(t, "new", p)
	if code, _, errs := cli(t, "new", p); code == 0 || !strings.Contains(errs, "already exists") {
		t.Errorf("new over an existing project: exit %d, %q", code, errs)
	}

	imgs := filepath.Join(dir, "pics")
	os.MkdirAll(imgs, 0o755)
	for i, size := range []int{30, 40} {
		f, _ := os.Create(filepath.Join(imgs, "p"+string(rune('0'+i))+".jpg"))
		jpeg.Encode(f, image.NewGray(image.Rect(0, 0, size, size/2)), nil)
		f.Close()
	}
	os.WriteFile(filepath.Join(imgs, "broken.png"), []byte("nope"), 0o644)
	var rep struct {
		Added, Duplicates, Relinked int
		Failed                      []struct{ Path, Error string }
	}
	if err := json.Unmarshal([]byte(mustCLI(t, "add-images", p, imgs, "--json")), &rep); err != nil {
		t.Fatal(err)
	}
	if rep.Added != 2 || rep.Duplicates != 0 || len(rep.Failed) != 1 || !strings.HasSuffix(rep.Failed[0].Path, "broken.png") || rep.Failed[0].Error == "" {
		t.Errorf("add-images report %+v", rep)
	}
	json.Unmarshal([]byte(mustCLI(t, "add-images", "--json", p, imgs)), &rep)
	if rep.Added != 0 || rep.Duplicates != 2 {
		t.Errorf("second add-images %+v", rep)
	}

	mustCLI(t, "classes", p, "add", "kayak", "buoy", "canoe")
	mustCLI(t, "classes", p, "rename", "canoe", "dinghy")
	mustCLI(t, "classes", p, "merge", "dinghy", "kayak")
	if code, _, errs := cli(t, "classes", p, "rename", "nothing", "x"); code != 1 || !strings.Contains(errs, "not found") {
		t.Errorf("rename of a missing class: %d %q", code, errs)
	}
	var classes []struct {
		Name, Color, Key string
		Labels           int
	}
	json.Unmarshal([]byte(mustCLI(t, "classes", p, "list", "--json")), &classes)
	if len(classes) != 2 || classes[0].Name != "kayak" || classes[1].Name != "buoy" || classes[0].Key != "1" || !strings.HasPrefix(classes[0].Color, "#") {
		t.Errorf("classes %+v", classes)
	}

	var info map[string]any
	if err := json.Unmarshal([]byte(mustCLI(t, "info", p, "--json")), &info); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"images", "classes", "annotators", "labels", "suggestions", "images_by_status"} {
		if _, ok := info[k]; !ok {
			t.Errorf("info --json lacks %q: %v", k, info)
		}
	}
	if info["images"].(float64) != 2 || info["images_by_status"].(map[string]any)["new"].(float64) != 2 {
		t.Errorf("info %v", info)
	}
	if s := info["suggestions"].(map[string]any); len(s) != 4 {
		t.Errorf("suggestions by state %v", s)
	}

	var images []map[string]any
	json.Unmarshal([]byte(mustCLI(t, "images", p, "--json")), &images)
	if len(images) != 2 || images[0]["path"] != "pics/p0.jpg" || images[0]["width"].(float64) != 30 || images[1]["height"].(float64) != 20 ||
		images[0]["orientation"].(float64) != 1 || len(images[0]["sha256"].(string)) != 64 || images[0]["status"] != "new" {
		t.Errorf("images %v", images)
	}
	if !strings.Contains(mustCLI(t, "info", p), "images: 2") {
		t.Errorf("text info lacks the image count")
	}
}

func TestCommandLineErrors(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"frobnicate"}, 2, "unknown command"},
		{[]string{"info"}, 2, "usage: boxwright info"},
		{[]string{"info", filepath.Join(dir, "none.boxw")}, 1, "no such project file"},
		{[]string{"new", filepath.Join(dir, "x.txt")}, 1, "should end in .boxw"},
		{[]string{"classes", filepath.Join(dir, "none.boxw"), "list"}, 1, "no such project file"},
		{[]string{"add-images", "--max-megapixels", "0", "a.boxw", "b"}, 2, "give a number above 0"},
		{[]string{"images", "--bogus", "p.boxw"}, 2, "flag provided but not defined"},
		{[]string{"import", "--map", "boat", "p.boxw", "f.json"}, 2, "--map wants FROM=TO"},
		{[]string{"import", "p.boxw", "f.json"}, 2, "--layout is required"},
		{[]string{"export", "p.boxw", "--layout", "json"}, 2, "--layout, --annotator and --out are required"},
		{[]string{"export", "p.boxw", "--layout", "json", "--annotator", "a", "--out", "o", "--split", "80/30/10"}, 2, "--split"},
		{[]string{"export", "p.boxw", "--layout", "json", "--annotator", "a", "--out", "o", "--images", "move"}, 2, "use copy, link or none"},
		{[]string{"export", "p.boxw", "--layout", "csv", "--annotator", "a", "--out", "o"}, 2, "use json"},
		{[]string{"agree", "p.boxw", "--annotators", "Ines"}, 2, "at least two annotators"},
		{[]string{"agree", "p.boxw", "--annotators", "Ines,Ines"}, 2, "names \"Ines\" twice"},
		{[]string{"consensus", "p.boxw", "--annotators", "Ines,Tomas,Ines"}, 2, "twice"},
	}
	for _, c := range cases {
		code, _, errs := cli(t, c.args...)
		if code != c.code || !strings.Contains(errs, c.want) {
			t.Errorf("boxwright %s: exit %d, stderr %q; want exit %d mentioning %q", strings.Join(c.args, " "), code, errs, c.code, c.want)
		}
	}
	notProject := filepath.Join(dir, "fake.boxw")
	os.WriteFile(notProject, bytes.Repeat([]byte("plain text\n"), 100), 0o644)
	if code, _, errs := cli(t, "info", notProject); code != 1 || !strings.Contains(errs, "not a Boxwright project") {
		t.Errorf("info on a text file: %d %q", code, errs)
	}
	p := filepath.Join(dir, "p.boxw")
	mustCLI(t, "new", p)
	mustCLI(t, "classes", p, "add", "buoy")
	if code, _, errs := cli(t, "classes", p, "add", "buoy"); code != 1 || !strings.Contains(errs, "already exists") {
		t.Errorf("duplicate class: %d %q", code, errs)
	}
	if code, out, _ := cli(t, "help"); code != 0 || !strings.Contains(out, "add-images") {
		t.Errorf("help: %d", code)
	}
}

func TestDemoCommandWritesProject(t *testing.T) {
	dir := t.TempDir()
	out := mustCLI(t, "demo", dir, "--no-open", "--images", "2", "--seed", "3")
	if !strings.Contains(out, ops.DemoProjectName) {
		t.Errorf("demo output %q", out)
	}
	var info struct {
		Images      int
		Labels      int
		Annotators  []struct{ Name string }
		Classes     []struct{ Name string }
		Suggestions map[string]int
	}
	json.Unmarshal([]byte(mustCLI(t, "info", filepath.Join(dir, ops.DemoProjectName), "--json")), &info)
	if info.Images != 2 || info.Labels == 0 || len(info.Annotators) != 2 || len(info.Classes) != 4 || info.Suggestions["pending"] == 0 {
		t.Errorf("demo project: %+v", info)
	}
	// Asking again reuses the project instead of failing or overwriting.
	if code, _, errs := cli(t, "demo", dir, "--no-open"); code != 0 || !strings.Contains(errs, "already exists") {
		t.Errorf("second demo: %d %q", code, errs)
	}
	// A folder with other files in it is refused, and they stay as they
	// were.
	busy := t.TempDir()
	mine := filepath.Join(busy, "images", "harbour-001.jpg")
	os.MkdirAll(filepath.Dir(mine), 0o755)
	os.WriteFile(mine, []byte("my own photo"), 0o644)
	if code, _, errs := cli(t, "demo", busy, "--no-open", "--images", "2"); code != 1 || !strings.Contains(errs, "not empty") {
		t.Errorf("demo into a used folder: %d %q", code, errs)
	}
	if b, _ := os.ReadFile(mine); string(b) != "my own photo" {
		t.Errorf("the demo overwrote a file that was there: %q", b)
	}
}

func TestRelinkCommandFindsMovedImages(t *testing.T) {
	dir := t.TempDir()
	mustCLI(t, "demo", dir, "--no-open", "--images", "2")
	p := filepath.Join(dir, ops.DemoProjectName)
	moved := filepath.Join(t.TempDir(), "elsewhere")
	if err := os.Rename(filepath.Join(dir, "images"), moved); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(mustCLI(t, "info", p), "missing files: 2") {
		t.Errorf("info does not report the missing files")
	}
	var rep struct {
		Relinked     int `json:"relinked"`
		StillMissing int `json:"still_missing"`
	}
	json.Unmarshal([]byte(mustCLI(t, "relink", p, moved, "--json")), &rep)
	if rep.Relinked != 2 || rep.StillMissing != 0 {
		t.Errorf("relink %+v", rep)
	}
}

// Only new makes a project: info, add-images and import refuse an empty
// file by name and leave it empty.
// noBareKind fails when a message that already says what is wrong ends in
// the bare name of its kind of error (": invalid"), which tells a person
// nothing more.
func noBareKind(t *testing.T, msg string) {
	t.Helper()
	for _, kind := range []string{": invalid", ": not a Boxwright project", ": already exists"} {
		if strings.HasSuffix(strings.TrimSpace(msg), kind) && len(msg) > 80 {
			t.Errorf("message ends in %q: %s", kind, msg)
		}
	}
}

func TestEmptyFileIsNoProject(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty.boxw")
	os.WriteFile(empty, nil, 0o644)
	for _, args := range [][]string{
		{"info", empty},
		{"add-images", empty, dir},
		{"import", empty, filepath.Join(dir, "labels.json"), "--layout", "json", "--annotator", "Ines"},
	} {
		code, _, errs := cli(t, args...)
		if code != 1 || !strings.Contains(errs, "empty") || !strings.Contains(errs, "boxwright new") {
			t.Errorf("boxwright %s: exit %d, %q", strings.Join(args, " "), code, errs)
		}
		noBareKind(t, errs)
	}
	if st, err := os.Stat(empty); err != nil || st.Size() != 0 {
		t.Errorf("the empty file was changed: %v", err)
	}
}

// A window that cannot open says why itself; the command adds no second
// line and exits 1, not 2 (which means a mistyped command line).
func TestOpenWithoutWindowSaysOneLine(t *testing.T) {
	p := filepath.Join(t.TempDir(), "one.boxw")
	mustCLI(t, "new", p)
	var out, errb bytes.Buffer
	code := Run([]string{"open", p}, &out, &errb, noWindow)
	if code != 1 || strings.Count(strings.TrimSpace(errb.String()), "\n") != 0 || !strings.Contains(errb.String(), "a test tried to open") {
		t.Errorf("exit %d, stderr %q", code, errb.String())
	}
}
