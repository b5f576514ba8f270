package formats

// Corner/size JSON: one JSON object with three arrays,
//
//	images:      {id, file_name, width, height}
//	categories:  {id, name}
//	annotations: {id, image_id, category_id, bbox: [x, y, width, height],
//	              area, iscrowd}
//
// with bbox in continuous pixel coordinates, x,y the top-left corner. Fields
// this package does not use (info, licenses, segmentation, ...) are ignored.
// Its prediction-list variant is a JSON array of {image_id | file_name,
// category_id | category, bbox, score}.

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"

	"boxwright/project"
)

// toBox converts a corner/size bbox [x, y, w, h] to a project.Box. Both use
// continuous pixel coordinates with (0,0) the top-left corner of the
// top-left pixel, so the conversion is x0 = x, y0 = y, x1 = x + w,
// y1 = y + h. Example: bbox [10, 20, 30, 40] is Box{10, 20, 40, 60}, whose
// area is 30*40 = 1200.
func toBox(x, y, w, h float64) project.Box {
	return project.Box{X0: x, Y0: y, X1: x + w, Y1: y + h}
}

// fromBox is the inverse of toBox: Box{10, 20, 40, 60} is bbox
// [10, 20, 30, 40] (w = 40-10, h = 60-20).
func fromBox(b project.Box) (x, y, w, h float64) {
	return b.X0, b.Y0, b.X1 - b.X0, b.Y1 - b.Y0
}

// ---------------------------------------------------------------------------
// Field types that remember whether they were present and well-formed. They
// never return an error from UnmarshalJSON, so that the caller can report the
// problem with its own position and words.

// jsonInt is an integer field.
type jsonInt struct {
	v   int64
	set bool // present, not null, an integer
	bad bool // present but not an integer
}

func (n *jsonInt) UnmarshalJSON(b []byte) error {
	*n = jsonInt{}
	if string(b) == "null" {
		return nil
	}
	v, ok := parseJSONInt(b)
	if !ok {
		n.bad = true
		return nil
	}
	n.v, n.set = v, true
	return nil
}

// parseJSONInt parses an integer without fraction or exponent that fits in
// int64.
func parseJSONInt(b []byte) (int64, bool) {
	neg := false
	if len(b) > 0 && b[0] == '-' {
		neg, b = true, b[1:]
	}
	if len(b) == 0 || len(b) > 19 {
		return 0, false
	}
	var u uint64
	for _, c := range b {
		if c < '0' || c > '9' {
			return 0, false
		}
		u = u*10 + uint64(c-'0')
	}
	if neg {
		if u > 1<<63 {
			return 0, false
		}
		return -int64(u), true
	}
	if u > math.MaxInt64 {
		return 0, false
	}
	return int64(u), true
}

// jsonFloat is a number field.
type jsonFloat struct {
	v   float64
	set bool // present, not null, a finite number
	bad bool // present but not a number, or too large for float64
}

func (f *jsonFloat) UnmarshalJSON(b []byte) error {
	*f = jsonFloat{}
	if string(b) == "null" {
		return nil
	}
	v, ok := parseJSONFloat(b)
	if !ok {
		f.bad = true
		return nil
	}
	f.v, f.set = v, true
	return nil
}

// parseJSONFloat parses a JSON number (the input is known to be valid JSON)
// and reports false for anything else or for a number beyond float64.
func parseJSONFloat(b []byte) (float64, bool) {
	if len(b) == 0 || (b[0] != '-' && (b[0] < '0' || b[0] > '9')) {
		return 0, false
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false
	}
	return v, true
}

// jsonBBox is a bbox field: an array of exactly four finite numbers.
type jsonBBox struct {
	v   [4]float64
	set bool   // present and not null
	msg string // what is wrong, if anything
}

func (bb *jsonBBox) UnmarshalJSON(b []byte) error {
	*bb = jsonBBox{}
	if string(b) == "null" {
		return nil
	}
	bb.set = true
	b = bytes.TrimSpace(b)
	if len(b) < 2 || b[0] != '[' || b[len(b)-1] != ']' {
		bb.msg = "must be an array of 4 numbers [x, y, width, height]"
		return nil
	}
	inner := bytes.TrimSpace(b[1 : len(b)-1])
	n := 0
	for len(inner) > 0 {
		var elem []byte
		if i := bytes.IndexByte(inner, ','); i >= 0 {
			elem, inner = inner[:i], inner[i+1:]
			if len(bytes.TrimSpace(inner)) == 0 {
				inner = nil
			}
		} else {
			elem, inner = inner, nil
		}
		elem = bytes.TrimSpace(elem)
		if n < 4 {
			v, ok := parseJSONFloat(elem)
			if !ok {
				if len(elem) > 0 && (elem[0] == '-' || (elem[0] >= '0' && elem[0] <= '9')) {
					bb.msg = fmt.Sprintf("element %d (%s) is not a finite number", n, elem)
				} else {
					bb.msg = fmt.Sprintf("element %d is not a number", n)
				}
				return nil
			}
			bb.v[n] = v
		}
		n++
	}
	if n != 4 {
		bb.msg = fmt.Sprintf("has %d elements, want 4 numbers [x, y, width, height]", n)
	}
	return nil
}

// box checks the bbox and converts it. It returns a message on failure.
func (bb *jsonBBox) box() (project.Box, string) {
	if !bb.set {
		return project.Box{}, "is missing"
	}
	if bb.msg != "" {
		return project.Box{}, bb.msg
	}
	x, y, w, h := bb.v[0], bb.v[1], bb.v[2], bb.v[3]
	switch {
	case w < 0:
		return project.Box{}, "width is negative (" + fmtNum(w) + ")"
	case w == 0:
		return project.Box{}, "width is zero"
	case h < 0:
		return project.Box{}, "height is negative (" + fmtNum(h) + ")"
	case h == 0:
		return project.Box{}, "height is zero"
	}
	b := toBox(x, y, w, h)
	if !b.Valid() {
		return project.Box{}, "corners are out of range or the size vanishes at this position: " + b.String()
	}
	return b, ""
}

func fmtNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// skipValue consumes any JSON value without keeping it.
type skipValue struct{}

func (*skipValue) UnmarshalJSON([]byte) error { return nil }

// ---------------------------------------------------------------------------
// Streaming reader shared by both layouts.

// cjReader walks a corner/size JSON document held in data.
type cjReader struct {
	file string
	data []byte
	dec  *json.Decoder
}

// estimate counts the occurrences of key in data, which bounds the number
// of records that use it, capped to keep a hostile file from reserving
// much.
func estimate(data []byte, key string) int {
	return min(bytes.Count(data, []byte(key)), len(data)/16+1)
}

func newCJReader(r io.Reader, file string) (*cjReader, error) {
	var buf bytes.Buffer
	switch s := r.(type) {
	case interface{ Len() int }: // bytes.Reader, strings.Reader, bytes.Buffer
		buf.Grow(s.Len() + bytes.MinRead)
	case interface{ Stat() (os.FileInfo, error) }: // os.File
		if fi, err := s.Stat(); err == nil && fi.Mode().IsRegular() && fi.Size() > 0 && fi.Size() < 1<<32 {
			buf.Grow(int(fi.Size()) + bytes.MinRead)
		}
	}
	_, err := buf.ReadFrom(r)
	data := buf.Bytes()
	if err != nil {
		return nil, &PositionError{File: file, Msg: "cannot read the file: " + err.Error()}
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	return &cjReader{file: file, data: data, dec: dec}, nil
}

// line returns the 1-based line of a byte offset.
func (p *cjReader) line(off int64) int {
	if off < 0 {
		off = 0
	}
	if off > int64(len(p.data)) {
		off = int64(len(p.data))
	}
	return bytes.Count(p.data[:off], []byte{'\n'}) + 1
}

// errAt builds a PositionError at a byte offset.
func (p *cjReader) errAt(off int64, path, field, msg string) *PositionError {
	return &PositionError{File: p.file, Line: p.line(off), Path: path, Field: field, Msg: msg}
}

// fail converts an error from the decoder into a PositionError. Syntax
// errors are located by validating the whole document, which gives an
// absolute byte offset.
func (p *cjReader) fail(err error, path string) *PositionError {
	var pe *PositionError
	if errors.As(err, &pe) {
		return pe
	}
	var se *json.SyntaxError
	if errors.As(err, &se) || errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
		var all skipValue
		if verr := json.Unmarshal(p.data, &all); verr != nil {
			var vse *json.SyntaxError
			if errors.As(verr, &vse) {
				return p.errAt(vse.Offset-1, path, "", "malformed JSON: "+vse.Error())
			}
		}
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			return p.errAt(int64(len(p.data)), path, "", "malformed JSON: unexpected end of input")
		}
		return p.errAt(p.dec.InputOffset(), path, "", "malformed JSON: "+err.Error())
	}
	return p.errAt(p.dec.InputOffset(), path, "", err.Error())
}

// valueStart returns the offset of the next value, skipping white space and
// one separating comma.
func (p *cjReader) valueStart() int64 {
	off := p.dec.InputOffset()
	comma := false
	for off < int64(len(p.data)) {
		switch p.data[off] {
		case ' ', '\t', '\n', '\r':
		case ',', ':':
			if comma {
				return off
			}
			comma = true
		default:
			return off
		}
		off++
	}
	return off
}

// array reads the opening bracket of an array named path and calls elem for
// each element with its index and start offset; elem decodes the element.
func (p *cjReader) array(path string, elem func(k int, start int64) error) error {
	start := p.valueStart()
	tok, err := p.dec.Token()
	if err != nil {
		return p.fail(err, path)
	}
	if tok != json.Delim('[') {
		if path == "" {
			return p.errAt(start, "", "", "the file must hold one JSON array of predictions, not "+tokenKind(tok))
		}
		return p.errAt(start, path, "", "must be an array, not "+tokenKind(tok))
	}
	for k := 0; p.dec.More(); k++ {
		if err := elem(k, p.valueStart()); err != nil {
			return err
		}
	}
	if _, err := p.dec.Token(); err != nil {
		return p.fail(err, path)
	}
	return nil
}

// element decodes one array element, which starts at start, into v and
// reports a PositionError for malformed JSON, a non-object or a field of the
// wrong type.
func (p *cjReader) element(v any, path func() string, start int64) error {
	// The decoder measures type-error offsets from just after the comma.
	raw := p.dec.InputOffset()
	if raw < int64(len(p.data)) && p.data[raw] == ',' {
		raw++
	}
	err := p.dec.Decode(v)
	var ute *json.UnmarshalTypeError
	if err != nil && !errors.As(err, &ute) {
		return p.fail(err, path())
	}
	if start < int64(len(p.data)) && p.data[start] != '{' {
		return p.errAt(start, path(), "", "must be an object, not "+kindOfByte(p.data[start]))
	}
	if ute != nil {
		// Only the string fields use the decoder's own conversion.
		return p.errAt(raw+ute.Offset, path(), ute.Field, "must be a string, not "+ute.Value)
	}
	return nil
}

// end checks that nothing but white space follows the top-level value.
func (p *cjReader) end() error {
	start := p.valueStart()
	tok, err := p.dec.Token()
	if err == io.EOF {
		return nil
	}
	if err != nil {
		return p.fail(err, "")
	}
	return p.errAt(start, "", "", "unexpected "+tokenKind(tok)+" after the top-level value")
}

func tokenKind(tok json.Token) string {
	switch t := tok.(type) {
	case json.Delim:
		switch t {
		case '{':
			return "an object"
		case '[':
			return "an array"
		}
		return "'" + t.String() + "'"
	case string:
		return "a string"
	case float64, json.Number:
		return "a number"
	case bool:
		return "a boolean"
	case nil:
		return "null"
	}
	return "a value"
}

func kindOfByte(c byte) string {
	switch c {
	case '{':
		return "an object"
	case '[':
		return "an array"
	case '"':
		return "a string"
	case 't', 'f':
		return "a boolean"
	case 'n':
		return "null"
	}
	return "a number"
}

// whereList builds many position strings in one allocation.
type whereList struct {
	buf  []byte
	ends []int
}

func (w *whereList) add(prefix string, k int) {
	w.buf = append(w.buf, prefix...)
	w.buf = strconv.AppendInt(w.buf, int64(k), 10)
	w.buf = append(w.buf, ']')
	w.ends = append(w.ends, len(w.buf))
}

// strings returns the position strings in the order they were added.
func (w *whereList) strings() []string {
	s := string(w.buf)
	out := make([]string, len(w.ends))
	prev := 0
	for i, e := range w.ends {
		out[i] = s[prev:e]
		prev = e
	}
	return out
}

// ---------------------------------------------------------------------------
// Dataset reading.

type cjImageIn struct {
	ID       jsonInt `json:"id"`
	FileName string  `json:"file_name"`
	Width    jsonInt `json:"width"`
	Height   jsonInt `json:"height"`
}

type cjCategoryIn struct {
	ID   jsonInt `json:"id"`
	Name string  `json:"name"`
}

type cjAnnotationIn struct {
	ID         jsonInt   `json:"id"`
	ImageID    jsonInt   `json:"image_id"`
	CategoryID jsonInt   `json:"category_id"`
	BBox       jsonBBox  `json:"bbox"`
	IsCrowd    jsonInt   `json:"iscrowd"`
	Score      jsonFloat `json:"score"`
}

// cjAnn is a checked annotation waiting for its references to be resolved.
type cjAnn struct {
	id, imageID, catID int64
	box                project.Box
	score              float64
	hasScore, crowd    bool
	start              int64
}

type cjImg struct {
	id            int64
	name          string
	width, height int
	start         int64
}

type cjCat struct {
	id    int64
	name  string
	start int64
}

// intField checks a required integer field and returns a message on failure.
func intField(n jsonInt) string {
	switch {
	case n.bad:
		return "must be an integer"
	case !n.set:
		return "is missing"
	}
	return ""
}

// ReadCornerJSON reads a corner/size JSON dataset: one object with the
// arrays images, categories and annotations. Boxes go to their image's
// record in file order, and Dataset.Classes lists the categories in file
// order. Boxes are not clipped to their image. Every error is a
// *PositionError naming the file, the JSON path and the field.
func ReadCornerJSON(r io.Reader, file string) (*Dataset, error) {
	p, err := newCJReader(r, file)
	if err != nil {
		return nil, err
	}
	// Estimate the array sizes from the field names so that the slices
	// grow once.
	var (
		imgs = make([]cjImg, 0, estimate(p.data, `"file_name"`))
		cats []cjCat
		anns = make([]cjAnn, 0, estimate(p.data, `"bbox"`))
		seen = map[string]bool{}
	)
	start := p.valueStart()
	tok, err := p.dec.Token()
	if err != nil {
		if err == io.EOF {
			return nil, p.errAt(0, "", "", "the file is empty; want one JSON object with images, categories and annotations")
		}
		return nil, p.fail(err, "")
	}
	if tok != json.Delim('{') {
		return nil, p.errAt(start, "", "", "the file must hold one JSON object, not "+tokenKind(tok))
	}
	for p.dec.More() {
		kstart := p.valueStart()
		tok, err := p.dec.Token()
		if err != nil {
			return nil, p.fail(err, "")
		}
		key, _ := tok.(string)
		switch key {
		case "images", "categories", "annotations":
			if seen[key] {
				return nil, p.errAt(kstart, key, "", "appears twice in the top-level object")
			}
			seen[key] = true
		}
		switch key {
		case "images":
			err = p.array(key, func(k int, start int64) error {
				path := func() string { return "images[" + strconv.Itoa(k) + "]" }
				var in cjImageIn
				if err := p.element(&in, path, start); err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if in.FileName == "" {
					return p.errAt(start, path(), "file_name", "is missing or empty")
				}
				if m := intField(in.Width); m != "" {
					return p.errAt(start, path(), "width", m)
				}
				if m := intField(in.Height); m != "" {
					return p.errAt(start, path(), "height", m)
				}
				if in.Width.v <= 0 || in.Width.v > math.MaxInt32 {
					return p.errAt(start, path(), "width", "must be a positive number of pixels, not "+strconv.FormatInt(in.Width.v, 10))
				}
				if in.Height.v <= 0 || in.Height.v > math.MaxInt32 {
					return p.errAt(start, path(), "height", "must be a positive number of pixels, not "+strconv.FormatInt(in.Height.v, 10))
				}
				imgs = append(imgs, cjImg{in.ID.v, in.FileName, int(in.Width.v), int(in.Height.v), start})
				return nil
			})
		case "categories":
			err = p.array(key, func(k int, start int64) error {
				path := func() string { return "categories[" + strconv.Itoa(k) + "]" }
				var in cjCategoryIn
				if err := p.element(&in, path, start); err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if in.Name == "" {
					return p.errAt(start, path(), "name", "is missing or empty")
				}
				cats = append(cats, cjCat{in.ID.v, in.Name, start})
				return nil
			})
		case "annotations":
			var in cjAnnotationIn
			err = p.array(key, func(k int, start int64) error {
				path := func() string { return "annotations[" + strconv.Itoa(k) + "]" }
				in = cjAnnotationIn{}
				if err := p.element(&in, path, start); err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if m := intField(in.ImageID); m != "" {
					return p.errAt(start, path(), "image_id", m)
				}
				if m := intField(in.CategoryID); m != "" {
					return p.errAt(start, path(), "category_id", m)
				}
				b, m := in.BBox.box()
				if m != "" {
					return p.errAt(start, path(), "bbox", m)
				}
				if in.IsCrowd.bad || (in.IsCrowd.set && in.IsCrowd.v != 0 && in.IsCrowd.v != 1) {
					return p.errAt(start, path(), "iscrowd", "must be 0 or 1")
				}
				if in.Score.bad {
					return p.errAt(start, path(), "score", "must be a finite number")
				}
				if in.Score.set && (in.Score.v < 0 || in.Score.v > 1) {
					return p.errAt(start, path(), "score", "must be between 0 and 1, not "+fmtNum(in.Score.v))
				}
				anns = append(anns, cjAnn{
					id: in.ID.v, imageID: in.ImageID.v, catID: in.CategoryID.v,
					box: b, score: in.Score.v, hasScore: in.Score.set,
					crowd: in.IsCrowd.v == 1, start: start,
				})
				return nil
			})
		default:
			var skip skipValue
			if err := p.dec.Decode(&skip); err != nil {
				return nil, p.fail(err, key)
			}
		}
		if err != nil {
			return nil, err
		}
	}
	if _, err := p.dec.Token(); err != nil {
		return nil, p.fail(err, "")
	}
	if err := p.end(); err != nil {
		return nil, err
	}
	for _, key := range []string{"images", "categories", "annotations"} {
		if !seen[key] {
			return nil, p.errAt(0, key, "", "is missing; the top-level object needs the arrays images, categories and annotations")
		}
	}
	return p.resolve(imgs, cats, anns)
}

// resolve checks uniqueness and references and builds the Dataset.
func (p *cjReader) resolve(imgs []cjImg, cats []cjCat, anns []cjAnn) (*Dataset, error) {
	ds := &Dataset{Classes: make([]string, len(cats)), Images: make([]ImageRecord, len(imgs))}

	catIndex := make(map[int64]int, len(cats))
	catName := make(map[string]int, len(cats))
	for i, c := range cats {
		path := "categories[" + strconv.Itoa(i) + "]"
		if j, dup := catIndex[c.id]; dup {
			return nil, p.errAt(c.start, path, "id", fmt.Sprintf("duplicate category id %d (also categories[%d])", c.id, j))
		}
		if j, dup := catName[c.name]; dup {
			return nil, p.errAt(c.start, path, "name", fmt.Sprintf("duplicate category name %q (also categories[%d])", c.name, j))
		}
		catIndex[c.id], catName[c.name] = i, i
		ds.Classes[i] = c.name
	}

	imgIndex := make(map[int64]int, len(imgs))
	imgName := make(map[string]int, len(imgs))
	var iw whereList
	for i, im := range imgs {
		path := "images[" + strconv.Itoa(i) + "]"
		if j, dup := imgIndex[im.id]; dup {
			return nil, p.errAt(im.start, path, "id", fmt.Sprintf("duplicate image id %d (also images[%d])", im.id, j))
		}
		if j, dup := imgName[im.name]; dup {
			return nil, p.errAt(im.start, path, "file_name", fmt.Sprintf("duplicate file name %q (also images[%d])", im.name, j))
		}
		imgIndex[im.id], imgName[im.name] = i, i
		iw.add(p.file+": images[", i)
	}
	for i, w := range iw.strings() {
		im := imgs[i]
		ds.Images[i] = ImageRecord{Name: im.name, Width: im.width, Height: im.height, Where: w}
	}

	// Check the annotations, replace their ids by indexes and count boxes
	// per image.
	if k, j, dup := duplicateID(anns); dup {
		a := anns[k]
		return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "id", fmt.Sprintf("duplicate annotation id %d (also annotations[%d])", a.id, j))
	}
	counts := make([]int, len(imgs))
	for k := range anns {
		a := &anns[k]
		ii, ok := imgIndex[a.imageID]
		if !ok {
			return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "image_id", fmt.Sprintf("unknown image %d (annotation id %d)", a.imageID, a.id))
		}
		ci, ok := catIndex[a.catID]
		if !ok {
			return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "category_id", fmt.Sprintf("unknown category %d (annotation id %d)", a.catID, a.id))
		}
		a.imageID, a.catID = int64(ii), int64(ci)
		counts[ii]++
	}

	// One backing array for all boxes, cut per image.
	all := make([]BoxRecord, len(anns))
	off := 0
	for i, n := range counts {
		if n > 0 {
			ds.Images[i].Boxes = all[off : off : off+n]
		}
		off += n
	}
	var aw whereList
	aw.buf = make([]byte, 0, len(anns)*(len(p.file)+24))
	aw.ends = make([]int, 0, len(anns))
	for k := range anns {
		aw.add(p.file+": annotations[", k)
	}
	wheres := aw.strings()
	for k, a := range anns {
		im := &ds.Images[a.imageID]
		im.Boxes = append(im.Boxes, BoxRecord{
			Class: ds.Classes[a.catID], Box: a.box,
			Score: a.score, HasScore: a.hasScore, Crowd: a.crowd,
			Where: wheres[k],
		})
	}
	return ds, nil
}

// duplicateID reports the first annotation k whose id repeats that of an
// earlier annotation j. Dense id ranges, the usual case, use a bit set.
func duplicateID(anns []cjAnn) (k, j int, dup bool) {
	if len(anns) == 0 {
		return 0, 0, false
	}
	lo, hi := anns[0].id, anns[0].id
	for _, a := range anns {
		lo, hi = min(lo, a.id), max(hi, a.id)
	}
	if span := uint64(hi - lo); span < uint64(8*len(anns)) {
		bits := make([]uint64, span/64+1)
		for k, a := range anns {
			d := uint64(a.id - lo)
			if bits[d/64]&(1<<(d%64)) != 0 {
				for j := range k {
					if anns[j].id == a.id {
						return k, j, true
					}
				}
			}
			bits[d/64] |= 1 << (d % 64)
		}
		return 0, 0, false
	}
	seen := make(map[int64]int, len(anns))
	for k, a := range anns {
		if j, ok := seen[a.id]; ok {
			return k, j, true
		}
		seen[a.id] = k
	}
	return 0, 0, false
}

// ---------------------------------------------------------------------------
// Prediction list.

// Prediction is one record of a corner/size JSON prediction list: a box a
// model proposed for an image, with its class and score. The image is named
// by ImageID or by FileName, the class by CategoryID or by Category; the
// importer resolves them against the project.
type Prediction struct {
	ImageID    int64  // 0 when FileName is used
	FileName   string // "" when ImageID is used
	CategoryID int64  // 0 when Category (a name) is used
	Category   string // "" when CategoryID is used
	Box        project.Box
	Score      float64 // in [0,1]
	Where      string  // position for messages, e.g. "preds.json: [17]"
}

type cjPredictionIn struct {
	ImageID    jsonInt   `json:"image_id"`
	FileName   string    `json:"file_name"`
	CategoryID jsonInt   `json:"category_id"`
	Category   string    `json:"category"`
	BBox       jsonBBox  `json:"bbox"`
	Score      jsonFloat `json:"score"`
}

// ReadPredictionList reads a corner/size JSON prediction list: a JSON array
// of objects {image_id | file_name, category_id | category,
// bbox: [x, y, width, height], score}. Ids, when given, must be positive
// (0 means "not given" in Prediction). Scores must be finite and within
// [0,1]. Boxes are not clipped. Every error is a *PositionError whose Path
// is the record's index, such as "[17]".
func ReadPredictionList(r io.Reader, file string) ([]Prediction, error) {
	p, err := newCJReader(r, file)
	if err != nil {
		return nil, err
	}
	if len(bytes.TrimSpace(p.data)) == 0 {
		return nil, p.errAt(0, "", "", "the file is empty; want a JSON array of predictions")
	}
	var (
		preds []Prediction
		wl    whereList
		in    cjPredictionIn
	)
	err = p.array("", func(k int, start int64) error {
		path := func() string { return "[" + strconv.Itoa(k) + "]" }
		in = cjPredictionIn{}
		if err := p.element(&in, path, start); err != nil {
			return err
		}
		if in.ImageID.bad || (in.ImageID.set && in.ImageID.v <= 0) {
			return p.errAt(start, path(), "image_id", "must be a positive integer")
		}
		if !in.ImageID.set && in.FileName == "" {
			return p.errAt(start, path(), "", "names no image: want image_id or file_name")
		}
		if in.CategoryID.bad || (in.CategoryID.set && in.CategoryID.v <= 0) {
			return p.errAt(start, path(), "category_id", "must be a positive integer")
		}
		if !in.CategoryID.set && in.Category == "" {
			return p.errAt(start, path(), "", "names no class: want category_id or category")
		}
		b, m := in.BBox.box()
		if m != "" {
			return p.errAt(start, path(), "bbox", m)
		}
		switch {
		case in.Score.bad:
			return p.errAt(start, path(), "score", "must be a finite number")
		case !in.Score.set:
			return p.errAt(start, path(), "score", "is missing")
		case in.Score.v < 0 || in.Score.v > 1:
			return p.errAt(start, path(), "score", "must be between 0 and 1, not "+fmtNum(in.Score.v))
		}
		preds = append(preds, Prediction{
			ImageID: in.ImageID.v, FileName: in.FileName,
			CategoryID: in.CategoryID.v, Category: in.Category,
			Box: b, Score: in.Score.v,
		})
		wl.add(p.file+": [", k)
		return nil
	})
	if err != nil {
		return nil, err
	}
	if err := p.end(); err != nil {
		return nil, err
	}
	for i, w := range wl.strings() {
		preds[i].Where = w
	}
	return preds, nil
}

// ---------------------------------------------------------------------------
// Writing.

// WriteCornerJSON writes ds as corner/size JSON. Images, categories and
// annotations get ids from 1 in the order of ds.Images, ds.Classes and the
// boxes; area is width*height; iscrowd is 1 for crowd boxes; a box with a
// score carries it as "score". Numbers are written so that they read back
// exactly, and the output depends only on ds. It refuses a dataset that
// ReadCornerJSON would reject (unknown or duplicate classes, duplicate or
// empty image names, non-positive image sizes, invalid boxes).
func WriteCornerJSON(w io.Writer, ds *Dataset) error {
	if ds == nil {
		return errors.New("write corner/size JSON: no dataset")
	}
	classID := make(map[string]int, len(ds.Classes))
	for i, c := range ds.Classes {
		if c == "" {
			return fmt.Errorf("write corner/size JSON: class %d has no name", i+1)
		}
		if _, dup := classID[c]; dup {
			return fmt.Errorf("write corner/size JSON: class %q is listed twice", c)
		}
		classID[c] = i + 1
	}
	names := make(map[string]bool, len(ds.Images))
	for _, im := range ds.Images {
		if im.Name == "" {
			return errors.New("write corner/size JSON: an image has no file name")
		}
		if names[im.Name] {
			return fmt.Errorf("write corner/size JSON: image %q is listed twice", im.Name)
		}
		names[im.Name] = true
		if im.Width <= 0 || im.Height <= 0 || im.Width > math.MaxInt32 || im.Height > math.MaxInt32 {
			return fmt.Errorf("write corner/size JSON: image %q: size %dx%d is not positive", im.Name, im.Width, im.Height)
		}
		for j, b := range im.Boxes {
			if _, ok := classID[b.Class]; !ok {
				return fmt.Errorf("write corner/size JSON: image %q box %d: class %q is not in the class list", im.Name, j+1, b.Class)
			}
			x, y, bw, bh := fromBox(b.Box)
			if !b.Box.Valid() || !toBox(x, y, bw, bh).Valid() || math.IsInf(bw, 0) || math.IsInf(bh, 0) || math.IsInf(bw*bh, 0) {
				return fmt.Errorf("write corner/size JSON: image %q box %d: %v is not a valid box", im.Name, j+1, b.Box)
			}
			if b.HasScore && !(b.Score >= 0 && b.Score <= 1) {
				return fmt.Errorf("write corner/size JSON: image %q box %d: score %v is not within [0,1]", im.Name, j+1, b.Score)
			}
		}
	}

	bw := bufio.NewWriterSize(w, 64<<10)
	var line []byte
	flushLine := func(last bool) {
		if !last {
			line = append(line, ',')
		}
		line = append(line, '\n')
		bw.Write(line)
		line = line[:0]
	}
	bw.WriteString("{\n  \"images\": [\n")
	for i, im := range ds.Images {
		line = append(line, `    {"id": `...)
		line = strconv.AppendInt(line, int64(i+1), 10)
		line = append(line, `, "file_name": `...)
		line = appendJSONString(line, im.Name)
		line = append(line, `, "width": `...)
		line = strconv.AppendInt(line, int64(im.Width), 10)
		line = append(line, `, "height": `...)
		line = strconv.AppendInt(line, int64(im.Height), 10)
		line = append(line, '}')
		flushLine(i == len(ds.Images)-1)
	}
	bw.WriteString("  ],\n  \"categories\": [\n")
	for i, c := range ds.Classes {
		line = append(line, `    {"id": `...)
		line = strconv.AppendInt(line, int64(i+1), 10)
		line = append(line, `, "name": `...)
		line = appendJSONString(line, c)
		line = append(line, '}')
		flushLine(i == len(ds.Classes)-1)
	}
	bw.WriteString("  ],\n  \"annotations\": [\n")
	total := 0
	for _, im := range ds.Images {
		total += len(im.Boxes)
	}
	id := 0
	for i, im := range ds.Images {
		for _, b := range im.Boxes {
			id++
			x, y, w, h := fromBox(b.Box)
			line = append(line, `    {"id": `...)
			line = strconv.AppendInt(line, int64(id), 10)
			line = append(line, `, "image_id": `...)
			line = strconv.AppendInt(line, int64(i+1), 10)
			line = append(line, `, "category_id": `...)
			line = strconv.AppendInt(line, int64(classID[b.Class]), 10)
			line = append(line, `, "bbox": [`...)
			for k, v := range [4]float64{x, y, w, h} {
				if k > 0 {
					line = append(line, ", "...)
				}
				line = appendJSONFloat(line, v)
			}
			line = append(line, `], "area": `...)
			line = appendJSONFloat(line, w*h)
			line = append(line, `, "iscrowd": `...)
			if b.Crowd {
				line = append(line, '1')
			} else {
				line = append(line, '0')
			}
			if b.HasScore {
				line = append(line, `, "score": `...)
				line = appendJSONFloat(line, b.Score)
			}
			line = append(line, '}')
			flushLine(id == total)
		}
	}
	bw.WriteString("  ]\n}\n")
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write corner/size JSON: %w", err)
	}
	return nil
}

// appendJSONString appends s as a JSON string.
func appendJSONString(b []byte, s string) []byte {
	q, err := json.Marshal(s)
	if err != nil { // cannot happen for a string
		return append(b, `""`...)
	}
	return append(b, q...)
}

// appendJSONFloat appends a finite float the way encoding/json does: the
// shortest decimal that reads back to the same float64, in plain notation
// unless very small or very large.
func appendJSONFloat(b []byte, v float64) []byte {
	if v == 0 {
		return append(b, '0')
	}
	abs := math.Abs(v)
	format := byte('f')
	if abs < 1e-6 || abs >= 1e21 {
		format = 'e'
	}
	return strconv.AppendFloat(b, v, format, -1, 64)
}
