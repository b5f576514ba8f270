package formats

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"boxwright/project"
)

func exportFixture(t *testing.T) ([]string, []ExportImage) {
	t.Helper()
	src := t.TempDir()
	var imgs []ExportImage
	names := []string{"../../evil.jpg", "/etc/passwd.jpg", "a\x00b.jpg", "sub/dup.jpg", "other/dup.jpg", "C:\\win\\x.jpg", "plain.png", "twin-a.jpg", "twin-b.jpg"}
	for i, n := range names {
		f := filepath.Join(src, "f"+string(rune('a'+i))+".bin")
		os.WriteFile(f, []byte("image bytes "+n), 0o644)
		key := "k" + string(rune('a'+i))
		if strings.HasPrefix(n, "twin") {
			key = "same-file" // identical bytes: must share a split
		}
		cls := []string{"buoy", "kayak"}[i%2]
		imgs = append(imgs, ExportImage{File: f, Key: key, Record: ImageRecord{Name: n, Width: 100, Height: 50,
			Boxes: []BoxRecord{{Class: cls, Box: project.Box{X0: 1.5, Y0: 2, X1: 40, Y1: 30.25}}}}})
	}
	return []string{"buoy", "kayak"}, imgs
}

// Whatever the image names hold, every file lands inside the output
// folder, identical files share a split and the report adds up.
func TestExportStaysInsideAndReports(t *testing.T) {
	classes, imgs := exportFixture(t)
	for _, layout := range []Layout{LayoutJSON, LayoutXML, LayoutText} {
		parent := t.TempDir()
		out := filepath.Join(parent, "out")
		rep, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: layout, Ratios: [3]float64{0.5, 0.25, 0.25}, Seed: 3, Images: ImagesCopy})
		if err != nil {
			t.Fatalf("%s: %v", layout, err)
		}
		if entries, _ := os.ReadDir(parent); len(entries) != 1 {
			t.Errorf("%s: something was written beside the output folder: %v", layout, entries)
		}
		var files []string
		filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
			if err == nil && !d.IsDir() {
				rel, _ := filepath.Rel(out, p)
				if strings.HasPrefix(rel, "..") || strings.ContainsRune(rel, 0) {
					t.Errorf("%s: %s is outside the export", layout, p)
				}
				files = append(files, rel)
			}
			return nil
		})
		var images, boxes int
		for _, s := range rep.Splits {
			images += s.Images
			boxes += s.Boxes
			if s.Classes["buoy"]+s.Classes["kayak"] != s.Boxes {
				t.Errorf("%s %s: class counts %v do not add up to %d", layout, s.Name, s.Classes, s.Boxes)
			}
		}
		if images != len(imgs) || boxes != len(imgs) || rep.Copied != len(imgs) {
			t.Errorf("%s: report %+v", layout, rep)
		}
		var twins []string
		for _, f := range files {
			if strings.Contains(f, "twin") && strings.Contains(f, "images") {
				twins = append(twins, strings.SplitN(filepath.ToSlash(f), "/", 2)[0])
			}
		}
		if len(twins) != 2 || twins[0] != twins[1] {
			t.Errorf("%s: identical files in splits %v", layout, twins)
		}
		saved, err := os.ReadFile(filepath.Join(out, "report.json"))
		var back ExportReport
		if err != nil || json.Unmarshal(saved, &back) != nil || len(back.Splits) != 3 {
			t.Errorf("%s: report.json %s %v", layout, saved, err)
		}
		// The same export twice into the same folder is refused.
		if _, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: layout, Ratios: [3]float64{1, 0, 0}, Images: ImagesNone}); err == nil || !strings.Contains(err.Error(), "not empty") {
			t.Errorf("%s: export into a used folder: %v", layout, err)
		}
	}
}

func TestExportReadsBackAndRefusesBadOptions(t *testing.T) {
	classes, imgs := exportFixture(t)
	out := filepath.Join(t.TempDir(), "x")
	if _, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesNone}); err != nil {
		t.Fatal(err)
	}
	ds, err := LoadCornerJSON(filepath.Join(out, "train", "annotations.json"))
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Images) != len(imgs) || !filepath.IsAbs(filepath.FromSlash(ds.Images[0].Name)) {
		t.Errorf("images referenced by path: %d records, first %q", len(ds.Images), ds.Images[0].Name)
	}
	for _, bad := range []ExportOptions{{Layout: "csv", Images: ImagesCopy}, {Layout: LayoutJSON, Images: "move"}} {
		if _, err := Export(context.Background(), filepath.Join(t.TempDir(), "y"), classes, imgs, bad); err == nil {
			t.Errorf("options %+v accepted", bad)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Export(ctx, filepath.Join(t.TempDir(), "z"), classes, imgs, ExportOptions{Layout: LayoutXML, Ratios: [3]float64{1, 0, 0}, Images: ImagesCopy}); err == nil {
		t.Errorf("a cancelled export succeeded")
	}
}

// pythonExportReader reads an export with Python's standard json and
// xml.etree.ElementTree (Debian's /usr/bin/python3) and prints one line per
// box in our continuous corners: corner/size JSON is x, y, x+w, y+h;
// per-image XML is xmin-1, ymin-1, xmax, ymax (1-based inclusive indices).
const pythonExportReader = `
import json, sys, pathlib
import xml.etree.ElementTree as ET
root, layout = pathlib.Path(sys.argv[1]), sys.argv[2]
out = []
if layout == "json":
    for f in sorted(root.glob("*/annotations.json")):
        d = json.load(open(f))
        cats = {c["id"]: c["name"] for c in d["categories"]}
        for a in d["annotations"]:
            x, y, w, h = a["bbox"]
            out.append("%s %.9f %.9f %.9f %.9f" % (cats[a["category_id"]], x, y, x + w, y + h))
else:
    for f in sorted(root.glob("*/annotations/*.xml")):
        for o in ET.parse(f).getroot().iter("object"):
            b = o.find("bndbox")
            v = [float(b.find(k).text) for k in ("xmin", "ymin", "xmax", "ymax")]
            out.append("%s %.9f %.9f %.9f %.9f" % (o.find("name").text, v[0] - 1, v[1] - 1, v[2], v[3]))
print("\n".join(sorted(out)))
`

func TestExportReadByPython(t *testing.T) {
	py := "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("no /usr/bin/python3")
	}
	classes, imgs := exportFixture(t)
	for _, layout := range []Layout{LayoutJSON, LayoutXML} {
		out := filepath.Join(t.TempDir(), "out")
		if _, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: layout, Ratios: [3]float64{0.6, 0.2, 0.2}, Seed: 1, Images: ImagesNone}); err != nil {
			t.Fatal(err)
		}
		got, err := exec.Command(py, "-c", pythonExportReader, out, string(layout)).Output()
		if err != nil {
			t.Fatalf("%s: python: %v", layout, err)
		}
		var want []string
		for _, im := range imgs {
			for _, b := range im.Record.Boxes {
				want = append(want, fmt.Sprintf("%s %.9f %.9f %.9f %.9f", b.Class, b.Box.X0, b.Box.Y0, b.Box.X1, b.Box.Y1))
			}
		}
		sort.Strings(want)
		if strings.TrimSpace(string(got)) != strings.Join(want, "\n") {
			t.Errorf("%s: Python reads\n%s\nwe wrote\n%s", layout, got, strings.Join(want, "\n"))
		}
	}
}
