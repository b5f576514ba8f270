package formats

// Centre-normalised text layout: one .txt per image, one line per box,
//
//	class_index cx cy w h [score]
//
// with the centre and size relative to the image width and height (0..1),
// plus a class-names file whose line n (from 0) names class index n. See
// centreToBox for the convention.

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"boxwright/project"
)

// centreTolerance is how far outside 0..1 a normalised value may lie and
// still be accepted, for the rounding of other tools' output. Such values
// are kept as written; clipping is the importer's business.
const centreTolerance = 1e-6

// centreToBox converts a centre-normalised box on an image of width W and
// height H pixels to a continuous box:
//
//	X0 = (cx-w/2)*W, Y0 = (cy-h/2)*H, X1 = (cx+w/2)*W, Y1 = (cy+h/2)*H
//
// For example, on a 640×480 image the line "0 0.5 0.5 0.25 0.5" is
// X0 = (0.5-0.125)*640 = 240, Y0 = (0.5-0.25)*480 = 120,
// X1 = (0.5+0.125)*640 = 400, Y1 = (0.5+0.25)*480 = 360: Box{240,120,400,360}.
func centreToBox(cx, cy, w, h float64, width, height int) project.Box {
	W, H := float64(width), float64(height)
	return project.Box{X0: (cx - w/2) * W, Y0: (cy - h/2) * H, X1: (cx + w/2) * W, Y1: (cy + h/2) * H}
}

// boxToCentre is the inverse of centreToBox:
//
//	cx = (X0+X1)/2/W, cy = (Y0+Y1)/2/H, w = (X1-X0)/W, h = (Y1-Y0)/H
//
// so Box{240,120,400,360} on a 640×480 image is cx = 640/2/640 = 0.5,
// cy = 480/2/480 = 0.5, w = 160/640 = 0.25, h = 240/480 = 0.5.
func boxToCentre(b project.Box, width, height int) (cx, cy, w, h float64) {
	W, H := float64(width), float64(height)
	return (b.X0 + b.X1) / 2 / W, (b.Y0 + b.Y1) / 2 / H, (b.X1 - b.X0) / W, (b.Y1 - b.Y0) / H
}

// ReadClassNames reads a class-names file: one name per line, the class
// index being the line number counted from 0. Names are trimmed of spaces
// and a trailing \r. A blank line is an error, since it would shift the
// index of every later class, except blank lines at the end of the file.
// A name that appears twice or contains a carriage return or a byte-order
// mark (U+FEFF) is an error, and so is a name longer than MaxNameBytes,
// a line longer than MaxRecordBytes, and bytes that are not UTF-8 text
// (the file is read line by line and refused at the first such line).
// Errors are *PositionError values.
func ReadClassNames(r io.Reader, file string) ([]string, error) {
	lr := newLineReader(r, file)
	classes := []string{}
	seen := map[string]int{} // name → line
	firstBlank := 0          // line of the first blank line not yet followed by a name
	for {
		s, ok := lr.next()
		if !ok {
			break
		}
		name := strings.TrimSpace(s)
		if name == "" {
			if firstBlank == 0 {
				firstBlank = lr.line
			}
			continue
		}
		if firstBlank != 0 {
			return nil, &PositionError{File: file, Line: firstBlank,
				Msg: "blank line between class names; class indices count lines, so it would shift every later class (remove it)"}
		}
		if strings.ContainsRune(name, '\r') {
			return nil, &PositionError{File: file, Line: lr.line,
				Msg: "line contains a carriage return inside it; the file's lines must end with \\n or \\r\\n"}
		}
		if strings.ContainsRune(name, '\ufeff') {
			return nil, &PositionError{File: file, Line: lr.line,
				Msg: "class name contains a byte-order mark (U+FEFF), which is invisible and would not read back"}
		}
		if len(name) > MaxNameBytes {
			return nil, &PositionError{File: file, Line: lr.line,
				Msg: fmt.Sprintf("class name is %d bytes long, more than the %d a name may hold; is this a class-names file?", len(name), MaxNameBytes)}
		}
		if prev, dup := seen[name]; dup {
			return nil, &PositionError{File: file, Line: lr.line,
				Msg: fmt.Sprintf("class name %s appears twice (also on line %d)", quote(name), prev)}
		}
		seen[name] = lr.line
		classes = append(classes, name)
	}
	if err := lr.readErr(); err != nil {
		return nil, err
	}
	return classes, nil
}

// WriteClassNames writes one class name per line, in index order. A name
// that is empty, has surrounding spaces, contains a line break or a
// byte-order mark, or repeats an earlier name is an error, since the file
// would not read back the same.
func WriteClassNames(w io.Writer, classes []string) error {
	var b bytes.Buffer
	seen := make(map[string]int, len(classes))
	for i, c := range classes {
		switch {
		case c == "":
			return fmt.Errorf("writing class names: class %d has an empty name", i)
		case strings.TrimSpace(c) != c:
			return fmt.Errorf("writing class names: class %d name %q has leading or trailing space", i, c)
		case strings.ContainsAny(c, "\r\n"):
			return fmt.Errorf("writing class names: class %d name %q contains a line break", i, c)
		case strings.ContainsRune(c, '\ufeff'):
			return fmt.Errorf("writing class names: class %d name %q contains a byte-order mark (U+FEFF)", i, c)
		}
		if j, dup := seen[c]; dup {
			return fmt.Errorf("writing class names: class %d name %q repeats class %d", i, c, j)
		}
		seen[c] = i
		b.WriteString(c)
		b.WriteByte('\n')
	}
	if _, err := w.Write(b.Bytes()); err != nil {
		return fmt.Errorf("writing class names: %w", err)
	}
	return nil
}

// centreFields names the columns of a centre-normalised text line.
var centreFields = [6]string{"class_index", "cx", "cy", "w", "h", "score"}

// ReadCentreText reads one centre-normalised text file for an image of the
// given size in pixels. Empty lines and lines starting with # are skipped.
// A line has five columns (class_index cx cy w h) or six, the sixth a score
// in 0..1 (HasScore). classes are the class names by index, as read by
// ReadClassNames. Values may lie up to 1e-6 outside 0..1; they are kept as
// written and boxes are not clipped. The file must be UTF-8 text without
// NUL bytes and lines longer than MaxRecordBytes; it is read line by line
// and refused at the first bad line. Errors are *PositionError values.
func ReadCentreText(r io.Reader, file string, width, height int, classes []string) ([]BoxRecord, error) {
	if width <= 0 || height <= 0 {
		return nil, &PositionError{File: file, Msg: fmt.Sprintf("image size %dx%d is not positive, so normalised coordinates cannot be converted", width, height)}
	}
	lr := newLineReader(r, file)
	var out []BoxRecord
	for {
		s, ok := lr.next()
		if !ok {
			break
		}
		s = strings.TrimSpace(s)
		if s == "" || s[0] == '#' {
			continue
		}
		br, err := parseCentreLine(s, file, lr.line, width, height, classes)
		if err != nil {
			return nil, err
		}
		out = append(out, br)
	}
	if err := lr.readErr(); err != nil {
		return nil, err
	}
	return out, nil
}

// parseCentreLine parses one non-blank, non-comment line.
func parseCentreLine(s, file string, line, width, height int, classes []string) (BoxRecord, error) {
	fail := func(field, format string, args ...any) (BoxRecord, error) {
		return BoxRecord{}, &PositionError{File: file, Line: line, Field: field, Msg: fmt.Sprintf(format, args...)}
	}
	var buf [6]string
	cols, n := splitColumns(s, buf[:0])
	if n != 5 && n != 6 {
		return fail("", "found %d columns, expected 5 (class_index cx cy w h) or 6 (with a score)", n)
	}
	var v [6]float64
	for i, c := range cols {
		f, err := strconv.ParseFloat(c, 64)
		if err != nil && !errors.Is(err, strconv.ErrRange) {
			return fail(centreFields[i], "%s is not a number", quote(c))
		}
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return fail(centreFields[i], "%s is not a finite number", quote(c))
		}
		v[i] = f
	}

	idx := v[0]
	switch {
	case idx != math.Trunc(idx):
		return fail("class_index", "%s is not a whole number", clip(cols[0]))
	case idx < 0:
		return fail("class_index", "%s is negative", clip(cols[0]))
	case idx >= float64(len(classes)):
		return fail("class_index", "%s is beyond the class-names file, which has %s", clip(cols[0]), centreClassCount(len(classes)))
	}

	for i := 1; i <= 4; i++ {
		f := v[i]
		if f < -centreTolerance || f > 1+centreTolerance {
			return fail(centreFields[i], "%s is outside 0..1 (values are relative to the image size)", clip(cols[i]))
		}
		if i >= 3 && f <= 0 {
			return fail(centreFields[i], "%s is not greater than 0", clip(cols[i]))
		}
	}
	br := BoxRecord{
		Class: classes[int(idx)],
		Box:   centreToBox(v[1], v[2], v[3], v[4], width, height),
		Where: file + ":" + strconv.Itoa(line),
	}
	if !br.Box.Valid() {
		return fail("w", "box of size %s x %s is too small to hold on a %dx%d image", clip(cols[3]), clip(cols[4]), width, height)
	}
	if len(cols) == 6 {
		if v[5] < -centreTolerance || v[5] > 1+centreTolerance {
			return fail("score", "%s is outside 0..1", clip(cols[5]))
		}
		br.Score, br.HasScore = v[5], true
	}
	return br, nil
}

// splitColumns splits s at runs of spaces and tabs (and other ASCII
// white space), appending to cols up to its capacity without allocating,
// and returns the columns and how many there are in all.
func splitColumns(s string, cols []string) ([]string, int) {
	n := 0
	for i := 0; i < len(s); {
		for i < len(s) && asciiSpace(s[i]) {
			i++
		}
		if i == len(s) {
			break
		}
		j := i
		for j < len(s) && !asciiSpace(s[j]) {
			j++
		}
		if len(cols) < cap(cols) {
			cols = append(cols, s[i:j])
		}
		n++
		i = j
	}
	return cols, n
}

func asciiSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\v' || c == '\f'
}

func centreClassCount(n int) string {
	switch n {
	case 0:
		return "no classes"
	case 1:
		return "1 class (index 0)"
	}
	return fmt.Sprintf("%d classes (indices 0..%d)", n, n-1)
}

// WriteCentreText writes the boxes of rec as one centre-normalised text
// file, one line per box. The four computed fractions are rounded to 1e-10
// px of their side (CentrePixelDecimals), the score is written in the
// shortest form that reads back to the same float64. The class index is the position of the box's class
// in classes; a class not in classes is an error. The score column is
// written for boxes with HasScore. The layout holds no XML flags, poses or
// crowd marks. A box whose centre lies outside the image or that is wider
// or higher than the image is an error, since it would not read back.
func WriteCentreText(w io.Writer, rec ImageRecord, classes []string) error {
	if rec.Width <= 0 || rec.Height <= 0 {
		return fmt.Errorf("writing centre-normalised text for %s: image size %dx%d is not positive", rec.Name, rec.Width, rec.Height)
	}
	index := make(map[string]int, len(classes))
	for i, c := range classes {
		if _, dup := index[c]; dup {
			return fmt.Errorf("writing centre-normalised text for %s: class %q appears twice in the class list", rec.Name, c)
		}
		index[c] = i
	}
	var b bytes.Buffer
	for i, br := range rec.Boxes {
		k, ok := index[br.Class]
		if !ok {
			return fmt.Errorf("writing centre-normalised text for %s: box %d has class %q, which is not in the class list", rec.Name, i, br.Class)
		}
		if !br.Box.Valid() {
			return fmt.Errorf("writing centre-normalised text for %s: box %d %v is not a valid box", rec.Name, i, br.Box)
		}
		cx, cy, bw, bh := boxToCentre(br.Box, rec.Width, rec.Height)
		for _, f := range [4]float64{cx, cy, bw, bh} {
			if f < -centreTolerance || f > 1+centreTolerance {
				return fmt.Errorf("writing centre-normalised text for %s: box %d %v has its centre outside the %dx%d image or is larger than it; clip it first", rec.Name, i, br.Box, rec.Width, rec.Height)
			}
		}
		if br.HasScore && !(br.Score >= -centreTolerance && br.Score <= 1+centreTolerance) {
			return fmt.Errorf("writing centre-normalised text for %s: box %d score %v is outside 0..1", rec.Name, i, br.Score)
		}
		// Computed values: rounded to 1e-10 px of their side (CentrePixelDecimals).
		// A side narrower than that precision keeps its exact value rather
		// than becoming 0, which the reader would refuse.
		cx, cy = roundNormalised(cx, rec.Width), roundNormalised(cy, rec.Height)
		if r := roundNormalised(bw, rec.Width); r > 0 {
			bw = r
		}
		if r := roundNormalised(bh, rec.Height); r > 0 {
			bh = r
		}
		if bw <= 0 || bh <= 0 {
			return fmt.Errorf("writing centre-normalised text for %s: box %d %v has no width or no height", rec.Name, i, br.Box)
		}
		b.WriteString(strconv.Itoa(k))
		for _, f := range [4]float64{cx, cy, bw, bh} {
			b.WriteByte(' ')
			b.WriteString(centreNumber(f))
		}
		if br.HasScore {
			b.WriteByte(' ')
			b.WriteString(centreNumber(br.Score))
		}
		b.WriteByte('\n')
	}
	if _, err := w.Write(b.Bytes()); err != nil {
		return fmt.Errorf("writing centre-normalised text for %s: %w", rec.Name, err)
	}
	return nil
}

// centreNumber formats v in the shortest form that parses back to v.
func centreNumber(v float64) string {
	if v == 0 {
		v = 0 // no "-0"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
