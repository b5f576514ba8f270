package formats

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
)

// boxesClose reports whether two boxes agree to tol in every coordinate.
func boxesClose(a, b project.Box, tol float64) bool {
	return math.Abs(a.X0-b.X0) <= tol && math.Abs(a.Y0-b.Y0) <= tol &&
		math.Abs(a.X1-b.X1) <= tol && math.Abs(a.Y1-b.Y1) <= tol
}

// layoutPython runs a script with Debian's /usr/bin/python3 and returns its
// standard output; the test is skipped when that interpreter is missing.
func layoutPython(t *testing.T, script string, args ...string) string {
	t.Helper()
	const py = "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skipf("%s not available: %v", py, err)
	}
	cmd := exec.Command(py, append([]string{"-c", script}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("python: %v\n%s", err, stderr.String())
	}
	return string(out)
}

// parsePythonBoxes parses lines "name x0 y0 x1 y1" printed by a reference
// script.
func parsePythonBoxes(t *testing.T, out string) (names []string, boxes []project.Box) {
	t.Helper()
	for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
		if line == "" {
			continue
		}
		f := strings.Fields(line)
		if len(f) != 5 {
			t.Fatalf("python printed %q", line)
		}
		var v [4]float64
		for i := range v {
			x, err := strconv.ParseFloat(f[i+1], 64)
			if err != nil {
				t.Fatalf("python printed %q: %v", line, err)
			}
			v[i] = x
		}
		names = append(names, f[0])
		boxes = append(boxes, project.Box{X0: v[0], Y0: v[1], X1: v[2], Y1: v[3]})
	}
	return names, boxes
}

// TestImageXMLWorkedExamples checks the 1-based inclusive index convention
// on hand-worked cases. Source: the convention itself (pixel i covers
// [i-1, i) in continuous coordinates). // common practice
func TestImageXMLWorkedExamples(t *testing.T) {
	doc := `<?xml version="1.0" encoding="UTF-8"?>
<annotation>
  <filename>street.jpg</filename>
  <size><width>640</width><height>480</height><depth>3</depth></size>
  <object>
    <name>car</name>
    <bndbox><xmin>1</xmin><ymin>1</ymin><xmax>10</xmax><ymax>10</ymax></bndbox>
  </object>
  <object>
    <name>pole</name>
    <pose>Frontal</pose>
    <truncated>1</truncated>
    <difficult>1</difficult>
    <bndbox><xmin>5</xmin><ymin>3</ymin><xmax>5</xmax><ymax>3</ymax></bndbox>
  </object>
  <object>
    <name>sign</name>
    <bndbox><xmin>1.5</xmin><ymin>100.25</ymin><xmax>20.5</xmax><ymax>200</ymax></bndbox>
  </object>
</annotation>
`
	rec, err := ReadImageXML(strings.NewReader(doc), "street.xml")
	if err != nil {
		t.Fatal(err)
	}
	if rec.Name != "street.jpg" || rec.Width != 640 || rec.Height != 480 || rec.Depth != 3 {
		t.Fatalf("record header = %+v", rec)
	}
	want := []BoxRecord{
		// xmin=1..xmax=10 covers pixels 1..10 = [0,10): X0 = 1-1 = 0, X1 = 10.
		{Class: "car", Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}, Where: "street.xml: object[0]"},
		// xmin == xmax = 5 is pixel 5 alone = [4,5): width 1. Same for y = 3: [2,3).
		{Class: "pole", Box: project.Box{X0: 4, Y0: 2, X1: 5, Y1: 3}, Pose: "Frontal", Truncated: true, Difficult: true, Where: "street.xml: object[1]"},
		// Decimals: X0 = 1.5-1 = 0.5, Y0 = 100.25-1 = 99.25, X1 = 20.5, Y1 = 200.
		{Class: "sign", Box: project.Box{X0: 0.5, Y0: 99.25, X1: 20.5, Y1: 200}, Where: "street.xml: object[2]"},
	}
	if len(rec.Boxes) != len(want) {
		t.Fatalf("got %d boxes, want %d", len(rec.Boxes), len(want))
	}
	for i, w := range want {
		if rec.Boxes[i] != w {
			t.Errorf("box %d = %+v, want %+v", i, rec.Boxes[i], w)
		}
	}

	// The inverse: Box{0,0,10,10} is written xmin = 0+1 = 1, xmax = 10;
	// Box{0.5,99.25,20.5,200} is xmin = 1.5, ymin = 100.25.
	var buf bytes.Buffer
	out := ImageRecord{Name: "street.jpg", Width: 640, Height: 480, Boxes: []BoxRecord{
		{Class: "car", Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}},
		{Class: "sign", Box: project.Box{X0: 0.5, Y0: 99.25, X1: 20.5, Y1: 200}, Pose: "Left", Difficult: true},
	}}
	if err := WriteImageXML(&buf, out); err != nil {
		t.Fatal(err)
	}
	golden := `<?xml version="1.0" encoding="UTF-8"?>
<annotation>
  <filename>street.jpg</filename>
  <size>
    <width>640</width>
    <height>480</height>
    <depth>3</depth>
  </size>
  <object>
    <name>car</name>
    <truncated>0</truncated>
    <difficult>0</difficult>
    <bndbox>
      <xmin>1</xmin>
      <ymin>1</ymin>
      <xmax>10</xmax>
      <ymax>10</ymax>
    </bndbox>
  </object>
  <object>
    <name>sign</name>
    <pose>Left</pose>
    <truncated>0</truncated>
    <difficult>1</difficult>
    <bndbox>
      <xmin>1.5</xmin>
      <ymin>100.25</ymin>
      <xmax>20.5</xmax>
      <ymax>200</ymax>
    </bndbox>
  </object>
</annotation>
`
	if got := buf.String(); got != golden {
		t.Errorf("written XML:\n%s\nwant:\n%s", got, golden)
	}
}

// TestImageXMLNameFromPath checks that the last element of <path> names the
// image when <filename> is empty, with either kind of slash.
func TestImageXMLNameFromPath(t *testing.T) {
	for _, p := range []string{`/data/set/img 7.png`, `C:\data\set\img 7.png`} {
		doc := `<annotation><filename></filename><path>` + p + `</path><size><width>3</width><height>4</height></size></annotation>`
		rec, err := ReadImageXML(strings.NewReader(doc), "x.xml")
		if err != nil {
			t.Fatal(err)
		}
		if rec.Name != "img 7.png" || rec.Depth != 0 || len(rec.Boxes) != 0 {
			t.Errorf("path %q: record %+v", p, rec)
		}
	}
}

// TestImageXMLLatin1 reads a file that declares ISO 8859-1.
func TestImageXMLLatin1(t *testing.T) {
	doc := "<?xml version=\"1.0\" encoding=\"ISO-8859-1\"?>\n<annotation><filename>caf\xe9.jpg</filename><size><width>3</width><height>4</height></size>" +
		"<object><name>cr\xe8me</name><bndbox><xmin>1</xmin><ymin>1</ymin><xmax>2</xmax><ymax>2</ymax></bndbox></object></annotation>"
	rec, err := ReadImageXML(strings.NewReader(doc), "x.xml")
	if err != nil {
		t.Fatal(err)
	}
	if rec.Name != "café.jpg" || rec.Boxes[0].Class != "crème" {
		t.Errorf("record %+v", rec)
	}
}

// TestImageXMLAgainstElementTree writes records with WriteImageXML and
// reads them with Python's xml.etree.ElementTree (Debian python3, standard
// library), which prints xmin-1, ymin-1, xmax, ymax; those must equal our
// boxes to writtenTol.
func TestImageXMLAgainstElementTree(t *testing.T) {
	dir := t.TempDir()
	recs := []ImageRecord{
		{Name: "a.jpg", Width: 640, Height: 480, Boxes: []BoxRecord{
			{Class: "cat", Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}},
			{Class: "dog", Box: project.Box{X0: 12.25, Y0: 7.5, X1: 300.125, Y1: 479}},
			{Class: "cat", Box: project.Box{X0: 100.1, Y0: 0.3, X1: 101.1, Y1: 1.3}, Difficult: true},
		}},
		{Name: "b & c.jpg", Width: 33, Height: 17, Depth: 1, Boxes: []BoxRecord{
			{Class: "<odd>", Box: project.Box{X0: -3, Y0: 2, X1: 40, Y1: 16.999}, Truncated: true},
		}},
	}
	var files []string
	var want []BoxRecord
	for i, rec := range recs {
		var buf bytes.Buffer
		if err := WriteImageXML(&buf, rec); err != nil {
			t.Fatal(err)
		}
		f := filepath.Join(dir, fmt.Sprintf("%d.xml", i))
		if err := os.WriteFile(f, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		files = append(files, f)
		want = append(want, rec.Boxes...)
	}
	const script = `
import sys
import xml.etree.ElementTree as ET
for f in sys.argv[1:]:
    root = ET.parse(f).getroot()
    for o in root.findall('object'):
        b = o.find('bndbox')
        v = [float(b.find(k).text) for k in ('xmin', 'ymin', 'xmax', 'ymax')]
        name = o.find('name').text.replace(' ', '_')
        print(name, repr(v[0] - 1), repr(v[1] - 1), repr(v[2]), repr(v[3]))
`
	names, boxes := parsePythonBoxes(t, layoutPython(t, script, files...))
	if len(boxes) != len(want) {
		t.Fatalf("python found %d boxes, want %d", len(boxes), len(want))
	}
	for i, w := range want {
		if names[i] != w.Class || !boxesClose(boxes[i], w.Box, writtenTol) {
			t.Errorf("box %d: python read %s %v, we wrote %s %v", i, names[i], boxes[i], w.Class, w.Box)
		}
	}
}

// TestImageXMLRoundTrip checks Read(Write(rec)) == rec, boxes to writtenTol.
// Invented data (round trip).
func TestImageXMLRoundTrip(t *testing.T) {
	recs := []ImageRecord{
		{Name: "empty.png", Width: 1, Height: 1, Depth: 3},
		{Name: "sub/dir/img.jpg", Width: 1920, Height: 1080, Depth: 1, Boxes: []BoxRecord{
			{Class: "person", Box: project.Box{X0: 0.1, Y0: 0.2, X1: 1919.9, Y1: 1079.7}, Pose: "Rear", Truncated: true},
			{Class: "bike", Box: project.Box{X0: 10, Y0: 20, X1: 11, Y1: 21}, Difficult: true},
			{Class: "bike", Box: project.Box{X0: 1.0 / 3, Y0: 2.0 / 3, X1: 1000.0 / 7, Y1: 123.456789012345}},
			{Class: "a <b> & \"c\"", Box: project.Box{X0: -5, Y0: -5, X1: 2000, Y1: 2000}},
			// One pixel wide at a position where -1/+1 rounds.
			{Class: "pole", Box: project.Box{X0: 0.1 - 1, Y0: 5, X1: 0.1, Y1: 6}},
		}},
	}
	for _, rec := range recs {
		var buf bytes.Buffer
		if err := WriteImageXML(&buf, rec); err != nil {
			t.Fatal(err)
		}
		got, err := ReadImageXML(bytes.NewReader(buf.Bytes()), "rt.xml")
		if err != nil {
			t.Fatalf("%s: %v\n%s", rec.Name, err, buf.String())
		}
		if got.Name != rec.Name || got.Width != rec.Width || got.Height != rec.Height || got.Depth != rec.Depth {
			t.Errorf("%s: header %+v", rec.Name, got)
		}
		if len(got.Boxes) != len(rec.Boxes) {
			t.Fatalf("%s: %d boxes, want %d", rec.Name, len(got.Boxes), len(rec.Boxes))
		}
		for i, w := range rec.Boxes {
			g := got.Boxes[i]
			if g.Class != w.Class || g.Pose != w.Pose || g.Difficult != w.Difficult || g.Truncated != w.Truncated || !boxesClose(g.Box, w.Box, writtenTol) {
				t.Errorf("%s box %d: got %+v, want %+v", rec.Name, i, g, w)
			}
		}
	}
	// Integral coordinates are written as integers and come back exactly.
	var buf bytes.Buffer
	rec := ImageRecord{Name: "i.png", Width: 9, Height: 9, Boxes: []BoxRecord{{Class: "x", Box: project.Box{X0: 2, Y0: 3, X1: 7, Y1: 8}}}}
	if err := WriteImageXML(&buf, rec); err != nil {
		t.Fatal(err)
	}
	for _, frag := range []string{"<xmin>3</xmin>", "<ymin>4</ymin>", "<xmax>7</xmax>", "<ymax>8</ymax>"} {
		if !strings.Contains(buf.String(), frag) {
			t.Errorf("integral coordinates not written as integers (no %s):\n%s", frag, buf.String())
		}
	}
	got, _ := ReadImageXML(&buf, "i.xml")
	if got.Boxes[0].Box != rec.Boxes[0].Box {
		t.Errorf("integral box came back as %v", got.Boxes[0].Box)
	}
}

// TestWriteImageXMLRejects checks that the writer refuses what it cannot
// write faithfully.
func TestWriteImageXMLRejects(t *testing.T) {
	box := func(b project.Box) ImageRecord {
		return ImageRecord{Name: "a.jpg", Width: 10, Height: 10, Boxes: []BoxRecord{{Class: "c", Box: b}}}
	}
	for name, rec := range map[string]ImageRecord{
		"no name":       {Width: 1, Height: 1},
		"no size":       {Name: "a.jpg"},
		"empty box":     box(project.Box{X0: 5, Y0: 5, X1: 5, Y1: 6}),
		"NaN":           box(project.Box{X0: math.NaN(), Y0: 0, X1: 5, Y1: 6}),
		"sub-pixel box": box(project.Box{X0: 5, Y0: 5, X1: 5.5, Y1: 6}),
		"no class":      {Name: "a.jpg", Width: 10, Height: 10, Boxes: []BoxRecord{{Box: project.Box{X0: 0, Y0: 0, X1: 5, Y1: 5}}}},
	} {
		if err := WriteImageXML(&bytes.Buffer{}, rec); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// xmlErrorBase is a valid file with known line numbers; the error cases
// below each change one fragment of it.
const xmlErrorBase = `<?xml version="1.0"?>
<annotation>
  <filename>a.jpg</filename>
  <size>
    <width>640</width>
    <height>480</height>
    <depth>3</depth>
  </size>
  <object>
    <name>cat</name>
    <truncated>0</truncated>
    <difficult>0</difficult>
    <bndbox>
      <xmin>9</xmin>
      <ymin>2</ymin>
      <xmax>20</xmax>
      <ymax>30</ymax>
    </bndbox>
  </object>
  <object>
    <name>dog</name>
    <bndbox><xmin>1</xmin><ymin>1</ymin><xmax>5</xmax><ymax>5</ymax></bndbox>
  </object>
</annotation>
`

// TestReadImageXMLErrors checks that each bad input gives a *PositionError
// naming the file, line, element path and field.
func TestReadImageXMLErrors(t *testing.T) {
	if _, err := ReadImageXML(strings.NewReader(xmlErrorBase), "a.xml"); err != nil {
		t.Fatalf("base document: %v", err)
	}
	cases := []struct {
		name, old, new string // replace old (once) by new in xmlErrorBase
		want           string
		line           int
	}{
		{"unclosed element", "    <depth>3</depth>\n  </size>", "    <depth>3</depth>", "a.xml:23: malformed XML: element <size> closed by </annotation>", 23},
		{"bad entity", "<name>cat</name>", "<name>cat &nbsp;</name>", "a.xml:10: malformed XML", 10},
		{"second root", "</annotation>\n", "</annotation>\n<annotation/>\n", "a.xml:25: malformed XML: a second root element", 25},
		{"wrong root", "<annotation>\n  <filename>", "<labels>\n  <filename>", "a.xml:24: malformed XML", 24},
		{"unknown encoding", `version="1.0"`, `version="1.0" encoding="EBCDIC"`, "a.xml:1: malformed XML", 1},
		{"no filename", "<filename>a.jpg</filename>", "<filename> </filename>", "a.xml:2: filename: missing, and there is no <path>", 2},
		{"no size", "  <size>\n    <width>640</width>\n    <height>480</height>\n    <depth>3</depth>\n  </size>\n", "", "a.xml:2: size: missing", 2},
		{"width missing", "    <width>640</width>\n", "", "a.xml:4: size.width: missing", 4},
		{"width zero", "<width>640</width>", "<width>0</width>", "a.xml:5: size.width: width 0 is not positive", 5},
		{"height negative", "<height>480</height>", "<height>-480</height>", "a.xml:6: size.height: height -480 is not positive", 6},
		{"width text", "<width>640</width>", "<width>wide</width>", `a.xml:5: size.width: "wide" is not a number`, 5},
		{"width fraction", "<width>640</width>", "<width>640.5</width>", "a.xml:5: size.width: width 640.5 is not a whole number", 5},
		{"depth negative", "<depth>3</depth>", "<depth>-1</depth>", "a.xml:7: size.depth: depth -1 is negative", 7},
		{"two sizes", "<depth>3</depth>\n  </size>", "<depth>3</depth>\n  </size><size/>", "a.xml:2: size: <size> appears more than once (lines 4 and 8)", 2},
		{"no object name", "    <name>cat</name>\n", "", "a.xml:9: object[0].name: missing", 9},
		{"empty object name", "<name>dog</name>", "<name></name>", "a.xml:21: object[1].name: missing", 21},
		{"no bndbox", "<bndbox><xmin>1</xmin><ymin>1</ymin><xmax>5</xmax><ymax>5</ymax></bndbox>", "", "a.xml:20: object[1].bndbox: missing", 20},
		{"xmin missing", "      <xmin>9</xmin>\n", "", "a.xml:13: object[0].bndbox.xmin: missing", 13},
		{"xmin empty", "<xmin>9</xmin>", "<xmin></xmin>", "a.xml:14: object[0].bndbox.xmin: missing", 14},
		{"ymax text", "<ymax>30</ymax>", "<ymax>thirty</ymax>", `a.xml:17: object[0].bndbox.ymax: "thirty" is not a number`, 17},
		{"xmin NaN", "<xmin>9</xmin>", "<xmin>NaN</xmin>", `a.xml:14: object[0].bndbox.xmin: "NaN" is not a finite number`, 14},
		{"ymin huge", "<ymin>2</ymin>", "<ymin>1e999</ymin>", `a.xml:15: object[0].bndbox.ymin: "1e999" is not a finite number`, 15},
		{"xmax Inf", "<xmax>20</xmax>", "<xmax>+Inf</xmax>", `a.xml:16: object[0].bndbox.xmax: "+Inf" is not a finite number`, 16},
		{"xmax before xmin", "<xmax>20</xmax>", "<xmax>5</xmax>", "a.xml:16: object[0].bndbox.xmax: xmax 5 is less than xmin 9", 16},
		{"ymax before ymin", "<ymax>5</ymax></bndbox>", "<ymax>0.5</ymax></bndbox>", "a.xml:22: object[1].bndbox.ymax: ymax 0.5 is less than ymin 1", 22},
		{"two xmins", "<xmin>9</xmin>", "<xmin>9</xmin><xmin>8</xmin>", "a.xml:13: object[0].bndbox.xmin: <xmin> appears more than once (lines 14 and 14)", 13},
		{"difficult 2", "<difficult>0</difficult>", "<difficult>2</difficult>", `a.xml:12: object[0].difficult: "2" is not 0 or 1`, 12},
		{"truncated yes", "<truncated>0</truncated>", "<truncated>yes</truncated>", `a.xml:11: object[0].truncated: "yes" is not 0 or 1`, 11},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if n := strings.Count(xmlErrorBase, c.old); n != 1 {
				t.Fatalf("fragment %q occurs %d times", c.old, n)
			}
			doc := strings.Replace(xmlErrorBase, c.old, c.new, 1)
			_, err := ReadImageXML(strings.NewReader(doc), "a.xml")
			if err == nil {
				t.Fatalf("no error for\n%s", doc)
			}
			var pe *PositionError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v is %T, not *PositionError", err, err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q, want it to contain %q", err, c.want)
			}
			if pe.File != "a.xml" || pe.Line != c.line {
				t.Errorf("position %s:%d, want a.xml:%d", pe.File, pe.Line, c.line)
			}
		})
	}

	for _, doc := range []string{"", "   \n", "<?xml version=\"1.0\"?>\n"} {
		_, err := ReadImageXML(strings.NewReader(doc), "e.xml")
		var pe *PositionError
		if !errors.As(err, &pe) || !strings.Contains(err.Error(), "e.xml: malformed XML: no root element") {
			t.Errorf("%q: error %v", doc, err)
		}
	}
	_, err := ReadImageXML(strings.NewReader("<foo/>"), "f.xml")
	if err == nil || err.Error() != "f.xml:1: root element is <foo>, expected <annotation>" {
		t.Errorf("wrong root: %v", err)
	}
}

// FuzzReadImageXML checks that no input panics; that every error is a
// *PositionError naming the file and a line of it; and that what is read
// holds a named image of positive size and valid boxes with classes, and
// writes and reads back the same (corners to rounding: the file holds
// 1-based indices, X0+1) unless the writer refuses a box under one pixel.
func FuzzReadImageXML(f *testing.F) {
	f.Add([]byte(xmlErrorBase))
	f.Add([]byte(`<annotation><filename>a</filename><size><width>1</width><height>1</height></size><object><name>x</name><bndbox><xmin>1e308</xmin><ymin>1</ymin><xmax>1e308</xmax><ymax>1</ymax></bndbox></object></annotation>`))
	f.Add([]byte("<?xml version=\"1.0\" encoding=\"latin1\"?><annotation>\xff</annotation>"))
	// The first-byte check and the elements read past.
	f.Add([]byte("\x00<annotation/>"))
	f.Add([]byte("\xef\xbb\xbf \n<annotation><folder>f</folder><filename> a </filename><owner><name>x</name></owner><size><width>2</width><height>2</height><depth></depth></size><object><name>c</name><pose>p</pose><truncated>1</truncated><bndbox><xmin>1.5</xmin><ymin>1</ymin><xmax>1.5</xmax><ymax>2</ymax><x><xmin>9</xmin></x></bndbox></object></annotation>"))
	f.Add([]byte("<annotation><path>C:\\a\\b.png</path><size><width>1</width><height>1</height></size><object><name>a</name></object><object/></annotation>"))
	f.Fuzz(func(t *testing.T, data []byte) {
		rec, err := ReadImageXML(bytes.NewReader(data), "fuzz.xml")
		if err != nil {
			checkFuzzError(t, err, "fuzz.xml", data, 0)
			return
		}
		if rec.Name == "" || rec.Width <= 0 || rec.Height <= 0 || rec.Depth < 0 {
			t.Fatalf("accepted record %+v", rec)
		}
		for _, b := range rec.Boxes {
			if !b.Box.Valid() || !(b.Box.X1 > b.Box.X0) || !(b.Box.Y1 > b.Box.Y0) || b.Class == "" || len(b.Class) > MaxNameBytes || len(b.Pose) > MaxNameBytes {
				t.Fatalf("accepted box %+v", b)
			}
		}
		var out bytes.Buffer
		if err := WriteImageXML(&out, rec); err != nil {
			if !strings.Contains(err.Error(), "less than one pixel") {
				t.Fatalf("read but cannot write: %v", err)
			}
			return
		}
		again, err := ReadImageXML(&out, "again.xml")
		if err != nil {
			t.Fatalf("our own output: %v\n%s", err, out.String())
		}
		depth := rec.Depth
		if depth == 0 {
			depth = 3 // the writer's default
		}
		if again.Name != rec.Name || again.Width != rec.Width || again.Height != rec.Height || again.Depth != depth || len(again.Boxes) != len(rec.Boxes) {
			t.Fatalf("record %+v came back as %+v", rec, again)
		}
		for i, b := range rec.Boxes {
			g := again.Boxes[i]
			// (v+1)-1 is v to within one rounding of v+1 (IEEE 754 round
			// to nearest, common practice).
			near := func(got, want float64) bool { return math.Abs(got-want) <= 0x1p-52*math.Max(1, math.Abs(want)+1) }
			if g.Class != b.Class || g.Pose != b.Pose || g.Truncated != b.Truncated || g.Difficult != b.Difficult ||
				!near(g.Box.X0, b.Box.X0) || !near(g.Box.Y0, b.Box.Y0) || g.Box.X1 != b.Box.X1 || g.Box.Y1 != b.Box.Y1 {
				t.Fatalf("box %+v came back as %+v", b, g)
			}
		}
	})
}

// BenchmarkReadImageXML reads 1,000 per-image XML files of four objects
// each per iteration.
func BenchmarkReadImageXML(b *testing.B) {
	files := make([][]byte, 1000)
	for i := range files {
		rec := ImageRecord{Name: fmt.Sprintf("img%04d.jpg", i), Width: 640, Height: 480}
		for k := range 4 {
			x := float64(i%500 + k*10)
			rec.Boxes = append(rec.Boxes, BoxRecord{Class: "class" + strconv.Itoa(k), Box: project.Box{X0: x, Y0: x / 2, X1: x + 33.5, Y1: x/2 + 40}, Difficult: k == 3})
		}
		var buf bytes.Buffer
		if err := WriteImageXML(&buf, rec); err != nil {
			b.Fatal(err)
		}
		files[i] = buf.Bytes()
	}
	b.ReportAllocs()
	for b.Loop() {
		for _, data := range files {
			if _, err := ReadImageXML(bytes.NewReader(data), "b.xml"); err != nil {
				b.Fatal(err)
			}
		}
	}
}
