package cli

import (
	"encoding/json"
	"fmt"
	"image"
	"image/jpeg"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
)

// An import is one unit: when its labels fail, the images --images added
// are taken back, and records whose image is not in the project fail it
// unless --skip-unmatched lists them.
func TestImportIsOneUnit(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "p.boxw")
	mustCLI(t, "new", p)
	mustCLI(t, "classes", p, "add", "buoy")
	imgs := filepath.Join(dir, "pics")
	os.MkdirAll(imgs, 0o755)
	for _, n := range []string{"a.jpg", "b.jpg"} {
		f, _ := os.Create(filepath.Join(imgs, n))
		jpeg.Encode(f, image.NewGray(image.Rect(0, 0, 40, 30)), nil)
		f.Close()
	}
	labels := filepath.Join(dir, "l.json")
	write := func(body string) { os.WriteFile(labels, []byte(body), 0o644) }
	// The second box names a class the project lacks: the import fails.
	write(`{"images":[{"id":1,"file_name":"a.jpg","width":40,"height":30}],"categories":[{"id":1,"name":"buoy"},{"id":2,"name":"yacht"}],
		"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[1,1,5,5]},{"id":2,"image_id":1,"category_id":2,"bbox":[1,1,5,5]}]}`)
	code, _, errs := cli(t, "import", p, "--layout", "json", "--annotator", "Omar", "--images", imgs, labels)
	if code != 1 || !strings.Contains(errs, "taken back") {
		t.Fatalf("failed import: exit %d, %q; want the added images said to be taken back", code, errs)
	}
	if out := mustCLI(t, "images", p); strings.TrimSpace(out) != "" && strings.Contains(out, "a.jpg") {
		t.Fatalf("a failed import left images:\n%s", out)
	}
	if out := mustCLI(t, "info", p); !strings.Contains(out, "images: 0") {
		t.Fatalf("info after the failed import:\n%s", out)
	}

	// A record whose image is not in the project fails the import...
	mustCLI(t, "add-images", p, imgs)
	write(`{"images":[{"id":1,"file_name":"a.jpg","width":40,"height":30},{"id":2,"file_name":"zz.jpg","width":40,"height":30}],"categories":[{"id":1,"name":"buoy"}],
		"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[1,1,5,5]},{"id":2,"image_id":2,"category_id":1,"bbox":[1,1,5,5]}]}`)
	code, _, errs = cli(t, "import", p, "--layout", "json", "--annotator", "Omar", labels)
	if code != 1 || !strings.Contains(errs, "zz.jpg") || !strings.Contains(errs, "--skip-unmatched") {
		t.Fatalf("import with a record of no image: exit %d, %q", code, errs)
	}
	noBareKind(t, errs)
	if out := mustCLI(t, "info", p); strings.Contains(out, "Omar") {
		t.Fatalf("the failed import created the annotator:\n%s", out)
	}
	// ...and --skip-unmatched imports the rest, naming every skipped one.
	out := mustCLI(t, "import", p, "--layout", "json", "--annotator", "Omar", "--skip-unmatched", labels)
	if !strings.Contains(out, "imported 1 label on") || !strings.Contains(out, "zz.jpg") {
		t.Fatalf("--skip-unmatched: %q", out)
	}
}

// An annotator's export claims "checked and empty" only for images that
// annotator marked: importing two labels as a new annotator exports the
// two images, not the ones others reviewed.
func TestExportUsesTheAnnotatorsOwnStatus(t *testing.T) {
	path := testkit.SmallDemo(t)
	var ims []struct {
		Path          string
		Width, Height int
	}
	if err := json.Unmarshal([]byte(mustCLI(t, "images", path, "--json")), &ims); err != nil {
		t.Fatal(err)
	}
	labels := filepath.Join(t.TempDir(), "omar.json")
	body := fmt.Sprintf(`{"images":[{"id":1,"file_name":%q,"width":%d,"height":%d},{"id":2,"file_name":%q,"width":%d,"height":%d}],
		"categories":[{"id":1,"name":"buoy"}],
		"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[1,1,9,9]},{"id":2,"image_id":2,"category_id":1,"bbox":[2,2,9,9]}]}`,
		ims[1].Path, ims[1].Width, ims[1].Height, ims[2].Path, ims[2].Width, ims[2].Height) // the demo's first image is done by others
	os.WriteFile(labels, []byte(body), 0o644)
	mustCLI(t, "import", path, "--layout", "json", "--annotator", "Omar", labels)
	out := filepath.Join(t.TempDir(), "ds")
	mustCLI(t, "export", path, "--layout", "txt", "--annotator", "Omar", "--out", out, "--images", "none", "--split", "100/0/0")
	var files []string
	filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
		if err == nil && strings.HasSuffix(p, ".txt") && filepath.Base(filepath.Dir(p)) == "labels" {
			files = append(files, p)
		}
		return nil
	})
	if len(files) != 2 {
		t.Fatalf("Omar's export has %d label files, want his 2 images: %v", len(files), files)
	}
	for _, f := range files {
		if b, _ := os.ReadFile(f); len(strings.TrimSpace(string(b))) == 0 {
			t.Errorf("%s is empty: a false 'checked and empty'", f)
		}
	}
}
