package formats

// Per-image XML layout: one file per image,
//
//	<annotation>
//	  <filename>a.jpg</filename>
//	  <path>optional/dir/a.jpg</path>
//	  <size><width>640</width><height>480</height><depth>3</depth></size>
//	  <object>
//	    <name>cat</name>
//	    <pose>optional</pose>
//	    <truncated>0</truncated>
//	    <difficult>0</difficult>
//	    <bndbox><xmin>1</xmin><ymin>1</ymin><xmax>10</xmax><ymax>10</ymax></bndbox>
//	  </object>
//	</annotation>
//
// with box corners as 1-based inclusive pixel indices; see xmlIndicesToBox.

import (
	"bufio"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"path"
	"strconv"
	"strings"
	"unicode/utf8"

	"boxwright/project"
)

// xmlIndicesToBox converts the per-image XML corners, 1-based inclusive
// pixel indices, to a continuous box. The first pixel column is index 1 and
// covers [0,1), so xmin=1, xmax=10 covers pixels 1..10, which is [0,10):
//
//	xmin=1, ymin=1, xmax=10, ymax=10  →  Box{X0: 0, Y0: 0, X1: 10, Y1: 10}
//
// A box with xmax == xmin is one pixel wide. Decimal indices convert the
// same way (xmin=1.5 → X0=0.5).
func xmlIndicesToBox(xmin, ymin, xmax, ymax float64) project.Box {
	return project.Box{X0: xmin - 1, Y0: ymin - 1, X1: xmax, Y1: ymax}
}

// boxToXMLIndices is the inverse of xmlIndicesToBox:
//
//	Box{X0: 0, Y0: 0, X1: 10, Y1: 10}  →  xmin=1, ymin=1, xmax=10, ymax=10
//
// xmin and ymin are computed, so their float64 noise is dropped
// (0.1−1+1 is 0.09999999999999998 in float64, written as 0.1).
func boxToXMLIndices(b project.Box) (xmin, ymin, xmax, ymax float64) {
	return dropNoise(b.X0+1, math.Max(math.Abs(b.X0), 1)), dropNoise(b.Y0+1, math.Max(math.Abs(b.Y0), 1)), b.X1, b.Y1
}

// xmlNode is one element of a parsed per-image XML file, with the line its
// start tag ends on.
type xmlNode struct {
	name     string
	line     int
	text     strings.Builder
	children []*xmlNode
	// dup records, for a child name that appeared more than once, the
	// lines of its first two appearances; later ones are not kept.
	dup map[string][2]int
}

// child returns the only child element with the given name, or nil when
// there is none. Two such children are an error.
func (n *xmlNode) child(name string) (*xmlNode, error) {
	if d, ok := n.dup[name]; ok {
		return nil, fmt.Errorf("<%s> appears more than once (lines %d and %d)", name, d[0], d[1])
	}
	for _, c := range n.children {
		if c.name == name {
			return c, nil
		}
	}
	return nil, nil
}

// xmlKept lists, for each element the reader uses, the children it keeps;
// any other element is read past without being kept, so a file holds on
// to memory only for what it says about its image. Elements that are not
// keys here are leaves, whose text is kept.
var xmlKept = map[string]map[string]bool{
	"annotation": {"filename": true, "path": true, "size": true, "object": true},
	"size":       {"width": true, "height": true, "depth": true},
	"object":     {"name": true, "pose": true, "truncated": true, "difficult": true, "bndbox": true},
	"bndbox":     {"xmin": true, "ymin": true, "xmax": true, "ymax": true},
}

// value returns the trimmed text of the element.
func (n *xmlNode) value() string { return strings.TrimSpace(n.text.String()) }

// xmlReader turns a parsed tree into an ImageRecord, remembering the file
// for error messages.
type xmlReader struct {
	file string
}

func (x *xmlReader) errf(line int, p, field, format string, args ...any) *PositionError {
	return &PositionError{File: x.file, Line: line, Path: p, Field: field, Msg: fmt.Sprintf(format, args...)}
}

// field finds the single child element named field of parent. When it is
// absent and required, it reports "missing" at the parent's line.
func (x *xmlReader) field(parent *xmlNode, p, field string, required bool) (*xmlNode, error) {
	c, err := parent.child(field)
	if err != nil {
		return nil, x.errf(parent.line, p, field, "%s", err.Error())
	}
	if c == nil && required {
		return nil, x.errf(parent.line, p, field, "missing")
	}
	return c, nil
}

// number parses a required finite decimal number from the element field of
// parent.
func (x *xmlReader) number(parent *xmlNode, p, field string) (float64, error) {
	c, err := x.field(parent, p, field, true)
	if err != nil {
		return 0, err
	}
	s := c.value()
	if s == "" {
		return 0, x.errf(c.line, p, field, "missing (the element is empty)")
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return 0, x.errf(c.line, p, field, "%s is not a number", quote(s))
	}
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, x.errf(c.line, p, field, "%s is not a finite number", quote(s))
	}
	return v, nil
}

// size parses width or height (positive) or depth (non-negative) as a
// whole number.
func (x *xmlReader) size(parent *xmlNode, field string, positive bool) (int, error) {
	v, err := x.number(parent, "size", field)
	if err != nil {
		return 0, err
	}
	line := parent.line
	if c, _ := parent.child(field); c != nil {
		line = c.line
	}
	const limit = 1 << 31
	switch {
	case v != math.Trunc(v):
		return 0, x.errf(line, "size", field, "%s %v is not a whole number", field, v)
	case positive && v <= 0:
		return 0, x.errf(line, "size", field, "%s %v is not positive", field, v)
	case v < 0:
		return 0, x.errf(line, "size", field, "%s %v is negative", field, v)
	case v >= limit:
		return 0, x.errf(line, "size", field, "%s %v is larger than %d", field, v, limit-1)
	}
	return int(v), nil
}

// flag parses an optional 0/1 element; absent means false.
func (x *xmlReader) flag(parent *xmlNode, p, field string) (bool, error) {
	c, err := x.field(parent, p, field, false)
	if err != nil || c == nil {
		return false, err
	}
	switch s := c.value(); s {
	case "0":
		return false, nil
	case "1":
		return true, nil
	default:
		return false, x.errf(c.line, p, field, "%s is not 0 or 1", quote(s))
	}
}

// text returns the trimmed text of an optional element, "" when absent.
func (x *xmlReader) text(parent *xmlNode, p, field string) (string, error) {
	c, err := x.field(parent, p, field, false)
	if err != nil || c == nil {
		return "", err
	}
	return c.value(), nil
}

// xmlDoc is what parseXML keeps of a document: the root with the children
// the reader uses, the boxes of the objects read so far and the first
// error among them (reported after the image's own fields).
type xmlDoc struct {
	root   *xmlNode
	boxes  []BoxRecord
	objErr error
}

// errXMLTooLarge stops the decoder at MaxXMLFileBytes.
var errXMLTooLarge = errors.New("per-image XML: too large")

// xmlLimiter passes at most MaxXMLFileBytes to the decoder. It is an
// io.ByteReader, which the decoder reads from without a buffer of its own.
type xmlLimiter struct {
	r    *bufio.Reader
	left int64
}

func (l *xmlLimiter) ReadByte() (byte, error) {
	if l.left <= 0 {
		return 0, errXMLTooLarge
	}
	l.left--
	return l.r.ReadByte()
}

func (l *xmlLimiter) Read(p []byte) (int, error) {
	if l.left <= 0 {
		return 0, errXMLTooLarge
	}
	if int64(len(p)) > l.left {
		p = p[:l.left]
	}
	n, err := l.r.Read(p)
	l.left -= int64(n)
	return n, err
}

// parseXML reads the document as a stream. The first byte that is not
// white space must be '<'. Elements the reader does not use are read past;
// each <object> is converted to a box at its end tag and dropped, so
// memory follows the number of boxes, not the size of the file.
func (x *xmlReader) parseXML(r io.Reader) (*xmlDoc, error) {
	br := newInput(r, 4096)
	// Look at the first bytes before the decoder does, so that a file that
	// is not XML is refused by what it holds.
	for off, line := 0, 1; ; off++ {
		head, err := br.Peek(off + 1)
		if len(head) <= off {
			if err == io.EOF {
				break // only white space: "no root element" below
			}
			if err == bufio.ErrBufferFull {
				break // a long run of white space: the decoder goes on
			}
			return nil, x.errf(line, "", "", "cannot read the file: %v", err)
		}
		c := head[off]
		if c == '\n' {
			line++
		}
		if c == ' ' || c == '\t' || c == '\r' || c == '\n' {
			continue
		}
		if c != '<' {
			rest, _ := br.Peek(min(off+4, br.Buffered()))
			return nil, x.errf(line, "", "", "%s (an XML file begins with <)", startProblem(rest[off:], "XML"))
		}
		break
	}
	d := xml.NewDecoder(&xmlLimiter{r: br, left: MaxXMLFileBytes})
	d.CharsetReader = xmlCharsetReader
	doc := &xmlDoc{}
	var (
		rootName string
		rootLine int
		stack    []*xmlNode // nil for an element read past
		nObj     int
	)
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			line, _ := d.InputPos()
			if errors.Is(err, errXMLTooLarge) {
				return nil, x.errf(line, "", "", "the file is larger than %d bytes (16 MiB), more than a per-image XML file holds; is this the right file?", MaxXMLFileBytes)
			}
			var se *xml.SyntaxError
			msg := err.Error()
			if errors.As(err, &se) {
				line, msg = se.Line, se.Msg
			}
			return nil, x.errf(line, "", "", "malformed XML: %s", clipMsg(msg))
		}
		line, _ := d.InputPos()
		switch t := tok.(type) {
		case xml.StartElement:
			if len(stack) >= maxNesting {
				return nil, x.errf(line, "", "", "elements are nested more than %d deep", maxNesting)
			}
			name := t.Name.Local
			var n *xmlNode
			switch {
			case len(stack) == 0:
				if rootName != "" {
					return nil, x.errf(line, "", "", "malformed XML: a second root element <%s> after </%s>", clip(name), clip(rootName))
				}
				rootName, rootLine = name, line
				if name == "annotation" {
					n = &xmlNode{name: name, line: line}
					doc.root = n
				}
			case stack[len(stack)-1] == nil || !xmlKept[stack[len(stack)-1].name][name]:
				// Read past.
			case name == "object":
				n = &xmlNode{name: name, line: line}
			default:
				p := stack[len(stack)-1]
				if _, ok := p.dup[name]; ok {
					// A third or later copy: the message names the first two.
				} else if prev, _ := p.child(name); prev != nil {
					if p.dup == nil {
						p.dup = map[string][2]int{}
					}
					p.dup[name] = [2]int{prev.line, line}
				} else {
					n = &xmlNode{name: name, line: line}
					p.children = append(p.children, n)
				}
			}
			stack = append(stack, n)
		case xml.EndElement:
			// The decoder checks that tags match.
			n := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			if n != nil && n.name == "object" && len(stack) == 1 {
				if doc.objErr == nil {
					b, err := x.object(n, "object["+strconv.Itoa(nObj)+"]")
					if err != nil {
						doc.objErr, doc.boxes = err, nil
					} else {
						doc.boxes = append(doc.boxes, b)
					}
				}
				nObj++
			}
		case xml.CharData:
			if len(stack) == 0 {
				if len(bytes.TrimSpace(t)) != 0 {
					return nil, x.errf(line, "", "", "malformed XML: text outside the root element")
				}
				continue
			}
			n := stack[len(stack)-1]
			if n == nil || xmlKept[n.name] != nil {
				continue // the text between kept children is not used
			}
			if n.text.Len()+len(t) > MaxNameBytes {
				return nil, x.errf(n.line, "", n.name, "<%s> holds more than %d bytes of text, more than a name or number needs", n.name, MaxNameBytes)
			}
			n.text.Write(t)
		}
	}
	if rootName == "" {
		return nil, x.errf(0, "", "", "malformed XML: no root element (is the file empty?)")
	}
	if doc.root == nil {
		return nil, x.errf(rootLine, "", "", "root element is <%s>, expected <annotation>", clip(rootName))
	}
	return doc, nil
}

// ReadImageXML reads one per-image XML file. file names the file in error
// messages. The record's Name is <filename>, or the last element of <path>
// when <filename> is empty. Boxes are not clipped to the image. The file
// is read as a stream: its first byte that is not white space must be
// '<', it may hold MaxXMLFileBytes, and the text of one element
// MaxNameBytes. Errors are *PositionError values giving the line and
// element path (object indices count from 0, like the JSON paths).
func ReadImageXML(r io.Reader, file string) (ImageRecord, error) {
	x := &xmlReader{file: file}
	doc, err := x.parseXML(r)
	if err != nil {
		return ImageRecord{}, err
	}
	root := doc.root
	rec := ImageRecord{Where: file}
	if rec.Name, err = x.text(root, "", "filename"); err != nil {
		return ImageRecord{}, err
	}
	if rec.Name == "" {
		p, err := x.text(root, "", "path")
		if err != nil {
			return ImageRecord{}, err
		}
		if p = strings.ReplaceAll(p, `\`, "/"); strings.Trim(p, "/") != "" {
			rec.Name = path.Base(p)
		}
	}
	if rec.Name == "" {
		return ImageRecord{}, x.errf(root.line, "", "filename", "missing, and there is no <path> to take the name from")
	}

	size, err := x.field(root, "", "size", true)
	if err != nil {
		return ImageRecord{}, err
	}
	if rec.Width, err = x.size(size, "width", true); err != nil {
		return ImageRecord{}, err
	}
	if rec.Height, err = x.size(size, "height", true); err != nil {
		return ImageRecord{}, err
	}
	depth, err := x.field(size, "size", "depth", false)
	if err != nil {
		return ImageRecord{}, err
	}
	if depth != nil && depth.value() != "" {
		if rec.Depth, err = x.size(size, "depth", false); err != nil {
			return ImageRecord{}, err
		}
	}
	if doc.objErr != nil {
		return ImageRecord{}, doc.objErr
	}
	rec.Boxes = doc.boxes
	return rec, nil
}

// object reads one <object> element; p is its path such as "object[2]".
func (x *xmlReader) object(obj *xmlNode, p string) (BoxRecord, error) {
	br := BoxRecord{Where: x.file + ": " + p}
	var err error
	if br.Class, err = x.text(obj, p, "name"); err != nil {
		return BoxRecord{}, err
	}
	if br.Class == "" {
		line := obj.line
		if c, _ := obj.child("name"); c != nil {
			line = c.line
		}
		return BoxRecord{}, x.errf(line, p, "name", "missing")
	}
	if br.Pose, err = x.text(obj, p, "pose"); err != nil {
		return BoxRecord{}, err
	}
	if br.Truncated, err = x.flag(obj, p, "truncated"); err != nil {
		return BoxRecord{}, err
	}
	if br.Difficult, err = x.flag(obj, p, "difficult"); err != nil {
		return BoxRecord{}, err
	}
	bb, err := x.field(obj, p, "bndbox", true)
	if err != nil {
		return BoxRecord{}, err
	}
	bp := p + ".bndbox"
	var v [4]float64
	for k, f := range [4]string{"xmin", "ymin", "xmax", "ymax"} {
		if v[k], err = x.number(bb, bp, f); err != nil {
			return BoxRecord{}, err
		}
	}
	lineOf := func(f string) int {
		if c, _ := bb.child(f); c != nil {
			return c.line
		}
		return bb.line
	}
	if v[2] < v[0] {
		return BoxRecord{}, x.errf(lineOf("xmax"), bp, "xmax", "xmax %v is less than xmin %v", v[2], v[0])
	}
	if v[3] < v[1] {
		return BoxRecord{}, x.errf(lineOf("ymax"), bp, "ymax", "ymax %v is less than ymin %v", v[3], v[1])
	}
	br.Box = xmlIndicesToBox(v[0], v[1], v[2], v[3])
	if !br.Box.Valid() {
		// Only for magnitudes so large that adding 1 changes nothing.
		return BoxRecord{}, x.errf(bb.line, bp, "", "coordinates %v are too large to hold a box of positive size", v)
	}
	return br, nil
}

// clipMsg shortens a message of the XML decoder, which may quote names of
// any length, to 200 bytes.
func clipMsg(s string) string {
	if len(s) <= 200 {
		return s
	}
	i := 200
	for i > 0 && !utf8.RuneStart(s[i]) {
		i--
	}
	return s[:i] + "…"
}

// xmlCharsetReader lets the decoder read files that declare ASCII or
// Latin-1 encodings, both common in older exports.
func xmlCharsetReader(charset string, input io.Reader) (io.Reader, error) {
	switch strings.ToLower(charset) {
	case "us-ascii", "ascii", "utf8":
		return input, nil
	case "iso-8859-1", "iso8859-1", "latin1", "latin-1", "l1":
		return &latin1Reader{r: input}, nil
	}
	return nil, fmt.Errorf("unsupported encoding %s (use UTF-8)", quote(charset))
}

// latin1Reader converts ISO 8859-1 bytes to UTF-8.
type latin1Reader struct {
	r   io.Reader
	out []byte // converted bytes; out[pos:] not yet returned
	pos int
	in  [512]byte
}

func (l *latin1Reader) Read(p []byte) (int, error) {
	for l.pos == len(l.out) {
		n, err := l.r.Read(l.in[:])
		l.out, l.pos = l.out[:0], 0
		for _, c := range l.in[:n] {
			if c < 0x80 {
				l.out = append(l.out, c)
			} else {
				l.out = append(l.out, 0xC0|c>>6, 0x80|c&0x3F)
			}
		}
		if n == 0 && err != nil {
			return 0, err
		}
	}
	n := copy(p, l.out[l.pos:])
	l.pos += n
	return n, nil
}

// WriteImageXML writes rec as one per-image XML file: an XML header, then
// the <annotation> element indented with two spaces. The output depends
// only on rec. Depth 0 is written as 3. Coordinates are written as integers
// when integral and as shortest decimals otherwise; xmin and ymin, computed
// as X0+1 and Y0+1, are rounded to PixelDecimals first, so reading the file
// back gives the same boxes to 1e-6 px. Class names, the file name and poses are read
// back trimmed of surrounding space. Boxes less than one pixel wide or high
// cannot be held by 1-based inclusive indices and are an error.
func WriteImageXML(w io.Writer, rec ImageRecord) error {
	if rec.Name == "" {
		return errors.New("writing per-image XML: the image has no file name")
	}
	if rec.Width <= 0 || rec.Height <= 0 {
		return fmt.Errorf("writing per-image XML for %s: image size %dx%d is not positive", rec.Name, rec.Width, rec.Height)
	}
	depth := rec.Depth
	if depth == 0 {
		depth = 3
	}
	var b bytes.Buffer
	b.WriteString(xml.Header)
	b.WriteString("<annotation>\n")
	writeXMLText(&b, "  ", "filename", rec.Name)
	b.WriteString("  <size>\n")
	writeXMLText(&b, "    ", "width", strconv.Itoa(rec.Width))
	writeXMLText(&b, "    ", "height", strconv.Itoa(rec.Height))
	writeXMLText(&b, "    ", "depth", strconv.Itoa(depth))
	b.WriteString("  </size>\n")
	for i, br := range rec.Boxes {
		if strings.TrimSpace(br.Class) == "" {
			return fmt.Errorf("writing per-image XML for %s: object[%d] has no class name", rec.Name, i)
		}
		if !br.Box.Valid() {
			return fmt.Errorf("writing per-image XML for %s: object[%d] box %v is not a valid box", rec.Name, i, br.Box)
		}
		xmin, ymin, xmax, ymax := boxToXMLIndices(br.Box)
		// A one-pixel box read from a file can come back with xmin a hair
		// above xmax after the -1/+1; write such a box as one pixel.
		xmin, ymin = snapToMax(xmin, xmax), snapToMax(ymin, ymax)
		if xmax < xmin || ymax < ymin {
			return fmt.Errorf("writing per-image XML for %s: object[%d] box %v is less than one pixel wide or high, which 1-based inclusive pixel indices cannot hold", rec.Name, i, br.Box)
		}
		b.WriteString("  <object>\n")
		writeXMLText(&b, "    ", "name", br.Class)
		if br.Pose != "" {
			writeXMLText(&b, "    ", "pose", br.Pose)
		}
		writeXMLText(&b, "    ", "truncated", xmlFlag(br.Truncated))
		writeXMLText(&b, "    ", "difficult", xmlFlag(br.Difficult))
		b.WriteString("    <bndbox>\n")
		writeXMLText(&b, "      ", "xmin", xmlNumber(xmin))
		writeXMLText(&b, "      ", "ymin", xmlNumber(ymin))
		writeXMLText(&b, "      ", "xmax", xmlNumber(xmax))
		writeXMLText(&b, "      ", "ymax", xmlNumber(ymax))
		b.WriteString("    </bndbox>\n")
		b.WriteString("  </object>\n")
	}
	b.WriteString("</annotation>\n")
	if _, err := w.Write(b.Bytes()); err != nil {
		return fmt.Errorf("writing per-image XML for %s: %w", rec.Name, err)
	}
	return nil
}

func writeXMLText(b *bytes.Buffer, indent, tag, text string) {
	b.WriteString(indent)
	b.WriteString("<" + tag + ">")
	_ = xml.EscapeText(b, []byte(text)) // a bytes.Buffer does not fail
	b.WriteString("</" + tag + ">\n")
}

// snapToMax returns hi when lo exceeds it by no more than rounding error
// (float64's, or half the 1e-PixelDecimals that lo was rounded to), and
// lo otherwise.
func snapToMax(lo, hi float64) float64 {
	if lo > hi && lo-hi <= math.Max(1e-9*math.Max(1, math.Abs(hi)), 0.5*math.Pow10(-PixelDecimals)) {
		return hi
	}
	return lo
}

func xmlFlag(v bool) string {
	if v {
		return "1"
	}
	return "0"
}

// xmlNumber writes integral values without a decimal point and others as
// the shortest decimal that reads back to the same float64.
func xmlNumber(v float64) string {
	if v == 0 {
		v = 0 // no "-0"
	}
	return strconv.FormatFloat(v, 'f', -1, 64)
}
