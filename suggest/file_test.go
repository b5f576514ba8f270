package suggest

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
)

// Invented project for the file-source tests.
var (
	testImages = []project.Image{
		{ID: 1, Path: "imgs/a.jpg", Width: 640, Height: 480},
		{ID: 2, Path: "data/x/c.jpg", Width: 100, Height: 100},
		{ID: 3, Path: "data/y/c.jpg", Width: 100, Height: 100},
		{ID: 4, Path: "imgs/sub/d.png", Width: 200, Height: 100},
	}
	testClasses = []project.Class{{ID: 3, Name: "cat"}, {ID: 7, Name: "dog"}}
)

func writeFile(t *testing.T, dir, name, data string) string {
	t.Helper()
	p := filepath.Join(dir, filepath.FromSlash(name))
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestParseLayout(t *testing.T) {
	for in, want := range map[string]PredictionLayout{"json": PredictionJSON, " TXT ": PredictionText, "csv": PredictionCSV} {
		if got, err := ParsePredictionLayout(in); err != nil || got != want {
			t.Errorf("ParsePredictionLayout(%q) = %q, %v", in, got, err)
		}
	}
	if _, err := ParsePredictionLayout("xml"); err == nil || !strings.Contains(err.Error(), "json, txt or csv") {
		t.Errorf("ParsePredictionLayout(xml) error = %v", err)
	}
}

// TestFileSourceJSON resolves images by ID, exact path, path suffix and
// unique base name, and classes by ID, by name and not at all.
func TestFileSourceJSON(t *testing.T) {
	p := writeFile(t, t.TempDir(), "detector-v7.json", `[
 {"image_id": 1, "category_id": 7, "bbox": [10, 20, 30, 40], "score": 0.9},
 {"file_name": "imgs/a.jpg", "category": "cat", "bbox": [600, 400, 100, 100], "score": 0.5},
 {"file_name": "x/c.jpg", "category": "bird", "bbox": [0, 0, 5, 5], "score": 0.25},
 {"file_name": "d.png", "category": "dog", "bbox": [-10, 10, 20, 20], "score": 1},
 {"file_name": "elsewhere\\sub\\d.png", "category": "cat", "bbox": [1, 1, 1, 1], "score": 0}
]`)
	f := &FileSource{Layout: PredictionJSON, Path: p}
	var last [2]int
	got, err := f.Suggest(context.Background(), testImages, testClasses, func(d, n int) { last = [2]int{d, n} })
	if err != nil {
		t.Fatal(err)
	}
	want := []Proposal{
		{ImageID: 1, ClassID: 7, ClassName: "dog", Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.9, Where: "detector-v7.json: [0]"},
		// [600,700]x[400,500] clipped to the 640x480 image.
		{ImageID: 1, ClassID: 3, ClassName: "cat", Box: project.Box{X0: 600, Y0: 400, X1: 640, Y1: 480}, Score: 0.5, Where: "detector-v7.json: [1]"},
		{ImageID: 2, ClassID: 0, ClassName: "bird", Box: project.Box{X0: 0, Y0: 0, X1: 5, Y1: 5}, Score: 0.25, Where: "detector-v7.json: [2]"},
		// [-10,10] clipped to [0,10].
		{ImageID: 4, ClassID: 7, ClassName: "dog", Box: project.Box{X0: 0, Y0: 10, X1: 10, Y1: 30}, Score: 1, Where: "detector-v7.json: [3]"},
		{ImageID: 4, ClassID: 3, ClassName: "cat", Box: project.Box{X0: 1, Y0: 1, X1: 2, Y1: 2}, Score: 0, Where: "detector-v7.json: [4]"},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d proposals: %+v", len(got), got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("proposal %d = %+v, want %+v", i, got[i], want[i])
		}
	}
	if f.Clipped() != 2 {
		t.Errorf("Clipped = %d, want 2", f.Clipped())
	}
	if f.Name() != "detector-v7" || (&FileSource{Source: "m1", Path: p}).Name() != "m1" {
		t.Errorf("Name = %q", f.Name())
	}
	if last != [2]int{4, 4} {
		t.Errorf("last progress = %v, want [4 4]", last)
	}
}

// TestFileSourceErrors checks that each bad record fails the whole read
// with its position.
func TestFileSourceErrors(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		name, data, msg string
	}{
		{"unknown id", `[{"image_id": 1, "category": "cat", "bbox": [1,1,1,1], "score": 0.5},
 {"image_id": 9, "category": "cat", "bbox": [1,1,1,1], "score": 0.5}]`, "p.json: [1]: image_id 9 is not in the project"},
		{"unknown name", `[{"file_name": "zz.jpg", "category": "cat", "bbox": [1,1,1,1], "score": 0.5}]`, `p.json: [0]: image "zz.jpg" is not in the project`},
		{"ambiguous", `[{"file_name": "c.jpg", "category": "cat", "bbox": [1,1,1,1], "score": 0.5}]`, `p.json: [0]: image "c.jpg" matches more than one project image: data/x/c.jpg and data/y/c.jpg`},
		{"ambiguous deeper", `[{"file_name": "z/c.jpg", "category": "cat", "bbox": [1,1,1,1], "score": 0.5}]`, "data/x/c.jpg and data/y/c.jpg"},
		{"unknown category id", `[{"image_id": 1, "category_id": 4, "bbox": [1,1,1,1], "score": 0.5}]`, "p.json: [0]: category_id 4 is not a class of the project"},
		{"outside", `[{"image_id": 2, "category": "cat", "bbox": [100, 0, 5, 5], "score": 0.5}]`, "p.json: [0]: box [100,0,105,5] lies entirely outside the 100x100 image data/x/c.jpg"},
		{"bad file", `[{"image_id": 2, "category": "cat", "bbox": [1, 0, 5, 5], "score": 2}]`, "p.json:1: [0].score: must be between 0 and 1"},
	}
	for _, c := range cases {
		p := writeFile(t, dir, "p.json", c.data)
		got, err := (&FileSource{Layout: PredictionJSON, Path: p}).Suggest(context.Background(), testImages, testClasses, nil)
		if err == nil || !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.msg)
		}
		if got != nil {
			t.Errorf("%s: proposals returned with the error", c.name)
		}
	}
}

func TestFileSourceCSV(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "preds.csv", "image,class,x0,y0,x1,y1,score\nimgs/a.jpg,cat,10,20,40,60,0.9\ny/c.jpg,fox,1,2,3,4,0.1\n")
	f := &FileSource{Source: "csv-model", Layout: PredictionCSV, Path: p}
	got, err := f.Suggest(context.Background(), testImages, testClasses, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := []Proposal{
		{ImageID: 1, ClassID: 3, ClassName: "cat", Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.9, Where: "preds.csv:2"},
		{ImageID: 3, ClassName: "fox", Box: project.Box{X0: 1, Y0: 2, X1: 3, Y1: 4}, Score: 0.1, Where: "preds.csv:3"},
	}
	if len(got) != 2 || got[0] != want[0] || got[1] != want[1] {
		t.Errorf("got %+v, want %+v", got, want)
	}
	bad := writeFile(t, dir, "bad.csv", "image,class,x0,y0,x1,y1,score\nimgs/a.jpg,cat,10,20,40,60,0.9\nq.jpg,cat,1,2,3,4,0.1\n")
	if _, err := (&FileSource{Layout: PredictionCSV, Path: bad}).Suggest(context.Background(), testImages, testClasses, nil); err == nil ||
		!strings.Contains(err.Error(), `bad.csv:3: image "q.jpg" is not in the project`) {
		t.Errorf("error = %v", err)
	}
	if _, err := (&FileSource{Layout: PredictionCSV, Path: dir}).Suggest(context.Background(), testImages, testClasses, nil); err == nil {
		t.Error("a folder was read as a CSV file")
	}
}

// TestFileSourceText reads a label folder. On the 640x480 image the line
// "0 0.5 0.5 0.25 0.5" is Box{240,120,400,360} (the worked example of
// project/formats' centre-normalised conversion).
func TestFileSourceText(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "classes.txt", "cat\ndog\nowl\n")
	writeFile(t, dir, "imgs/a.txt", "0 0.5 0.5 0.25 0.5 0.75\n2 0.5 0.5 0.25 0.5 0.5\n")
	// 200x100: cx 0.95 w 0.2 spans 170..210, clipped to 200.
	writeFile(t, dir, "sub/d.txt", "1 0.95 0.5 0.2 0.2 1\n")
	f := &FileSource{Layout: PredictionText, Path: dir}
	var calls int
	got, err := f.Suggest(context.Background(), testImages, testClasses, func(d, n int) { calls++ })
	if err != nil {
		t.Fatal(err)
	}
	want := []Proposal{
		{ImageID: 1, ClassID: 3, ClassName: "cat", Box: project.Box{X0: 240, Y0: 120, X1: 400, Y1: 360}, Score: 0.75, Where: "imgs/a.txt:1"},
		{ImageID: 1, ClassName: "owl", Box: project.Box{X0: 240, Y0: 120, X1: 400, Y1: 360}, Score: 0.5, Where: "imgs/a.txt:2"},
		{ImageID: 4, ClassID: 7, ClassName: "dog", Box: project.Box{X0: 170, Y0: 40, X1: 200, Y1: 60}, Score: 1, Where: "sub/d.txt:1"},
	}
	if len(got) != len(want) {
		t.Fatalf("got %+v", got)
	}
	for i := range want {
		g := got[i]
		if g.ImageID != want[i].ImageID || g.ClassID != want[i].ClassID || g.ClassName != want[i].ClassName ||
			g.Score != want[i].Score || g.Where != want[i].Where || !boxNear(g.Box, want[i].Box) {
			t.Errorf("proposal %d = %+v, want %+v", i, g, want[i])
		}
	}
	if f.Clipped() != 1 || calls < 2 {
		t.Errorf("Clipped = %d, progress calls %d", f.Clipped(), calls)
	}

	// ImageSize overrides the project's sizes: a 1000x1000 image.
	f.ImageSize = func(name string) (int, int, bool) { return 1000, 1000, name == "imgs/a.jpg" }
	got, err = f.Suggest(context.Background(), testImages, testClasses, nil)
	if err != nil || !boxNear(got[0].Box, project.Box{X0: 375, Y0: 250, X1: 625, Y1: 750}) {
		t.Errorf("with ImageSize: %+v, %v", got, err)
	}

	writeFile(t, dir, "none/q.txt", "0 0.5 0.5 0.1 0.1 0.5\n")
	if _, err := (&FileSource{Layout: PredictionText, Path: dir}).Suggest(context.Background(), testImages, testClasses, nil); err == nil ||
		!strings.Contains(err.Error(), "none/q.txt: has no image in the project") {
		t.Errorf("unmatched label file: %v", err)
	}
	os.Remove(filepath.Join(dir, "none", "q.txt"))
	writeFile(t, dir, "imgs/a.txt", "0 0.5 0.5 0.25 0.5 0.75\n0 0.5 0.5 0.25 0.5\n")
	if _, err := (&FileSource{Layout: PredictionText, Path: dir}).Suggest(context.Background(), testImages, testClasses, nil); err == nil ||
		!strings.Contains(err.Error(), "imgs/a.txt:2: score: ") {
		t.Errorf("line without score: %v", err)
	}
}

func boxNear(a, b project.Box) bool {
	const tol = 1e-9
	d := func(x, y float64) bool { return x-y <= tol && y-x <= tol }
	return d(a.X0, b.X0) && d(a.Y0, b.Y0) && d(a.X1, b.X1) && d(a.Y1, b.Y1)
}

func TestFileSourceCancelled(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "p.csv", "image,class,x0,y0,x1,y1,score\nimgs/a.jpg,cat,10,20,40,60,0.9\n")
	writeFile(t, dir, "classes.txt", "cat\n")
	writeFile(t, dir, "imgs/a.txt", "0 0.5 0.5 0.25 0.5 0.75\n")
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	for _, f := range []*FileSource{{Layout: PredictionCSV, Path: p}, {Layout: PredictionText, Path: dir}} {
		got, err := f.Suggest(ctx, testImages, testClasses, nil)
		if !errors.Is(err, context.Canceled) || got != nil {
			t.Errorf("%s: %v, %v; want context.Canceled", f.Layout, got, err)
		}
	}
}
