//go:build linux

package formats

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// A link export says what it did: "link" when every file was linked, and
// "copy" in report.json when linking failed across file systems (the
// images on one, the export on another) and the files were copied.
func TestExportReportsLinksAsDone(t *testing.T) {
	classes, imgs := exportFixture(t)
	imgs = imgs[6:] // plain names
	same := filepath.Join(t.TempDir(), "out")
	rep, err := Export(context.Background(), same, classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesLink})
	if err != nil || rep.Images != ImagesLink || rep.Linked != len(imgs) || rep.Copied != 0 || rep.Requested != ImagesLink {
		t.Errorf("same file system: %+v %v", rep, err)
	}
	other, err := os.MkdirTemp("/dev/shm", "export-test-")
	if err != nil {
		t.Skipf("no second file system here: %v", err)
	}
	defer os.RemoveAll(other)
	var a, b syscall.Stat_t
	if syscall.Stat(other, &a) != nil || syscall.Stat(imgs[0].File, &b) != nil || a.Dev == b.Dev {
		t.Skip("/dev/shm is on the same file system as the test's files")
	}
	rep, err = Export(context.Background(), filepath.Join(other, "out"), classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesLink})
	if err != nil || rep.Images != ImagesCopy || rep.Requested != ImagesLink || rep.Copied != len(imgs) || rep.Linked != 0 {
		t.Errorf("across file systems: %+v %v", rep, err)
	}
	saved, _ := os.ReadFile(filepath.Join(other, "out", "report.json"))
	if !strings.Contains(string(saved), `"images": "copy"`) || !strings.Contains(string(saved), `"requested_images": "link"`) {
		t.Errorf("report.json says:\n%s", saved)
	}
}
