package formats

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
)

// boxClose reports whether two boxes agree to tol in every coordinate.
func boxClose(a, b project.Box, tol float64) bool {
	return math.Abs(a.X0-b.X0) <= tol && math.Abs(a.Y0-b.Y0) <= tol &&
		math.Abs(a.X1-b.X1) <= tol && math.Abs(a.Y1-b.Y1) <= tol
}

// TestCornerJSONConversion checks the bbox convention on worked examples.
// common practice: corner/size bbox [x, y, w, h] has its top-left corner at
// (x, y) and its bottom-right corner at (x+w, y+h), in the same continuous
// pixel coordinates as project.Box.
func TestCornerJSONConversion(t *testing.T) {
	cases := []struct {
		bbox [4]float64
		want project.Box
		area float64
	}{
		// x0=10, y0=20, x1=10+30=40, y1=20+40=60; area 30*40=1200.
		{[4]float64{10, 20, 30, 40}, project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, 1200},
		// The box covering exactly pixel (0,0): x1=0+1=1, y1=0+1=1; area 1.
		{[4]float64{0, 0, 1, 1}, project.Box{X0: 0, Y0: 0, X1: 1, Y1: 1}, 1},
		// Fractional: x1=2.5+0.25=2.75, y1=4.5+8=12.5; area 0.25*8=2.
		{[4]float64{2.5, 4.5, 0.25, 8}, project.Box{X0: 2.5, Y0: 4.5, X1: 2.75, Y1: 12.5}, 2},
		// A whole 640x480 image: x1=0+640, y1=0+480; area 307200.
		{[4]float64{0, 0, 640, 480}, project.Box{X0: 0, Y0: 0, X1: 640, Y1: 480}, 307200},
	}
	for _, c := range cases {
		got := toBox(c.bbox[0], c.bbox[1], c.bbox[2], c.bbox[3])
		if got != c.want {
			t.Errorf("toBox(%v) = %v, want %v", c.bbox, got, c.want)
		}
		x, y, w, h := fromBox(c.want)
		if [4]float64{x, y, w, h} != c.bbox {
			t.Errorf("fromBox(%v) = %v, want %v", c.want, [4]float64{x, y, w, h}, c.bbox)
		}
		if got.Area() != c.area {
			t.Errorf("area of %v = %v, want %v", got, got.Area(), c.area)
		}
	}
}

// TestReadCornerJSONWorked reads a small hand-written file. The expected
// corners are worked out by hand from the convention above (common
// practice): x1 = x + w, y1 = y + h.
func TestReadCornerJSONWorked(t *testing.T) {
	const doc = `{
  "info": {"description": "hand-written"},
  "licenses": [],
  "images": [
    {"id": 7, "file_name": "a.jpg", "width": 640, "height": 480, "license": 1},
    {"id": 3, "file_name": "sub/b.png", "width": 100, "height": 50}
  ],
  "categories": [{"id": 5, "name": "cat", "supercategory": "animal"}, {"id": 2, "name": "dog"}],
  "annotations": [
    {"id": 1, "image_id": 7, "category_id": 2, "bbox": [10, 20, 30, 40], "area": 1200, "iscrowd": 0, "segmentation": [[1,2,3,4]]},
    {"id": 2, "image_id": 7, "category_id": 5, "bbox": [0.5, 1.5, 2, 3], "area": 6, "iscrowd": 1},
    {"id": 9, "image_id": 3, "category_id": 5, "bbox": [-5, 40, 20, 20], "iscrowd": 0}
  ]
}`
	ds, err := ReadCornerJSON(strings.NewReader(doc), "hand.json")
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(ds.Classes, ","); got != "cat,dog" {
		t.Errorf("classes %q, want cat,dog (file order)", got)
	}
	if len(ds.Images) != 2 || ds.Images[0].Name != "a.jpg" || ds.Images[1].Name != "sub/b.png" {
		t.Fatalf("images %+v", ds.Images)
	}
	if ds.Images[0].Width != 640 || ds.Images[0].Height != 480 || ds.Images[0].Where != "hand.json: images[0]" {
		t.Errorf("image 0 = %+v", ds.Images[0])
	}
	a := ds.Images[0].Boxes
	if len(a) != 2 {
		t.Fatalf("a.jpg has %d boxes, want 2", len(a))
	}
	// [10,20,30,40]: x0=10, y0=20, x1=10+30=40, y1=20+40=60.
	if a[0].Class != "dog" || a[0].Box != (project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}) || a[0].Crowd || a[0].HasScore {
		t.Errorf("box 0 = %+v", a[0])
	}
	if a[0].Where != "hand.json: annotations[0]" {
		t.Errorf("where %q", a[0].Where)
	}
	// [0.5,1.5,2,3]: x1=0.5+2=2.5, y1=1.5+3=4.5; iscrowd 1.
	if a[1].Class != "cat" || a[1].Box != (project.Box{X0: 0.5, Y0: 1.5, X1: 2.5, Y1: 4.5}) || !a[1].Crowd {
		t.Errorf("box 1 = %+v", a[1])
	}
	b := ds.Images[1].Boxes
	// [-5,40,20,20]: x1=-5+20=15, y1=40+20=60, not clipped to the 100x50 image.
	if len(b) != 1 || b[0].Box != (project.Box{X0: -5, Y0: 40, X1: 15, Y1: 60}) {
		t.Errorf("b.png boxes %+v", b)
	}
}

// sampleDataset is invented data for round trips: fractional coordinates,
// several classes, crowd flags, a score and an image with no boxes.
func sampleDataset() *Dataset {
	return &Dataset{
		Classes: []string{"person", "bicycle", "traffic \"light\"", "ünïcode/é"},
		Images: []ImageRecord{
			{Name: "img/0001.jpg", Width: 640, Height: 480, Boxes: []BoxRecord{
				{Class: "person", Box: project.Box{X0: 10.25, Y0: 20.5, X1: 40.125, Y1: 60.75}},
				{Class: "bicycle", Box: project.Box{X0: 0.1, Y0: 0.2, X1: 0.30000000000000004, Y1: 100.7}, Crowd: true},
				{Class: "person", Box: project.Box{X0: 1.0 / 3, Y0: 2.0 / 3, X1: 639.9999, Y1: 479.123456789}},
			}},
			{Name: "img/empty.png", Width: 32, Height: 16},
			{Name: "img/0003.jpg", Width: 1920, Height: 1080, Boxes: []BoxRecord{
				{Class: "ünïcode/é", Box: project.Box{X0: 1e-7, Y0: 3, X1: 1e-6, Y1: 4}, Score: 0.875, HasScore: true},
				{Class: "traffic \"light\"", Box: project.Box{X0: 1000.5, Y0: 500.25, X1: 1919.75, Y1: 1079.5}, Crowd: true},
			}},
		},
	}
}

// TestCornerJSONRoundTrip checks Read(Write(ds)) == ds, boxes to writtenTol
// (invented data, round trip).
func TestCornerJSONRoundTrip(t *testing.T) {
	ds := sampleDataset()
	var buf bytes.Buffer
	if err := WriteCornerJSON(&buf, ds); err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	if err := WriteCornerJSON(&again, ds); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(buf.Bytes(), again.Bytes()) {
		t.Error("output is not deterministic")
	}
	got, err := ReadCornerJSON(bytes.NewReader(buf.Bytes()), "rt.json")
	if err != nil {
		t.Fatalf("%v\n%s", err, buf.String())
	}
	if strings.Join(got.Classes, "|") != strings.Join(ds.Classes, "|") {
		t.Errorf("classes %q, want %q", got.Classes, ds.Classes)
	}
	if len(got.Images) != len(ds.Images) {
		t.Fatalf("%d images, want %d", len(got.Images), len(ds.Images))
	}
	for i, want := range ds.Images {
		g := got.Images[i]
		if g.Name != want.Name || g.Width != want.Width || g.Height != want.Height {
			t.Errorf("image %d = %+v, want %+v", i, g, want)
		}
		if len(g.Boxes) != len(want.Boxes) {
			t.Errorf("image %d: %d boxes, want %d", i, len(g.Boxes), len(want.Boxes))
			continue
		}
		for j, wb := range want.Boxes {
			gb := g.Boxes[j]
			if gb.Class != wb.Class || gb.Crowd != wb.Crowd || gb.HasScore != wb.HasScore || gb.Score != wb.Score {
				t.Errorf("image %d box %d = %+v, want %+v", i, j, gb, wb)
			}
			if !boxClose(gb.Box, wb.Box, writtenTol) {
				t.Errorf("image %d box %d = %v, want %v", i, j, gb.Box, wb.Box)
			}
		}
	}
	// The bbox numbers themselves read back bit for bit: x0 and y0 exactly.
	if got.Images[0].Boxes[2].Box.X0 != 1.0/3 {
		t.Errorf("x0 = %v, want exactly 1/3", got.Images[0].Boxes[2].Box.X0)
	}
}

// TestWriteCornerJSONFields checks ids, area and iscrowd in the output.
// Worked by hand: Box{10.25,20.5,40.125,60.75} has w = 40.125-10.25 = 29.875,
// h = 60.75-20.5 = 40.25, area = 29.875*40.25 = 1202.46875; and
// Box{1000.5,500.25,1919.75,1079.5} has w = 919.25, h = 579.25,
// area = 919.25*579 + 919.25*0.25 = 532245.75 + 229.8125 = 532475.5625.
func TestWriteCornerJSONFields(t *testing.T) {
	var buf bytes.Buffer
	if err := WriteCornerJSON(&buf, sampleDataset()); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, want := range []string{
		`{"id": 1, "file_name": "img/0001.jpg", "width": 640, "height": 480}`,
		`{"id": 2, "file_name": "img/empty.png", "width": 32, "height": 16}`,
		`{"id": 3, "name": "traffic \"light\""}`,
		`{"id": 1, "image_id": 1, "category_id": 1, "bbox": [10.25, 20.5, 29.875, 40.25], "area": 1202.46875, "iscrowd": 0}`,
		`{"id": 5, "image_id": 3, "category_id": 3, "bbox": [1000.5, 500.25, 919.25, 579.25], "area": 532475.5625, "iscrowd": 1}`,
		`"score": 0.875}`,
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %s\n%s", want, out)
		}
	}
}

// TestWriteCornerJSONRefuses checks that the writer refuses what the reader
// would reject.
func TestWriteCornerJSONRefuses(t *testing.T) {
	bad := []struct {
		name string
		ds   *Dataset
	}{
		{"nil", nil},
		{"unknown class", &Dataset{Classes: []string{"a"}, Images: []ImageRecord{{Name: "x", Width: 1, Height: 1, Boxes: []BoxRecord{{Class: "b", Box: project.Box{X0: 0, Y0: 0, X1: 1, Y1: 1}}}}}}},
		{"duplicate class", &Dataset{Classes: []string{"a", "a"}}},
		{"empty box", &Dataset{Classes: []string{"a"}, Images: []ImageRecord{{Name: "x", Width: 1, Height: 1, Boxes: []BoxRecord{{Class: "a", Box: project.Box{X0: 1, Y0: 0, X1: 1, Y1: 1}}}}}}},
		{"infinite box", &Dataset{Classes: []string{"a"}, Images: []ImageRecord{{Name: "x", Width: 1, Height: 1, Boxes: []BoxRecord{{Class: "a", Box: project.Box{X0: 0, Y0: 0, X1: math.Inf(1), Y1: 1}}}}}}},
		{"zero size image", &Dataset{Images: []ImageRecord{{Name: "x"}}}},
		{"duplicate image", &Dataset{Images: []ImageRecord{{Name: "x", Width: 1, Height: 1}, {Name: "x", Width: 1, Height: 1}}}},
		{"bad score", &Dataset{Classes: []string{"a"}, Images: []ImageRecord{{Name: "x", Width: 1, Height: 1, Boxes: []BoxRecord{{Class: "a", Box: project.Box{X0: 0, Y0: 0, X1: 1, Y1: 1}, Score: 2, HasScore: true}}}}}},
	}
	for _, c := range bad {
		if err := WriteCornerJSON(&bytes.Buffer{}, c.ds); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

// TestCornerJSONAgainstPython cross-checks the convention with Python's
// standard json module (Debian's /usr/bin/python3, Python 3.11 on Debian
// 12): it reads our output and computes each box's corners as x, y, x+w,
// y+h, which must match ours to writtenTol.
func TestCornerJSONAgainstPython(t *testing.T) {
	const py = "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("no /usr/bin/python3")
	}
	ds := sampleDataset()
	path := filepath.Join(t.TempDir(), "ds.json")
	var buf bytes.Buffer
	if err := WriteCornerJSON(&buf, ds); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	const script = `
import json, sys
d = json.load(open(sys.argv[1], encoding="utf-8"))
names = {im["id"]: im["file_name"] for im in d["images"]}
cats = {c["id"]: c["name"] for c in d["categories"]}
for a in d["annotations"]:
    x, y, w, h = a["bbox"]
    print(json.dumps([names[a["image_id"]], cats[a["category_id"]], repr(x), repr(y), repr(x + w), repr(y + h)]))
`
	out, err := exec.Command(py, "-c", script, path).CombinedOutput()
	if err != nil {
		t.Fatalf("python: %v\n%s", err, out)
	}
	var want []BoxRecord
	var wantImg []string
	for _, im := range ds.Images {
		for _, b := range im.Boxes {
			want = append(want, b)
			wantImg = append(wantImg, im.Name)
		}
	}
	sc := bufio.NewScanner(bytes.NewReader(out))
	n := 0
	for sc.Scan() {
		var rec []string
		if err := json.Unmarshal(sc.Bytes(), &rec); err != nil || len(rec) != 6 {
			t.Fatalf("python line %q: %v", sc.Text(), err)
		}
		if n >= len(want) {
			t.Fatalf("python printed more boxes than we wrote")
		}
		var c [4]float64
		for k := range c {
			c[k], err = strconv.ParseFloat(rec[2+k], 64)
			if err != nil {
				t.Fatalf("python number %q: %v", rec[2+k], err)
			}
		}
		pb := project.Box{X0: c[0], Y0: c[1], X1: c[2], Y1: c[3]}
		if rec[0] != wantImg[n] || rec[1] != want[n].Class || !boxClose(pb, want[n].Box, writtenTol) {
			t.Errorf("box %d: python %v %q %q, ours %v %q %q", n, pb, rec[0], rec[1], want[n].Box, wantImg[n], want[n].Class)
		}
		n++
	}
	if n != len(want) {
		t.Errorf("python saw %d boxes, we wrote %d", n, len(want))
	}
}

// TestReadCornerJSONErrors checks that bad inputs give a *PositionError
// that names file, path and field (our own messages; invented inputs).
func TestReadCornerJSONErrors(t *testing.T) {
	const imgs = `"images": [{"id": 1, "file_name": "a.jpg", "width": 10, "height": 10}]`
	const cats = `"categories": [{"id": 1, "name": "a"}]`
	ann := func(s string) string { return "{" + imgs + ",\n" + cats + ",\n\"annotations\": [" + s + "]}" }
	const ok = `{"id": 1, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4]}`
	cases := []struct {
		doc, want string
	}{
		{``, "bad.json:1: the file is empty"},
		{`[]`, "the file must hold one JSON object, not an array"},
		{"{\n\"images\": [\n{\"id\": 1,,}]}", "bad.json:3: images[0]: malformed JSON: invalid character ','"},
		{"{\n\"images\": [\n", "bad.json:2: images: malformed JSON"},
		{`{"images": [], "categories": []}`, "bad.json:1: annotations: is missing"},
		{`{"images": [], "categories": [], "annotations": {}}`, "annotations: must be an array, not an object"},
		{`{"images": [], "images": [], "categories": [], "annotations": []}`, "images: appears twice"},
		{`{"images": [], "categories": [], "annotations": []} {}`, "unexpected an object after the top-level value"},
		{ann(ok + ",\n" + `{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1, 2, -3, 4]}`), "bad.json:4: annotations[1].bbox: width is negative (-3)"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 0]}`), "annotations[0].bbox: height is zero"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3]}`), "annotations[0].bbox: has 3 elements, want 4"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, "4"]}`), "annotations[0].bbox: element 3 is not a number"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1, 2, 1e999, 4]}`), "annotations[0].bbox: element 2 (1e999) is not a finite number"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": [1e308, 2, 1.7e308, 4]}`), "annotations[0].bbox: corners are out of range"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1, "bbox": "1,2,3,4"}`), "annotations[0].bbox: must be an array of 4 numbers"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 1}`), "annotations[0].bbox: is missing"},
		{ann(`{"id": 2, "image_id": 1, "category_id": 9, "bbox": [1, 2, 3, 4]}`), "annotations[0].category_id: unknown category 9 (annotation id 2)"},
		{ann(`{"id": 2, "image_id": 4, "category_id": 1, "bbox": [1, 2, 3, 4]}`), "annotations[0].image_id: unknown image 4 (annotation id 2)"},
		{ann(ok + "," + ok), "annotations[1].id: duplicate annotation id 1 (also annotations[0])"},
		{ann(`{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4]}`), "annotations[0].id: is missing"},
		{ann(`{"id": 1.5, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4]}`), "annotations[0].id: must be an integer"},
		{ann(`{"id": 1, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "iscrowd": 2}`), "annotations[0].iscrowd: must be 0 or 1"},
		{ann(`{"id": 1, "image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 1.5}`), "annotations[0].score: must be between 0 and 1"},
		{ann(`7`), "annotations[0]: must be an object, not a number"},
		{ann(`null`), "annotations[0]: must be an object, not null"},
		{`{"images": [{"id": 1, "file_name": 5, "width": 10, "height": 10}], "categories": [], "annotations": []}`, "images[0].file_name: must be a string, not number"},
		{`{"images": [{"id": 1, "file_name": "a", "width": 0, "height": 10}], "categories": [], "annotations": []}`, "images[0].width: must be a positive number of pixels, not 0"},
		{`{"images": [{"id": 1, "file_name": "a", "width": 10, "height": -2}], "categories": [], "annotations": []}`, "images[0].height: must be a positive number of pixels, not -2"},
		{`{"images": [{"id": 1, "file_name": "a", "width": 10}], "categories": [], "annotations": []}`, "images[0].height: is missing"},
		{`{"images": [{"id": 1, "width": 10, "height": 10}], "categories": [], "annotations": []}`, "images[0].file_name: is missing or empty"},
		{`{"images": [{"id": 1, "file_name": "a", "width": 1, "height": 1}, {"id": 1, "file_name": "b", "width": 1, "height": 1}], "categories": [], "annotations": []}`, "images[1].id: duplicate image id 1 (also images[0])"},
		{`{"images": [{"id": 1, "file_name": "a", "width": 1, "height": 1}, {"id": 2, "file_name": "a", "width": 1, "height": 1}], "categories": [], "annotations": []}`, "images[1].file_name: duplicate file name \"a\""},
		{`{"images": [], "categories": [{"id": 1, "name": "a"}, {"id": 1, "name": "b"}], "annotations": []}`, "categories[1].id: duplicate category id 1"},
		{`{"images": [], "categories": [{"id": 1, "name": "a"}, {"id": 2, "name": "a"}], "annotations": []}`, "categories[1].name: duplicate category name \"a\""},
		{`{"images": [], "categories": [{"id": 1}], "annotations": []}`, "categories[0].name: is missing or empty"},
	}
	for _, c := range cases {
		_, err := ReadCornerJSON(strings.NewReader(c.doc), "bad.json")
		if err == nil {
			t.Errorf("%q: no error, want %q", c.doc, c.want)
			continue
		}
		var pe *PositionError
		if !errors.As(err, &pe) || pe.File != "bad.json" {
			t.Errorf("%q: error %v (%T) is not a *PositionError for bad.json", c.doc, err, err)
		}
		if !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q:\n got  %v\n want %q", c.doc, err, c.want)
		}
	}
}

// TestReadCornerJSONSyntaxLine checks that a syntax error deep in a
// pretty-printed file reports its line (counted by hand: the bad line is
// the 6th).
func TestReadCornerJSONSyntaxLine(t *testing.T) {
	doc := "{\n\"images\": [],\n\"categories\": [\n{\"id\": 1, \"name\": \"a\"},\n{\"id\": 2, \"name\": \"b\"},\n{\"id\": 3 \"name\": \"c\"}\n],\n\"annotations\": []}\n"
	_, err := ReadCornerJSON(strings.NewReader(doc), "s.json")
	var pe *PositionError
	if !errors.As(err, &pe) || pe.Line != 6 || !strings.Contains(pe.Msg, "malformed JSON") {
		t.Fatalf("got %v, want a malformed-JSON error on line 6", err)
	}
}

// A UTF-8 byte-order mark before the JSON is skipped, in label files and
// prediction lists alike, and line numbers of errors stay right.
func TestReadCornerJSONByteOrderMark(t *testing.T) {
	const bom = "\xef\xbb\xbf"
	doc := bom + `{"images": [{"id": 1, "file_name": "a.jpg", "width": 10, "height": 10}], "categories": [{"id": 1, "name": "a"}], "annotations": []}`
	if ds, err := ReadCornerJSON(strings.NewReader(doc), "bom.json"); err != nil || len(ds.Images) != 1 {
		t.Errorf("labels with a BOM: %v", err)
	}
	if ps, err := ReadPredictionList(strings.NewReader(bom+`[{"image_id": 1, "category_id": 1, "bbox": [1, 1, 2, 2], "score": 0.5}]`), "p.json"); err != nil || len(ps) != 1 {
		t.Errorf("predictions with a BOM: %v", err)
	}
	_, err := ReadCornerJSON(strings.NewReader(bom+"{\n\"images\": [\n}"), "bad.json")
	var pe *PositionError
	if !errors.As(err, &pe) || pe.Line != 3 {
		t.Errorf("error after a BOM: %v, want line 3", err)
	}
}

// TestReadPredictionList reads id- and name-based records (invented data;
// corners by the convention above, common practice: x1 = x+w, y1 = y+h).
func TestReadPredictionList(t *testing.T) {
	const doc = `[
  {"image_id": 4, "category_id": 2, "bbox": [10, 20, 30, 40], "score": 0.9},
  {"file_name": "b.jpg", "category": "dog", "bbox": [0.5, 0.5, 1, 2], "score": 0, "extra": true},
  {"image_id": 4, "file_name": "", "category": "cat", "category_id": null, "bbox": [1, 1, 1, 1], "score": 1}
]`
	ps, err := ReadPredictionList(strings.NewReader(doc), "preds.json")
	if err != nil {
		t.Fatal(err)
	}
	if len(ps) != 3 {
		t.Fatalf("%d predictions, want 3", len(ps))
	}
	// [10,20,30,40]: x1 = 10+30 = 40, y1 = 20+40 = 60.
	want0 := Prediction{ImageID: 4, CategoryID: 2, Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.9, Where: "preds.json: [0]"}
	if ps[0] != want0 {
		t.Errorf("got %+v, want %+v", ps[0], want0)
	}
	// [0.5,0.5,1,2]: x1 = 0.5+1 = 1.5, y1 = 0.5+2 = 2.5.
	want1 := Prediction{FileName: "b.jpg", Category: "dog", Box: project.Box{X0: 0.5, Y0: 0.5, X1: 1.5, Y1: 2.5}, Score: 0, Where: "preds.json: [1]"}
	if ps[1] != want1 {
		t.Errorf("got %+v, want %+v", ps[1], want1)
	}
	// An empty file_name and a null category_id are "not given".
	if ps[2].ImageID != 4 || ps[2].FileName != "" || ps[2].CategoryID != 0 || ps[2].Category != "cat" || ps[2].Score != 1 {
		t.Errorf("got %+v", ps[2])
	}
	empty, err := ReadPredictionList(strings.NewReader(" [ ] "), "e.json")
	if err != nil || len(empty) != 0 {
		t.Errorf("empty list: %v, %v", empty, err)
	}
}

// TestReadPredictionListErrors checks positions "[k]" and the score rules.
func TestReadPredictionListErrors(t *testing.T) {
	const ok = `{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}`
	cases := []struct {
		doc, want string
	}{
		{``, "p.json:1: the file is empty"},
		{`{}`, "the file must hold one JSON array of predictions, not an object"},
		{"[\n" + ok + ",\n" + `{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 1.5}]`, "p.json:3: [1].score: must be between 0 and 1, not 1.5"},
		{`[{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": -0.1}]`, "[0].score: must be between 0 and 1"},
		{`[{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 1e400}]`, "[0].score: must be a finite number"},
		{`[{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": "high"}]`, "[0].score: must be a finite number"},
		{`[{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4]}]`, "[0].score: is missing"},
		{`[{"category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`, "[0]: names no image: want image_id or file_name"},
		{`[{"image_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`, "[0]: names no class: want category_id or category"},
		// Item 18 of issue 14: an image named both ways went to the id
		// without a word; the reader cannot know which is right.
		{"[" + ok + ",\n" + `{"image_id": 4, "file_name": "a.jpg", "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`, `p.json:2: [1]: names its image twice, as image_id 4 and as file_name "a.jpg"`},
		{`[{"image_id": 4, "category_id": 1, "category": "cat", "bbox": [1, 2, 3, 4], "score": 0.5}]`, `p.json:1: [0]: names its class twice, as category_id 1 and as category "cat"`},
		{`[{"image_id": 0, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`, "[0].image_id: must be a positive integer"},
		{`[{"image_id": 1, "category_id": "x", "bbox": [1, 2, 3, 4], "score": 0.5}]`, "[0].category_id: must be a positive integer"},
		{`[` + ok + `, {"image_id": 1, "category_id": 1, "bbox": [1, 2, 0, 4], "score": 0.5}]`, "[1].bbox: width is zero"},
		{`[` + ok + `, {"image_id": 1, "category": 7, "bbox": [1, 2, 3, 4], "score": 0.5}]`, "[1].category: must be a string, not number"},
		{`[` + ok + `,]`, "malformed JSON"},
		{`[` + ok + `] x`, "malformed JSON"},
		{`[1]`, "[0]: must be an object, not a number"},
	}
	for _, c := range cases {
		_, err := ReadPredictionList(strings.NewReader(c.doc), "p.json")
		if err == nil {
			t.Errorf("%q: no error, want %q", c.doc, c.want)
			continue
		}
		var pe *PositionError
		if !errors.As(err, &pe) || pe.File != "p.json" {
			t.Errorf("%q: error %v (%T) is not a *PositionError for p.json", c.doc, err, err)
		}
		if !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q:\n got  %v\n want %q", c.doc, err, c.want)
		}
	}
}

// FuzzReadCornerJSON checks that no input panics; that every error is a
// *PositionError naming the file and a line of it, in a message of
// bounded length, and that valid JSON is never called malformed; and that
// whatever reads is valid JSON, agrees with encoding/json's reading of the
// whole document (the streaming reader cuts it into the same records),
// holds only valid boxes and known classes, and writes and reads back the
// same (the far corners to rounding, since the file holds widths).
func FuzzReadCornerJSON(f *testing.F) {
	var buf bytes.Buffer
	if err := WriteCornerJSON(&buf, sampleDataset()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes())
	f.Add([]byte(`{"images": [], "categories": [], "annotations": []}`))
	f.Add([]byte(`{"images": [{"id": 1, "file_name": "a", "width": 2, "height": 2}], "categories": [{"id": 3, "name": "c"}], "annotations": [{"id": 1, "image_id": 1, "category_id": 3, "bbox": [0, 0, 1, 1]}]}`))
	f.Add([]byte(`{"images": [{"id": 1,`))
	// The first-byte checks and the streaming walk.
	f.Add([]byte("\x00\x00\x00"))
	f.Add([]byte("\xef\xbb\xbf \n\t{\"info\": {\"a\": [1, \"x\", null, true, {\"b\": -1e5}]}, \"images\": [], \"categories\": [], \"annotations\": []}"))
	f.Add([]byte("\xff\xfe{\x00"))
	f.Add([]byte("\x1f\x8b\x08"))
	f.Add([]byte(`{"images": [], "categories": [], "annotations": [], "x": [[[[[[]]]]]], "y": "\u00e9\"]"}`))
	f.Add([]byte(`{"Images": [], "images": [], "categories": [], "annotations": []} `))
	f.Fuzz(func(t *testing.T, data []byte) {
		ds, err := ReadCornerJSON(bytes.NewReader(data), "fuzz.json")
		body := bytes.TrimPrefix(data, utf8BOM)
		if err != nil {
			checkFuzzError(t, err, "fuzz.json", data, 1)
			if json.Valid(body) && strings.Contains(err.Error(), "malformed JSON") {
				t.Fatalf("valid JSON called malformed: %v", err)
			}
			return
		}
		if !json.Valid(body) {
			t.Fatalf("accepted JSON that encoding/json calls invalid")
		}
		// What encoding/json makes of the whole document.
		var top map[string]json.RawMessage
		var imgs []cjImageIn
		var cats []cjCategoryIn
		var anns []cjAnnotationIn
		if err := json.Unmarshal(body, &top); err != nil {
			t.Fatalf("encoding/json: %v", err)
		}
		for key, v := range map[string]any{"images": &imgs, "categories": &cats, "annotations": &anns} {
			if err := json.Unmarshal(top[key], v); err != nil {
				t.Fatalf("encoding/json, %s: %v", key, err)
			}
		}
		if len(ds.Images) != len(imgs) || len(ds.Classes) != len(cats) {
			t.Fatalf("%d images, %d classes; encoding/json finds %d, %d", len(ds.Images), len(ds.Classes), len(imgs), len(cats))
		}
		nBoxes := 0
		for i, im := range ds.Images {
			if im.Name != imgs[i].FileName || int64(im.Width) != imgs[i].Width.v || int64(im.Height) != imgs[i].Height.v {
				t.Fatalf("image %d is %+v; encoding/json finds %+v", i, im, imgs[i])
			}
			nBoxes += len(im.Boxes)
		}
		for i, c := range ds.Classes {
			if c != cats[i].Name {
				t.Fatalf("class %d is %q; encoding/json finds %q", i, c, cats[i].Name)
			}
		}
		if nBoxes != len(anns) {
			t.Fatalf("%d boxes; encoding/json finds %d annotations", nBoxes, len(anns))
		}
		checkFuzzDataset(t, ds)

		var out bytes.Buffer
		if err := WriteCornerJSON(&out, ds); err != nil {
			t.Fatalf("read but cannot write: %v", err)
		}
		again, err := ReadCornerJSON(&out, "again.json")
		if err != nil {
			t.Fatalf("cannot read our own output: %v\n%s", err, out.String())
		}
		if !slices.Equal(again.Classes, ds.Classes) || len(again.Images) != len(ds.Images) {
			t.Fatalf("classes %q, %d images came back as %q, %d", ds.Classes, len(ds.Images), again.Classes, len(again.Images))
		}
		for i, im := range ds.Images {
			g := again.Images[i]
			if g.Name != im.Name || g.Width != im.Width || g.Height != im.Height || len(g.Boxes) != len(im.Boxes) {
				t.Fatalf("image %+v came back as %+v", im, g)
			}
			for j, b := range im.Boxes {
				gb := g.Boxes[j]
				if gb.Class != b.Class || gb.Crowd != b.Crowd || gb.HasScore != b.HasScore || gb.Score != b.Score ||
					gb.Box.X0 != b.Box.X0 || gb.Box.Y0 != b.Box.Y0 || !roundClose(gb.Box.X1, b.Box.X1, b.Box.X0) || !roundClose(gb.Box.Y1, b.Box.Y1, b.Box.Y0) {
					t.Fatalf("box %+v came back as %+v", b, gb)
				}
			}
		}
	})
}

// roundClose reports whether got, computed as lo + (want - lo) in float64,
// is within the two roundings of that sum of want: 4 units of the last
// place of the larger magnitude (IEEE 754 round to nearest, common
// practice).
func roundClose(got, want, lo float64) bool {
	return math.Abs(got-want) <= 4*0x1p-52*math.Max(math.Abs(want), math.Abs(lo))
}

// checkFuzzError checks an error of a reader under fuzzing: a
// *PositionError naming file, with a line within the input (at least
// minLine), in a message a person can read.
func checkFuzzError(t *testing.T, err error, file string, data []byte, minLine int) {
	t.Helper()
	var pe *PositionError
	if !errors.As(err, &pe) || pe.File != file {
		t.Fatalf("error %v (%T) is not a *PositionError for %s", err, err, file)
	}
	if lines := bytes.Count(data, []byte{'\n'}) + 1; pe.Line < minLine || pe.Line > lines {
		t.Fatalf("error %v names line %d of an input of %d lines", err, pe.Line, lines)
	}
	if n := len(err.Error()); n > 1500 {
		t.Fatalf("error message of %d bytes: %.300s...", n, err)
	}
}

// checkFuzzDataset checks the invariants of an accepted dataset: named
// images of positive size, unique classes, valid boxes (finite, X1 > X0,
// Y1 > Y0) of those classes, scores within 0..1, names within their limit.
func checkFuzzDataset(t *testing.T, ds *Dataset) {
	t.Helper()
	classes := map[string]bool{}
	for _, c := range ds.Classes {
		if c == "" || len(c) > MaxNameBytes || classes[c] {
			t.Fatalf("accepted class list %q", ds.Classes)
		}
		classes[c] = true
	}
	for _, im := range ds.Images {
		if im.Name == "" || len(im.Name) > MaxNameBytes || im.Width <= 0 || im.Height <= 0 || im.Where == "" {
			t.Fatalf("accepted image %+v", im)
		}
		for _, b := range im.Boxes {
			if !b.Box.Valid() || !(b.Box.X1 > b.Box.X0) || !(b.Box.Y1 > b.Box.Y0) || !classes[b.Class] || b.Where == "" ||
				(b.HasScore && !(b.Score >= 0 && b.Score <= 1)) || (!b.HasScore && b.Score != 0) {
				t.Fatalf("accepted box %+v", b)
			}
		}
	}
}

// FuzzReadPredictionList checks that no input panics; that every error is
// a *PositionError naming the file and a line of it, and that valid JSON
// is never called malformed; and that whatever reads is valid JSON whose
// records, as encoding/json reads the whole document, are the predictions
// returned: each with one image (id or name), one class (id or name), a
// valid box and a score within 0..1.
func FuzzReadPredictionList(f *testing.F) {
	f.Add([]byte(`[{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`))
	f.Add([]byte(`[{"file_name": "a.jpg", "category": "dog", "bbox": [0.5, 0.5, 1, 2], "score": 1}]`))
	f.Add([]byte(`[]`))
	f.Add([]byte(`[{"image_id": 1, "bbox": [1, 2`))
	// The first-byte checks, the streaming walk and the rule against an
	// image or class named both ways.
	f.Add([]byte("\x00"))
	f.Add([]byte("\xef\xbb\xbf\r\n [ {\"image_id\": 2, \"category\": \"a\\\"]\", \"bbox\": [1, 2, 3, 4], \"score\": 0, \"segmentation\": [[1, 2], {\"x\": \"]\"}]} ]\n"))
	f.Add([]byte(`[{"image_id": 4, "file_name": "a.jpg", "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`))
	f.Add([]byte(`[{"image_id": 4, "category_id": 1, "category": "cat", "bbox": [1, 2, 3, 4], "score": 0.5}] 7`))
	f.Fuzz(func(t *testing.T, data []byte) {
		ps, err := ReadPredictionList(bytes.NewReader(data), "fuzz.json")
		body := bytes.TrimPrefix(data, utf8BOM)
		if err != nil {
			checkFuzzError(t, err, "fuzz.json", data, 1)
			if json.Valid(body) && strings.Contains(err.Error(), "malformed JSON") {
				t.Fatalf("valid JSON called malformed: %v", err)
			}
			return
		}
		if !json.Valid(body) {
			t.Fatalf("accepted JSON that encoding/json calls invalid")
		}
		var recs []cjPredictionIn
		if err := json.Unmarshal(body, &recs); err != nil {
			t.Fatalf("encoding/json: %v", err)
		}
		if len(recs) != len(ps) {
			t.Fatalf("%d predictions; encoding/json finds %d records", len(ps), len(recs))
		}
		for i, p := range ps {
			r := recs[i]
			b, _ := r.BBox.box()
			if p.ImageID != r.ImageID.v || p.FileName != r.FileName || p.CategoryID != r.CategoryID.v || p.Category != r.Category || p.Box != b || p.Score != r.Score.v {
				t.Fatalf("prediction %d is %+v; encoding/json finds %+v", i, p, r)
			}
			if !p.Box.Valid() || !(p.Box.X1 > p.Box.X0) || !(p.Box.Y1 > p.Box.Y0) || !(p.Score >= 0 && p.Score <= 1) || p.Where != "fuzz.json: ["+strconv.Itoa(i)+"]" ||
				(p.ImageID > 0) == (p.FileName != "") || (p.CategoryID > 0) == (p.Category != "") || p.ImageID < 0 || p.CategoryID < 0 ||
				len(p.FileName) > MaxNameBytes || len(p.Category) > MaxNameBytes {
				t.Fatalf("accepted a bad prediction %+v", p)
			}
		}
	})
}

// bigCornerJSON builds invented corner/size JSON with the given numbers of
// images and annotations.
func bigCornerJSON(nImages, nAnns int) []byte {
	var b bytes.Buffer
	b.WriteString("{\"info\": {}, \"images\": [\n")
	for i := 1; i <= nImages; i++ {
		if i > 1 {
			b.WriteString(",\n")
		}
		fmt.Fprintf(&b, `{"id": %d, "file_name": "img/%06d.jpg", "width": 640, "height": 480}`, i, i)
	}
	b.WriteString("],\n\"categories\": [")
	for c := 1; c <= 80; c++ {
		if c > 1 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, `{"id": %d, "name": "class%d"}`, c, c)
	}
	b.WriteString("],\n\"annotations\": [\n")
	for a := 1; a <= nAnns; a++ {
		if a > 1 {
			b.WriteString(",\n")
		}
		x, y := float64(a%600)+0.25, float64(a%400)+0.5
		fmt.Fprintf(&b, `{"id": %d, "image_id": %d, "category_id": %d, "bbox": [%g, %g, %g, %g], "area": %g, "iscrowd": 0}`,
			a, 1+a%nImages, 1+a%80, x, y, 20.5, 30.75, 20.5*30.75)
	}
	b.WriteString("]}\n")
	return b.Bytes()
}

// BenchmarkReadCornerJSON200k parses 10,000 images and 200,000 annotations.
func BenchmarkReadCornerJSON200k(b *testing.B) {
	data := bigCornerJSON(10000, 200000)
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		ds, err := ReadCornerJSON(bytes.NewReader(data), "big.json")
		if err != nil {
			b.Fatal(err)
		}
		if len(ds.Images) != 10000 {
			b.Fatal("wrong image count")
		}
	}
}
