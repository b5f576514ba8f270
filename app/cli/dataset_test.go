package cli

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/store"
)

// boxesOf lists an annotator's boxes per image file content (SHA-256),
// with class names, sorted, so that two projects can be compared.
func boxesOf(t *testing.T, path, annotator string) map[string][]string {
	t.Helper()
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ctx := context.Background()
	a, err := s.AnnotatorByName(ctx, annotator)
	if err != nil {
		t.Fatal(err)
	}
	cs, _ := s.Classes(ctx)
	names := map[int64]string{}
	for _, c := range cs {
		names[c.ID] = c.Name
	}
	ims, _ := s.Images(ctx)
	out := map[string][]string{}
	for _, im := range ims {
		ls, _ := s.Labels(ctx, project.LabelFilter{ImageID: im.ID, AnnotatorID: a.ID})
		for _, l := range ls {
			// Rounded to 1e-9 px: the round trip must agree to that.
			r := func(v float64) float64 { return math.Round(v*1e9) / 1e9 }
			out[im.SHA256] = append(out[im.SHA256], names[l.ClassID]+" "+project.Box{X0: r(l.Box.X0), Y0: r(l.Box.Y0), X1: r(l.Box.X1), Y1: r(l.Box.Y1)}.String())
		}
		sort.Strings(out[im.SHA256])
	}
	return out
}

// Export → import into a fresh project → export → import gives the same
// boxes in every layout, on generated demo data.
func TestExportImportRoundTrip(t *testing.T) {
	dir := t.TempDir()
	mustCLI(t, "demo", dir, "--no-open", "--images", "4", "--seed", "5")
	src := filepath.Join(dir, ops.DemoProjectName)
	want := boxesOf(t, src, "Tomas")
	for _, layout := range []string{"json", "xml", "txt"} {
		t.Run(layout, func(t *testing.T) {
			work := t.TempDir()
			out1 := filepath.Join(work, "out1")
			mustCLI(t, "export", src, "--layout", layout, "--annotator", "Tomas", "--out", out1, "--split", "50/25/25", "--images", "copy")
			p2 := filepath.Join(work, "again.boxw")
			mustCLI(t, "new", p2)
			for _, split := range []string{"train", "val", "test"} {
				var label string
				switch layout {
				case "json":
					label = filepath.Join(out1, split, "annotations.json")
				case "xml":
					label = filepath.Join(out1, split, "annotations")
				case "txt":
					label = filepath.Join(out1, split, "labels")
				}
				var rep struct {
					Labels    int      `json:"labels"`
					Unmatched []string `json:"unmatched"`
				}
				args := []string{"import", p2, "--layout", layout, "--annotator", "Tomas", label, "--images", filepath.Join(out1, split, "images"), "--create-classes", "--json"}
				if layout == "txt" {
					args = append(args, "--classes", filepath.Join(out1, "classes.txt"))
				}
				if err := json.Unmarshal([]byte(mustCLI(t, args...)), &rep); err != nil {
					t.Fatal(err)
				}
				if len(rep.Unmatched) != 0 {
					t.Errorf("%s: unmatched %v", split, rep.Unmatched)
				}
			}
			got := boxesOf(t, p2, "Tomas")
			if len(got) != len(want) {
				t.Fatalf("%d images with boxes after the round trip, want %d", len(got), len(want))
			}
			for k, w := range want {
				g := got[k]
				if len(g) != len(w) {
					t.Errorf("image %.8s: %d boxes, want %d", k, len(g), len(w))
					continue
				}
				for i := range w {
					if g[i] != w[i] {
						t.Errorf("image %.8s: box %q, want %q", k, g[i], w[i])
					}
				}
			}
		})
	}
}

// A failed export (an image file gone) names the image and what to do and
// leaves nothing; an unfinished export's folder beside the target (from a
// crash) does not stop the retry, which writes the whole export into the
// same, empty, folder.
func TestExportFailureLeavesNothingAndRetryWorks(t *testing.T) {
	dir := t.TempDir()
	mustCLI(t, "demo", dir, "--no-open", "--images", "4", "--seed", "5")
	src := filepath.Join(dir, ops.DemoProjectName)
	imgs, _ := filepath.Glob(filepath.Join(dir, "images", "*"))
	if len(imgs) == 0 {
		t.Fatal("the demo wrote no images")
	}
	sort.Strings(imgs)
	gone := imgs[len(imgs)-1]
	if err := os.Rename(gone, gone+".away"); err != nil {
		t.Fatal(err)
	}
	work := t.TempDir()
	out := filepath.Join(work, "out")
	if err := os.Mkdir(out, 0o755); err != nil {
		t.Fatal(err)
	}
	// What a killed export leaves: no owner file, so it is not ours to remove.
	stale := filepath.Join(work, ".out.boxwright-partial-123")
	os.MkdirAll(filepath.Join(stale, "train"), 0o755)
	os.WriteFile(filepath.Join(stale, "train", "annotations.json"), []byte(`{"images": [`), 0o644)
	args := []string{"export", src, "--layout", "json", "--annotator", "Tomas", "--out", out, "--images", "copy"}
	code, _, errs := cli(t, args...)
	if code != 1 {
		t.Fatalf("export without an image file: exit %d, %s", code, errs)
	}
	for _, part := range []string{filepath.Base(gone), gone, "no such file", "restore", "--images none", "nothing was written"} {
		if !strings.Contains(errs, part) {
			t.Errorf("message lacks %q: %s", part, errs)
		}
	}
	if entries, _ := os.ReadDir(out); len(entries) != 0 {
		t.Errorf("the failed export left %v in %s", entries, out)
	}
	if entries, _ := os.ReadDir(work); len(entries) != 2 {
		t.Errorf("the failed export left %v beside the target", entries)
	}
	os.Rename(gone+".away", gone)
	stdout := mustCLI(t, args...)
	if !strings.Contains(stdout, "left "+stale+" alone") {
		t.Errorf("the unfinished folder beside is not named:\n%s", stdout)
	}
	var rep struct {
		Splits []struct{ Images int } `json:"splits"`
	}
	b, err := os.ReadFile(filepath.Join(out, "report.json"))
	if err != nil || json.Unmarshal(b, &rep) != nil {
		t.Fatalf("report.json: %v %s", err, b)
	}
	n := 0
	for _, s := range rep.Splits {
		n += s.Images
	}
	copied, _ := filepath.Glob(filepath.Join(out, "*", "images", "*"))
	if n == 0 || len(copied) != n {
		t.Errorf("report counts %d images, %d copied", n, len(copied))
	}
	if _, err := os.Stat(filepath.Join(stale, "train", "annotations.json")); err != nil {
		t.Errorf("the unfinished folder was touched: %v", err)
	}
}
