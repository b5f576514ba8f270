package cli

import (
	"image"
	"image/jpeg"
	"os"
	"path/filepath"
	"strings"
	"testing"
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
	if out := mustCLI(t, "info", p); strings.Contains(out, "Omar") {
		t.Fatalf("the failed import created the annotator:\n%s", out)
	}
	// ...and --skip-unmatched imports the rest, naming every skipped one.
	out := mustCLI(t, "import", p, "--layout", "json", "--annotator", "Omar", "--skip-unmatched", labels)
	if !strings.Contains(out, "imported 1 labels") || !strings.Contains(out, "zz.jpg") {
		t.Fatalf("--skip-unmatched: %q", out)
	}
}
