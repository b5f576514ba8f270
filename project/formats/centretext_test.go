package formats

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"boxwright/project"
)

// TestCentreTextWorkedExamples checks the centre-normalised convention on
// hand-worked cases. Source: the convention itself, X0 = (cx-w/2)*W etc.
// // common practice
func TestCentreTextWorkedExamples(t *testing.T) {
	classes := []string{"person", "car"}
	in := "0 0.5 0.5 0.25 0.5\r\n" +
		"# a comment line\n" +
		"\n" +
		"1 0.1 0.2 0.2 0.4 0.875\n" +
		"  1\t0 1 0.5 0.5  \n"
	got, err := ReadCentreText(strings.NewReader(in), "a.txt", 640, 480, classes)
	if err != nil {
		t.Fatal(err)
	}
	want := []BoxRecord{
		// 640×480: X0 = (0.5-0.125)*640 = 240, Y0 = (0.5-0.25)*480 = 120,
		// X1 = (0.5+0.125)*640 = 400, Y1 = (0.5+0.25)*480 = 360.
		{Class: "person", Box: project.Box{X0: 240, Y0: 120, X1: 400, Y1: 360}, Where: "a.txt:1"},
		// X0 = (0.1-0.1)*640 = 0, Y0 = (0.2-0.2)*480 = 0, X1 = 0.2*640 = 128,
		// Y1 = 0.4*480 = 192; score 0.875.
		{Class: "car", Box: project.Box{X0: 0, Y0: 0, X1: 128, Y1: 192}, Score: 0.875, HasScore: true, Where: "a.txt:4"},
		// Centre on the image's left edge, bottom edge: X0 = -0.25*640 = -160,
		// Y0 = 0.75*480 = 360, X1 = 160, Y1 = 1.25*480 = 600 (not clipped).
		{Class: "car", Box: project.Box{X0: -160, Y0: 360, X1: 160, Y1: 600}, Where: "a.txt:5"},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d boxes, want %d: %+v", len(got), len(want), got)
	}
	for i, w := range want {
		g := got[i]
		if g.Class != w.Class || g.Score != w.Score || g.HasScore != w.HasScore || g.Where != w.Where || !boxesClose(g.Box, w.Box, 1e-9) {
			t.Errorf("box %d = %+v, want %+v", i, g, w)
		}
	}

	// The inverse: Box{240,120,400,360} on 640×480 is cx = (240+400)/2/640
	// = 0.5, cy = (120+360)/2/480 = 0.5, w = 160/640 = 0.25, h = 240/480 = 0.5.
	var buf bytes.Buffer
	rec := ImageRecord{Name: "a.jpg", Width: 640, Height: 480, Boxes: []BoxRecord{
		{Class: "person", Box: project.Box{X0: 240, Y0: 120, X1: 400, Y1: 360}},
		{Class: "car", Box: project.Box{X0: 0, Y0: 0, X1: 128, Y1: 192}, Score: 0.875, HasScore: true},
	}}
	if err := WriteCentreText(&buf, rec, classes); err != nil {
		t.Fatal(err)
	}
	if g, w := buf.String(), "0 0.5 0.5 0.25 0.5\n1 0.1 0.2 0.2 0.4 0.875\n"; g != w {
		t.Errorf("written %q, want %q", g, w)
	}
}

// TestCentreTextAgainstPython writes boxes with WriteCentreText and has
// Python (Debian python3, standard library float parsing) compute
// (cx-w/2)*W, (cy-h/2)*H, (cx+w/2)*W, (cy+h/2)*H from our lines; the
// results must equal our boxes to writtenTol.
func TestCentreTextAgainstPython(t *testing.T) {
	classes := []string{"a", "b", "c"}
	rec := ImageRecord{Name: "p.jpg", Width: 1237, Height: 911, Boxes: []BoxRecord{
		{Class: "a", Box: project.Box{X0: 0, Y0: 0, X1: 1237, Y1: 911}},
		{Class: "b", Box: project.Box{X0: 1.0 / 3, Y0: 2.0 / 7, X1: 100.123456789, Y1: 500.5}, Score: 0.3, HasScore: true},
		{Class: "c", Box: project.Box{X0: 1200.75, Y0: 900.001, X1: 1236.99, Y1: 910.999}},
		{Class: "a", Box: project.Box{X0: -20, Y0: 3, X1: 40, Y1: 4}},
	}}
	var buf bytes.Buffer
	if err := WriteCentreText(&buf, rec, classes); err != nil {
		t.Fatal(err)
	}
	f := filepath.Join(t.TempDir(), "p.txt")
	if err := os.WriteFile(f, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	const script = `
import sys
path, W, H = sys.argv[1], float(sys.argv[2]), float(sys.argv[3])
names = sys.argv[4:]
with open(path) as fh:
    for line in fh:
        c = line.split()
        k = int(c[0])
        cx, cy, w, h = (float(v) for v in c[1:5])
        print(names[k], repr((cx - w / 2) * W), repr((cy - h / 2) * H), repr((cx + w / 2) * W), repr((cy + h / 2) * H))
`
	out := layoutPython(t, script, append([]string{f, strconv.Itoa(rec.Width), strconv.Itoa(rec.Height)}, classes...)...)
	names, boxes := parsePythonBoxes(t, out)
	if len(boxes) != len(rec.Boxes) {
		t.Fatalf("python found %d boxes, want %d", len(boxes), len(rec.Boxes))
	}
	for i, w := range rec.Boxes {
		if names[i] != w.Class || !boxesClose(boxes[i], w.Box, writtenTol) {
			t.Errorf("box %d: python computed %s %v, we wrote %s %v", i, names[i], boxes[i], w.Class, w.Box)
		}
	}
}

// TestCentreTextRoundTrip checks Read(Write(rec)) == rec, boxes to writtenTol
// pixels. Invented data (round trip).
func TestCentreTextRoundTrip(t *testing.T) {
	classes := []string{"person", "car", "traffic light"}
	recs := []ImageRecord{
		{Name: "empty.jpg", Width: 7, Height: 5},
		{Name: "r.jpg", Width: 4032, Height: 3024, Boxes: []BoxRecord{
			{Class: "person", Box: project.Box{X0: 0.1, Y0: 0.2, X1: 4031.9, Y1: 3023.7}},
			{Class: "car", Box: project.Box{X0: 1.0 / 3, Y0: 2.0 / 3, X1: 1000.0 / 7, Y1: 123.456789012345}, Score: 0.123456789, HasScore: true},
			{Class: "traffic light", Box: project.Box{X0: 4000, Y0: 3000, X1: 4032, Y1: 3024}, Score: 1, HasScore: true},
			{Class: "car", Box: project.Box{X0: 17, Y0: 19, X1: 17.000001, Y1: 19.5}, Score: 0, HasScore: true},
		}},
	}
	for _, rec := range recs {
		var buf bytes.Buffer
		if err := WriteCentreText(&buf, rec, classes); err != nil {
			t.Fatal(err)
		}
		got, err := ReadCentreText(bytes.NewReader(buf.Bytes()), "rt.txt", rec.Width, rec.Height, classes)
		if err != nil {
			t.Fatalf("%s: %v\n%s", rec.Name, err, buf.String())
		}
		if len(got) != len(rec.Boxes) {
			t.Fatalf("%s: %d boxes, want %d", rec.Name, len(got), len(rec.Boxes))
		}
		for i, w := range rec.Boxes {
			g := got[i]
			if g.Class != w.Class || g.HasScore != w.HasScore || g.Score != w.Score || !boxesClose(g.Box, w.Box, writtenTol) {
				t.Errorf("%s box %d: got %+v, want %+v", rec.Name, i, g, w)
			}
		}
	}

	var buf bytes.Buffer
	if err := WriteClassNames(&buf, classes); err != nil {
		t.Fatal(err)
	}
	got, err := ReadClassNames(&buf, "classes.txt")
	if err != nil || !slices.Equal(got, classes) {
		t.Errorf("class names round trip: %q, %v", got, err)
	}
}

// TestWriteCentreTextRejects checks that the writer refuses what would not
// read back.
func TestWriteCentreTextRejects(t *testing.T) {
	classes := []string{"a"}
	one := func(b BoxRecord) ImageRecord {
		return ImageRecord{Name: "x.jpg", Width: 100, Height: 100, Boxes: []BoxRecord{b}}
	}
	ok := project.Box{X0: 10, Y0: 10, X1: 20, Y1: 20}
	cases := map[string]ImageRecord{
		"unknown class":  one(BoxRecord{Class: "b", Box: ok}),
		"no image size":  {Name: "x.jpg", Boxes: []BoxRecord{{Class: "a", Box: ok}}},
		"empty box":      one(BoxRecord{Class: "a", Box: project.Box{X0: 10, Y0: 10, X1: 10, Y1: 20}}),
		"centre outside": one(BoxRecord{Class: "a", Box: project.Box{X0: 150, Y0: 10, X1: 160, Y1: 20}}),
		"wider":          one(BoxRecord{Class: "a", Box: project.Box{X0: -10, Y0: 10, X1: 110, Y1: 20}}),
		"score":          one(BoxRecord{Class: "a", Box: ok, Score: 1.5, HasScore: true}),
		"score NaN":      one(BoxRecord{Class: "a", Box: ok, Score: math.NaN(), HasScore: true}),
	}
	for name, rec := range cases {
		err := WriteCentreText(&bytes.Buffer{}, rec, classes)
		if err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if err := WriteCentreText(&bytes.Buffer{}, one(BoxRecord{Class: "a", Box: ok}), []string{"a", "a"}); err == nil {
		t.Error("duplicate class list: no error")
	}
	for _, bad := range [][]string{{""}, {" a"}, {"a\nb"}, {"a", "a"}} {
		if err := WriteClassNames(&bytes.Buffer{}, bad); err == nil {
			t.Errorf("class names %q: no error", bad)
		}
	}
}

// TestReadCentreTextErrors checks that each bad line gives a
// *PositionError naming file, line and field.
func TestReadCentreTextErrors(t *testing.T) {
	classes := []string{"a", "b", "c"}
	good := "0 0.5 0.5 0.1 0.1\n"
	cases := []struct {
		name, line string
		want       string // after "l.txt:2: "
		field      string
	}{
		{"four columns", "0 0.5 0.5 0.1", "found 4 columns, expected 5 (class_index cx cy w h) or 6 (with a score)", ""},
		{"seven columns", "0 0.5 0.5 0.1 0.1 0.9 7", "found 7 columns", ""},
		{"class text", "cat 0.5 0.5 0.1 0.1", `class_index: "cat" is not a number`, "class_index"},
		{"class fraction", "1.5 0.5 0.5 0.1 0.1", "class_index: 1.5 is not a whole number", "class_index"},
		{"class negative", "-1 0.5 0.5 0.1 0.1", "class_index: -1 is negative", "class_index"},
		{"class beyond", "3 0.5 0.5 0.1 0.1", "class_index: 3 is beyond the class-names file, which has 3 classes (indices 0..2)", "class_index"},
		{"cx text", "0 half 0.5 0.1 0.1", `cx: "half" is not a number`, "cx"},
		{"cy NaN", "0 0.5 NaN 0.1 0.1", `cy: "NaN" is not a finite number`, "cy"},
		{"w inf", "0 0.5 0.5 inf 0.1", `w: "inf" is not a finite number`, "w"},
		{"h huge", "0 0.5 0.5 0.1 1e999", `h: "1e999" is not a finite number`, "h"},
		{"cx above 1", "0 1.01 0.5 0.1 0.1", "cx: 1.01 is outside 0..1", "cx"},
		{"cy below 0", "0 0.5 -0.001 0.1 0.1", "cy: -0.001 is outside 0..1", "cy"},
		{"w zero", "0 0.5 0.5 0 0.1", "w: 0 is not greater than 0", "w"},
		{"h negative", "0 0.5 0.5 0.1 -0.0000001", "h: -0.0000001 is not greater than 0", "h"},
		{"w pixel coordinates", "0 320 240 64 48", "cx: 320 is outside 0..1 (values are relative to the image size)", "cx"},
		{"score above 1", "0 0.5 0.5 0.1 0.1 87", "score: 87 is outside 0..1", "score"},
		{"score text", "0 0.5 0.5 0.1 0.1 high", `score: "high" is not a number`, "score"},
		{"tiny box", "0 0.5 0.5 1e-300 0.1", "w: box of size 1e-300 x 0.1 is too small", "w"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			in := good + c.line + "\r\n" + good
			_, err := ReadCentreText(strings.NewReader(in), "l.txt", 640, 480, classes)
			var pe *PositionError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v (%T) is not a *PositionError", err, err)
			}
			if want := "l.txt:2: " + c.want; !strings.Contains(err.Error(), want) {
				t.Errorf("error %q, want it to contain %q", err, want)
			}
			if pe.File != "l.txt" || pe.Line != 2 || pe.Field != c.field {
				t.Errorf("position %s:%d field %q, want l.txt:2 field %q", pe.File, pe.Line, pe.Field, c.field)
			}
		})
	}

	// Within the 1e-6 tolerance values are accepted as written.
	got, err := ReadCentreText(strings.NewReader("0 1.0000005 -0.0000005 1.0000009 0.5 1.0000001\n"), "t.txt", 100, 100, classes)
	if err != nil || len(got) != 1 {
		t.Fatalf("tolerance: %v", err)
	}
	if !boxesClose(got[0].Box, project.Box{X0: 100.00005 - 50.000045, Y0: -0.00005 - 25, X1: 100.00005 + 50.000045, Y1: -0.00005 + 25}, 1e-9) {
		t.Errorf("tolerance box %v", got[0].Box)
	}

	_, err = ReadCentreText(strings.NewReader(good), "z.txt", 0, 480, classes)
	var pe *PositionError
	if !errors.As(err, &pe) || pe.File != "z.txt" {
		t.Errorf("zero width: %v", err)
	}
	_, err = ReadCentreText(strings.NewReader(good), "n.txt", 640, 480, nil)
	if err == nil || !strings.Contains(err.Error(), "n.txt:1: class_index: 0 is beyond the class-names file, which has no classes") {
		t.Errorf("no classes: %v", err)
	}
}

// TestReadClassNames checks trimming, trailing blank lines, a byte-order
// mark, and the positioned errors.
func TestReadClassNames(t *testing.T) {
	got, err := ReadClassNames(strings.NewReader("\ufeffperson\r\n  car \r\ntraffic light\n\n \r\n\n"), "classes.txt")
	if err != nil || !slices.Equal(got, []string{"person", "car", "traffic light"}) {
		t.Errorf("got %q, %v", got, err)
	}
	got, err = ReadClassNames(strings.NewReader(""), "classes.txt")
	if err != nil || len(got) != 0 {
		t.Errorf("empty file: %q, %v", got, err)
	}
	for _, c := range []struct{ in, want string }{
		{"a\n\nb\n", "classes.txt:2: blank line between class names"},
		{"a\n \n\t\nb\n", "classes.txt:2: blank line between class names"},
		{"\na\n", "classes.txt:1: blank line between class names"},
		{"a\nb\r\n c\na\n", `classes.txt:4: class name "a" appears twice (also on line 1)`},
		{"a\rb\rc\r", "classes.txt:1: line contains a carriage return"},
		{"a\n\ufeffb\n", "classes.txt:2: class name contains a byte-order mark"},
	} {
		_, err := ReadClassNames(strings.NewReader(c.in), "classes.txt")
		var pe *PositionError
		if !errors.As(err, &pe) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: error %v, want %q", c.in, err, c.want)
		}
	}
}

// errReader fails after returning its data.
type errReader struct{ data string }

func (e *errReader) Read(p []byte) (int, error) {
	if e.data == "" {
		return 0, errors.New("disk on fire")
	}
	n := copy(p, e.data)
	e.data = e.data[n:]
	return n, nil
}

// TestCentreTextReadFailure checks that a failing reader gives a
// positioned error too.
func TestCentreTextReadFailure(t *testing.T) {
	_, err := ReadCentreText(&errReader{data: "0 0.5 0.5 0.1 0.1\n"}, "f.txt", 10, 10, []string{"a"})
	var pe *PositionError
	if !errors.As(err, &pe) || !strings.Contains(err.Error(), "f.txt:2: reading: disk on fire") {
		t.Errorf("error %v", err)
	}
	_, err = ReadClassNames(&errReader{}, "c.txt")
	if !errors.As(err, &pe) || pe.File != "c.txt" {
		t.Errorf("error %v", err)
	}
}

// FuzzReadCentreText checks that no input panics; that every error is a
// *PositionError naming the file and a line of it; and that what reads is
// UTF-8 text without NUL bytes, holds valid boxes of known classes, and
// writes and reads back to the same boxes (to rounding) unless the writer
// refuses a value at the edge of the 1e-6 tolerance.
func FuzzReadCentreText(f *testing.F) {
	f.Add([]byte("0 0.5 0.5 0.25 0.5\n1 0.1 0.2 0.2 0.4 0.875\r\n# c\n\n"))
	f.Add([]byte("2 1.0000001 0 1e-300 0.5 1\n"))
	f.Add([]byte("\ufeff0 0x1p-1 .5 +0.1 5e-1\n-0 0.5 0.5 0.5 0.5 -0"))
	// The text checks.
	f.Add([]byte("\x00\x00"))
	f.Add([]byte("0 0.5 0.5 0.1 0.1\n# caf\xe9\n"))
	f.Add([]byte("# \xc3\xa9t\xc3\xa9\n1\t0.5\v0.5 0.1\f0.1 \r\n"))
	classes := []string{"a", "b", "c"}
	f.Fuzz(func(t *testing.T, data []byte) {
		boxes, err := ReadCentreText(bytes.NewReader(data), "fuzz.txt", 640, 480, classes)
		if err != nil {
			checkFuzzError(t, err, "fuzz.txt", data, 1)
			return
		}
		if !utf8.Valid(data) || bytes.IndexByte(data, 0) >= 0 {
			t.Fatalf("accepted bytes that are not UTF-8 text")
		}
		for _, b := range boxes {
			if !b.Box.Valid() || !(b.Box.X1 > b.Box.X0) || !(b.Box.Y1 > b.Box.Y0) || !slices.Contains(classes, b.Class) ||
				(b.HasScore && !(b.Score >= -centreTolerance && b.Score <= 1+centreTolerance)) {
				t.Fatalf("accepted box %+v", b)
			}
		}
		var out bytes.Buffer
		if err := WriteCentreText(&out, ImageRecord{Name: "f", Width: 640, Height: 480, Boxes: boxes}, classes); err != nil {
			if !strings.Contains(err.Error(), "outside") {
				t.Fatalf("read but cannot write: %v", err)
			}
			return
		}
		again, err := ReadCentreText(&out, "again.txt", 640, 480, classes)
		if err != nil || len(again) != len(boxes) {
			t.Fatalf("our own output: %d boxes, %v\n%s", len(again), err, out.String())
		}
		for i, b := range boxes {
			g := again[i]
			// Four products and sums of values below 641: a few units of
			// the last place of 640 (common practice).
			if g.Class != b.Class || g.HasScore != b.HasScore || g.Score != b.Score || !boxesClose(g.Box, b.Box, 1e-9) {
				t.Fatalf("box %+v came back as %+v", b, g)
			}
		}
	})
}

// FuzzReadClassNames checks that no input panics, that every error is a
// *PositionError naming the file and a line of it, and that accepted
// names are UTF-8 text, unique, within MaxNameBytes, and write and read
// back unchanged.
func FuzzReadClassNames(f *testing.F) {
	f.Add([]byte("person\r\ncar\n\n"))
	f.Add([]byte("a\n\nb"))
	f.Add([]byte("\ufeff a \n a\n"))
	// The text checks.
	f.Add([]byte("\x00"))
	f.Add([]byte("caf\xe9\n"))
	f.Add([]byte("\xef\xbb\xbf\xef\xbb\xbfa\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		names, err := ReadClassNames(bytes.NewReader(data), "fuzz.names")
		if err != nil {
			checkFuzzError(t, err, "fuzz.names", data, 1)
			return
		}
		if !utf8.Valid(data) || bytes.IndexByte(data, 0) >= 0 {
			t.Fatalf("accepted bytes that are not UTF-8 text")
		}
		for _, n := range names {
			if n == "" || len(n) > MaxNameBytes || strings.TrimSpace(n) != n {
				t.Fatalf("accepted name %q", n)
			}
		}
		var buf bytes.Buffer
		if err := WriteClassNames(&buf, names); err != nil {
			t.Fatalf("names %q read but not writable: %v", names, err)
		}
		again, err := ReadClassNames(&buf, "again")
		if err != nil || !slices.Equal(again, names) {
			t.Fatalf("names %q came back as %q, %v", names, again, err)
		}
	})
}

// BenchmarkReadCentreText reads 200,000 box lines per iteration.
func BenchmarkReadCentreText(b *testing.B) {
	var buf bytes.Buffer
	for i := range 200000 {
		cx := float64(i%997) / 997
		fmt.Fprintf(&buf, "%d %s %s %s %s\n", i%3, strconv.FormatFloat(cx, 'g', -1, 64), "0.4567", "0.0123456789", "0.25")
	}
	data := buf.Bytes()
	classes := []string{"a", "b", "c"}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		boxes, err := ReadCentreText(bytes.NewReader(data), "b.txt", 1920, 1080, classes)
		if err != nil || len(boxes) != 200000 {
			b.Fatal(err, len(boxes))
		}
	}
}
