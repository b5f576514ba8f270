package formats

import (
	"bytes"
	"errors"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// readers names every reader of this package with a function that reads
// one file through it, as the importers do (OpenFile, then the reader).
var readers = []struct {
	name string
	read func(f io.Reader, name string) error
}{
	{"corner/size JSON", func(f io.Reader, name string) error { _, err := ReadCornerJSON(f, name); return err }},
	{"prediction list", func(f io.Reader, name string) error { _, err := ReadPredictionList(f, name); return err }},
	{"per-image XML", func(f io.Reader, name string) error { _, err := ReadImageXML(f, name); return err }},
	{"class names", func(f io.Reader, name string) error { _, err := ReadClassNames(f, name); return err }},
	{"centre-normalised text", func(f io.Reader, name string) error {
		_, err := ReadCentreText(f, name, 640, 480, []string{"a"})
		return err
	}},
	{"prediction CSV", func(f io.Reader, name string) error { _, err := ReadPredictionCSV(f, name); return err }},
}

// allocated returns the bytes the Go heap handed out while f ran.
func allocated(f func()) uint64 {
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	f()
	runtime.ReadMemStats(&after)
	return after.TotalAlloc - before.TotalAlloc
}

// Issue 14, item 10: a regular file of zeros took its own size in memory
// (and the CSV reader many times it) before its first byte was looked at.
// Now every reader refuses it at the first byte, naming the file and the
// byte, with a few buffers' worth of memory. The 64 MiB file is sparse, so
// it costs no disk.
func TestReadersRefuseAFileOfZerosAtItsFirstByte(t *testing.T) {
	path := filepath.Join(t.TempDir(), "zeros.dat")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(64 << 20); err != nil {
		t.Fatal(err)
	}
	f.Close()
	for _, r := range readers {
		t.Run(r.name, func(t *testing.T) {
			var err error
			n := allocated(func() {
				f, oerr := OpenFile(path)
				if oerr != nil {
					t.Fatal(oerr)
				}
				defer f.Close()
				err = r.read(f, "zeros.dat")
			})
			var pe *PositionError
			if !errors.As(err, &pe) || pe.Line != 1 || !strings.HasPrefix(err.Error(), "zeros.dat:1: the file starts with byte 0x00") {
				t.Errorf("error %v, want zeros.dat:1: the file starts with byte 0x00 ...", err)
			}
			// Two 64 KiB buffers and the decoder's state, with room to
			// spare; before the fix this was 64 MiB or more.
			if n > 2<<20 {
				t.Errorf("reading the refused file allocated %d bytes", n)
			}
		})
	}
}

// The first bytes of a file that is not the layout's text are named, with
// a hint for a UTF-16 or compressed file.
func TestReadersNameWhatTheFileStartsWith(t *testing.T) {
	cases := []struct {
		reader int // index in readers
		in     string
		want   string
	}{
		{0, "\n\n  x{}", "f:3: the file starts with 'x' (byte 0x78), not JSON; want one JSON object"},
		{1, "\xff\xfe[\x00]\x00", "f:1: the file starts with a UTF-16 byte-order mark (bytes 0xff 0xfe), not UTF-8 JSON; save it as UTF-8"},
		{0, "\x1f\x8b\x08\x00", "f:1: the file starts with bytes 0x1f 0x8b, which begin a gzip-compressed file, not JSON; decompress it first"},
		{1, "PK\x03\x04", `f:1: the file starts with "PK", which begins a zip archive, not JSON`},
		{2, "\ufeff \r\n\t{}", "f:2: the file starts with '{' (byte 0x7b), not XML (an XML file begins with <)"},
		{2, "\xfe\xff\x00<", "f:1: the file starts with a UTF-16 byte-order mark (bytes 0xfe 0xff), not UTF-8 XML"},
		{3, "\xffcat\n", "f:1: the file starts with byte 0xff, which is not valid UTF-8; save the file as UTF-8"},
		{4, "0 0.5 0.5 0.1 0.1\n0 0.5\x00", "f:2: byte 6 of the line is byte 0x00 (NUL), which a text file does not hold"},
		{3, "cat\ndog\nca\xe9\n", "f:3: byte 3 of the line is byte 0xe9, which is not valid UTF-8"},
		{5, "image,class,x0,y0,x1,y1,score\ncaf\xe9.jpg,cat,1,2,3,4,0.5\n", "f:2: byte 4 of field 1 is byte 0xe9, which is not valid UTF-8"},
		{5, "image,class,x0,y0,x1,y1,score\na.jpg,cat,1,2,3,4,0.5\na.jpg,\x00cat,1,2,3,4,0.5\n", "f:3: byte 0x00 (NUL), which a text file does not hold"},
		{5, "\x00image", "f:1: the file starts with byte 0x00 (NUL)"},
	}
	for _, c := range cases {
		err := readers[c.reader].read(strings.NewReader(c.in), "f")
		var pe *PositionError
		if !errors.As(err, &pe) || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%s %q:\n got  %v\n want %s...", readers[c.reader].name, c.in, err, c.want)
		}
	}
}

// One record may hold MaxRecordBytes (1 MiB): a 2 MiB line, JSON element
// or CSV record is refused at its line, after two good records, without
// reading the rest of the file.
func TestReadersCapOneRecord(t *testing.T) {
	long := strings.Repeat("a", 2<<20)
	const obj = `{"id": 1, "file_name": "a.jpg", "width": 10, "height": 10}`
	const pred = `{"image_id": 1, "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}`
	cases := []struct {
		reader int
		in     string
		want   string
	}{
		{0, "{\"images\": [\n" + obj + ",\n" + `{"id": 2, "file_name": "` + long + `"}]}`, "f:3: images[1]: this value is longer than 1048576 bytes (1 MiB)"},
		{0, "{\"images\": [], \"info\": {\"x\":\n\"" + long + `"}}`, "f:2: info: this value is longer than 1048576 bytes"},
		{1, "[\n" + pred + ",\n" + pred + ",\n" + `{"segmentation": [` + strings.Repeat("1, ", 1<<20) + `1]}]`, "f:4: [2]: this value is longer than 1048576 bytes"},
		{3, "cat\ndog\n" + long + "\n", "f:3: the line is longer than 1048576 bytes (1 MiB)"},
		{4, "0 0.5 0.5 0.1 0.1\n# " + long, "f:2: the line is longer than 1048576 bytes"},
		{5, "image,class,x0,y0,x1,y1,score\na.jpg,cat,1,2,3,4,0.5\n" + long + "\n", "f:3: more than 1048576 bytes (1 MiB) since the record on line 2,"},
		// An unclosed quote makes the rest of the file one field; the limit
		// is met on a later line, and the message names the record before.
		{5, "image,class,x0,y0,x1,y1,score\n\"a.jpg,cat,1,2,3,4,0.5\n" + strings.Repeat("b.jpg,cat,1,2,3,4,0.5\n", 100000), "f:47850: more than 1048576 bytes (1 MiB) since the record on line 1,"},
	}
	for _, c := range cases {
		// The cap stops the reader: what lies after the long record is an
		// endless stream, which it must not reach.
		r := io.MultiReader(strings.NewReader(c.in), endless{})
		err := readers[c.reader].read(r, "f")
		var pe *PositionError
		if !errors.As(err, &pe) || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%s: got %v, want %s...", readers[c.reader].name, err, c.want)
		}
	}
	// A record of exactly 1 MiB is still read (the comment line).
	if _, err := ReadCentreText(strings.NewReader("#"+long[:MaxRecordBytes-1]+"\r\n0 0.5 0.5 0.1 0.1\n"), "f", 10, 10, []string{"a"}); err != nil {
		t.Errorf("a line of 1 MiB: %v", err)
	}
}

// endless yields "x" for ever; a reader given it after a record that is
// too long must stop at the record.
type endless struct{}

func (endless) Read(p []byte) (int, error) {
	for i := range p {
		p[i] = 'x'
	}
	return len(p), nil
}

// A per-image XML file may hold MaxXMLFileBytes and one element's text
// MaxNameBytes; elements the reader does not use are read past without
// being kept.
func TestReadImageXMLCaps(t *testing.T) {
	head := "<annotation>\n<filename>a.jpg</filename>\n"
	_, err := ReadImageXML(io.MultiReader(strings.NewReader(head+"<name>"), endless{}), "big.xml")
	if err == nil || !strings.HasPrefix(err.Error(), "big.xml:3: the file is larger than 16777216 bytes (16 MiB)") {
		t.Errorf("endless text: %v", err)
	}
	_, err = ReadImageXML(strings.NewReader(head+"<object>\n<name>"+strings.Repeat("é", 2049)+"</name></object></annotation>"), "n.xml")
	if err == nil || !strings.HasPrefix(err.Error(), "n.xml:4: name: <name> holds more than 4096 bytes of text") {
		t.Errorf("long name: %v", err)
	}
	// 200,000 unknown elements and 20,000 copies of <pose> in one object
	// are read past; the record is what the file says of its image.
	var b strings.Builder
	b.WriteString(head + "<size><width>4</width><height>3</height></size>\n")
	for range 200000 {
		b.WriteString("<owner><x/></owner>")
	}
	b.WriteString("\n<object><name>cat</name><bndbox><xmin>1</xmin><ymin>1</ymin><xmax>2</xmax><ymax>2</ymax></bndbox><pose>a</pose>")
	for range 20000 {
		b.WriteString("<pose>b</pose>")
	}
	b.WriteString("</object></annotation>\n")
	doc := b.String()
	n := allocated(func() { _, err = ReadImageXML(strings.NewReader(doc), "many.xml") })
	if err == nil || !strings.Contains(err.Error(), "many.xml:5: object[0].pose: <pose> appears more than once (lines 5 and 5)") {
		t.Errorf("many poses: %v", err)
	}
	t.Logf("%d bytes of XML, %d bytes allocated", len(doc), n)
	// Nesting beyond maxNesting is refused, kept or not.
	deep := "<annotation>" + strings.Repeat("<a>", maxNesting) + strings.Repeat("</a>", maxNesting) + "</annotation>"
	if _, err := ReadImageXML(strings.NewReader(deep), "deep.xml"); err == nil || !strings.Contains(err.Error(), "deep.xml:1: elements are nested more than 1000 deep") {
		t.Errorf("deep nesting: %v", err)
	}
}

// Names are capped at MaxNameBytes (4096) in every layout.
func TestReadersCapNames(t *testing.T) {
	long := strings.Repeat("n", MaxNameBytes+1)
	cases := []struct {
		reader int
		in     string
		want   string
	}{
		{0, `{"images": [{"id": 1, "file_name": "` + long + `", "width": 1, "height": 1}], "categories": [], "annotations": []}`, "f:1: images[0].file_name: is 4097 bytes long, more than the 4096 a file name may hold"},
		{0, `{"images": [], "categories": [{"id": 1, "name": "` + long + `"}], "annotations": []}`, "f:1: categories[0].name: is 4097 bytes long, more than the 4096 a class name may hold"},
		{1, `[{"file_name": "` + long + `", "category_id": 1, "bbox": [1, 2, 3, 4], "score": 0.5}]`, "f:1: [0].file_name: is 4097 bytes long"},
		{1, `[{"image_id": 1, "category": "` + long + `", "bbox": [1, 2, 3, 4], "score": 0.5}]`, "f:1: [0].category: is 4097 bytes long"},
		{3, "a\n" + long + "\n", "f:2: class name is 4097 bytes long, more than the 4096 a name may hold"},
		{5, "image,class,x0,y0,x1,y1,score\n" + long + ",cat,1,2,3,4,0.5\n", "f:2: image: is 4097 bytes long, more than the 4096 a file name may hold"},
		{5, "image,class,x0,y0,x1,y1,score\na.jpg," + long + ",1,2,3,4,0.5\n", "f:2: class: is 4097 bytes long"},
	}
	for _, c := range cases {
		err := readers[c.reader].read(strings.NewReader(c.in), "f")
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%s: got %v, want %s...", readers[c.reader].name, err, c.want)
		}
	}
	// A name of exactly 4096 bytes is read.
	if names, err := ReadClassNames(strings.NewReader(long[1:]), "f"); err != nil || len(names) != 1 {
		t.Errorf("a 4096-byte name: %v", err)
	}
}

// The JSON readers walk any nesting in fields they skip without recursing
// beyond maxNesting, and find syntax errors in skipped fields at their
// line.
func TestReadCornerJSONSkippedFields(t *testing.T) {
	deep := `{"info": ` + strings.Repeat("[", maxNesting+1) + strings.Repeat("]", maxNesting+1) + `, "images": [], "categories": [], "annotations": []}`
	if _, err := ReadCornerJSON(strings.NewReader(deep), "d.json"); err == nil || !strings.Contains(err.Error(), "d.json:1: info: arrays and objects are nested more than 1000 deep") {
		t.Errorf("deep info: %v", err)
	}
	ok := `{"info": ` + strings.Repeat("[", maxNesting) + strings.Repeat("]", maxNesting) + `, "images": [], "categories": [], "annotations": []}`
	if _, err := ReadCornerJSON(strings.NewReader(ok), "d.json"); err != nil {
		t.Errorf("nesting of 1000: %v", err)
	}
	for _, c := range []struct{ doc, want string }{
		{"{\"licenses\": [{\"a\": 1},\n{\"b\": tru}], \"images\": []}", "b.json:2: licenses: malformed JSON"},
		{"{\"licenses\": [1,\n2,]}", "b.json:2: licenses: malformed JSON: ']' (byte 0x5d) where a value should begin"},
		{"{\"licenses\": {\"a\" 1}}", "b.json:1: licenses: malformed JSON: '1' (byte 0x31) after an object key; want ':'"},
		{"{\"images\": [],\n}", "b.json:2: malformed JSON: '}' (byte 0x7d) where an object key should begin"},
		{"{\"images\": [] \"categories\": []}", `b.json:1: malformed JSON: '"' (byte 0x22) after an object member; want ',' or '}'`},
		{"{\"categories\": [\n{\"id\": 1, \"name\": \"a\"} {\"id\": 2}]}", "b.json:2: categories: malformed JSON: '{' (byte 0x7b) after an array element; want ',' or ']'"},
		{"{\"images\": [],\n\"categories\": [],\n\"annotations\": [\n", "b.json:3: annotations: malformed JSON: unexpected end of input"},
		{"{\"images\": [], \"categories\": [], \"annotations\": []}\n\n!", "b.json:3: malformed JSON: '!' (byte 0x21) after the top-level value"},
		// A long key names its value's errors clipped (found by
		// FuzzReadCornerJSON: the message quoted the whole key).
		{`{"` + strings.Repeat("k", 5000) + `": tru}`, "b.json:1: " + strings.Repeat("k", 64) + "… (5000 bytes): malformed JSON: invalid character"},
	} {
		_, err := ReadCornerJSON(strings.NewReader(c.doc), "b.json")
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q:\n got  %v\n want %s...", c.doc, err, c.want)
		}
	}
}

// A read error of the file itself names the file and line.
func TestReadersReportReadErrors(t *testing.T) {
	for i, start := range []string{"{\"images\": [\n", "[\n", "<annotation>\n"} {
		r := readers[i]
		err := r.read(io.MultiReader(strings.NewReader(start), iotestErr{}), "r")
		var pe *PositionError
		if !errors.As(err, &pe) || pe.File != "r" || !strings.Contains(err.Error(), "disk on fire") {
			t.Errorf("%s: %v", r.name, err)
		}
	}
	_, err := ReadPredictionCSV(io.MultiReader(strings.NewReader("image,class,x0,y0,x1,y1,score\n"), iotestErr{}), "r")
	if err == nil || !strings.Contains(err.Error(), "disk on fire") {
		t.Errorf("CSV: %v", err)
	}
}

type iotestErr struct{}

func (iotestErr) Read([]byte) (int, error) { return 0, errors.New("disk on fire") }

// The text checks leave good input alone: a character split by the
// reader's 64 KiB buffer is whole again in its line.
func TestLineReaderKeepsCharactersWhole(t *testing.T) {
	var b bytes.Buffer
	b.WriteString("#" + strings.Repeat("x", 64<<10-2)) // "é" straddles the buffer's end
	b.WriteString("é\n0 0.5 0.5 0.1 0.1\n")
	boxes, err := ReadCentreText(&b, "u.txt", 10, 10, []string{"ñandú"})
	if err != nil || len(boxes) != 1 || boxes[0].Where != "u.txt:2" {
		t.Errorf("boxes %+v, %v", boxes, err)
	}
}
