package formats

// Prediction CSV: one header line naming the columns
//
//	image,class,x0,y0,x1,y1,score
//
// in any order, then one prediction per line: the image's file name or
// relative path, the class name, the top-left and bottom-right corners in
// continuous pixel coordinates (the project.Box convention, so no
// conversion) and a score in [0,1].

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// predCSVColumns are the columns of a prediction CSV, in the order
// WritePredictionCSV writes them.
var predCSVColumns = [7]string{"image", "class", "x0", "y0", "x1", "y1", "score"}

const (
	pcImage = iota
	pcClass
	pcX0
	pcY0
	pcX1
	pcY1
	pcScore
)

// ReadPredictionCSV reads a prediction CSV (see the header comment of
// predcsv.go). The header is required and must name each of the seven
// columns exactly once; other columns are refused. A UTF-8 byte-order mark
// and spaces around values are ignored; blank lines are skipped. Boxes are
// not clipped. The file is read record by record: one record may hold
// MaxRecordBytes, names MaxNameBytes, and the text must be UTF-8 without
// NUL bytes. Every error is a *PositionError with the line and, where one
// is to blame, the column name as Field.
func ReadPredictionCSV(r io.Reader, file string) ([]Prediction, error) {
	lim := &csvLimiter{r: newInput(r, 64<<10)}
	cr := csv.NewReader(lim)
	cr.FieldsPerRecord = -1 // the count is checked here, with a better message
	cr.ReuseRecord = true
	cr.TrimLeadingSpace = true
	lim.limit = MaxRecordBytes + csvReadAhead
	prevLine := 0 // line of the last record read
	fail := func(line int, field, format string, args ...any) error {
		return &PositionError{File: file, Line: line, Field: field, Msg: fmt.Sprintf(format, args...)}
	}
	readErr := func(err error) error {
		switch {
		case lim.notText != "":
			return fail(lim.badLine, "", "%s", lim.notText)
		case lim.tooLong:
			return fail(lim.badLine, "", csvTooLong, prevLine)
		}
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return fail(pe.Line, "", "malformed CSV: %v", pe.Err)
		}
		return fail(0, "", "cannot read the file: %v", err)
	}
	// next reads one record, checks its size and its text and moves the
	// read limit past it.
	next := func() ([]string, error) {
		before := cr.InputOffset()
		rec, err := cr.Read()
		if err != nil {
			return nil, err
		}
		line, _ := cr.FieldPos(0)
		if cr.InputOffset()-before > MaxRecordBytes+2 {
			return nil, fail(line, "", csvTooLong, prevLine)
		}
		for i, f := range rec {
			if at, msg, bad := stringProblem(f); bad {
				fl, col := cr.FieldPos(i)
				if fl == 1 && col == 1 && at == 0 {
					return nil, fail(fl, "", "the file starts with %s", msg)
				}
				return nil, fail(fl, "", "byte %d of field %d is %s", at+1, i+1, msg)
			}
		}
		lim.limit = cr.InputOffset() + MaxRecordBytes + csvReadAhead
		prevLine = line
		return rec, nil
	}

	head, err := next()
	if err == io.EOF {
		return nil, fail(0, "", "the file is empty; want the header %s", strings.Join(predCSVColumns[:], ","))
	}
	var pe *PositionError
	if errors.As(err, &pe) {
		return nil, pe
	}
	if err != nil {
		return nil, readErr(err)
	}
	headLine, _ := cr.FieldPos(0)
	var col [7]int // column index of each field
	for i := range col {
		col[i] = -1
	}
	for i, h := range head {
		name := strings.ToLower(strings.TrimSpace(h))
		k := -1
		for j, c := range predCSVColumns {
			if name == c {
				k = j
			}
		}
		switch {
		case k < 0:
			return nil, fail(headLine, "", "column %d of the header is %s; want only the columns %s", i+1, quote(h), strings.Join(predCSVColumns[:], ","))
		case col[k] >= 0:
			return nil, fail(headLine, "", "the header names column %s twice", quote(name))
		}
		col[k] = i
	}
	for k, c := range col {
		if c < 0 {
			return nil, fail(headLine, "", "the header lacks the column %q (want %s)", predCSVColumns[k], strings.Join(predCSVColumns[:], ","))
		}
	}

	var preds []Prediction
	for {
		rec, err := next()
		if err == io.EOF {
			break
		}
		if errors.As(err, &pe) {
			return nil, pe
		}
		if err != nil {
			return nil, readErr(err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(predCSVColumns) {
			return nil, fail(line, "", "found %d columns, want %d (%s)", len(rec), len(predCSVColumns), strings.Join(predCSVColumns[:], ","))
		}
		var v [7]float64
		for k := pcX0; k <= pcScore; k++ {
			s := strings.TrimSpace(rec[col[k]])
			f, err := strconv.ParseFloat(s, 64)
			switch {
			case s == "":
				return nil, fail(line, predCSVColumns[k], "is empty; want a number")
			case err != nil && !errors.Is(err, strconv.ErrRange):
				return nil, fail(line, predCSVColumns[k], "%s is not a number", quote(s))
			case err != nil || math.IsNaN(f) || math.IsInf(f, 0):
				return nil, fail(line, predCSVColumns[k], "%s is not a finite number", quote(s))
			}
			v[k] = f
		}
		p := Prediction{
			FileName: strings.TrimSpace(rec[col[pcImage]]),
			Category: strings.TrimSpace(rec[col[pcClass]]),
			Score:    v[pcScore],
			Where:    file + ":" + strconv.Itoa(line),
		}
		p.Box.X0, p.Box.Y0, p.Box.X1, p.Box.Y1 = v[pcX0], v[pcY0], v[pcX1], v[pcY1]
		num := func(k int) string { return clip(strings.TrimSpace(rec[col[k]])) }
		switch {
		case p.FileName == "":
			return nil, fail(line, "image", "is empty; want the image's file name or relative path")
		case len(p.FileName) > MaxNameBytes:
			return nil, fail(line, "image", "is %d bytes long, more than the %d a file name may hold", len(p.FileName), MaxNameBytes)
		case len(p.Category) > MaxNameBytes:
			return nil, fail(line, "class", "is %d bytes long, more than the %d a class name may hold", len(p.Category), MaxNameBytes)
		case p.Category == "":
			return nil, fail(line, "class", "is empty; want a class name")
		case !(p.Box.X1 > p.Box.X0):
			return nil, fail(line, "x1", "%s is not greater than x0 %s", num(pcX1), num(pcX0))
		case !(p.Box.Y1 > p.Box.Y0):
			return nil, fail(line, "y1", "%s is not greater than y0 %s", num(pcY1), num(pcY0))
		case p.Score < 0 || p.Score > 1:
			return nil, fail(line, "score", "%s is outside 0..1", num(pcScore))
		}
		preds = append(preds, p)
	}
	return preds, nil
}

// csvTooLong says why a record is refused for its size; its verb takes
// the line of the record before.
const csvTooLong = "more than 1048576 bytes (1 MiB) since the record on line %d, more than one prediction (with the blank lines before it) holds; is this the right file? (An unclosed quote makes the rest of the file one field.)"

// csvReadAhead is how far encoding/csv reads beyond the record it returns
// (the size of its buffer), which the limit allows for.
const csvReadAhead = 4096

// csvLimiter passes bytes to the CSV reader up to a limit that keeps one
// record from growing without end, and stops at the first NUL byte,
// counting lines so that either names its line. (UTF-8 is checked on the
// parsed fields, which hold whole characters.)
type csvLimiter struct {
	r       *bufio.Reader
	n       int64 // bytes passed on
	limit   int64 // most bytes to pass on
	line    int   // newlines passed on
	tooLong bool
	notText string // what the bad byte is
	badLine int
}

var errCSVStop = errors.New("prediction CSV: stopped")

func (l *csvLimiter) Read(p []byte) (int, error) {
	if l.tooLong || l.notText != "" {
		return 0, errCSVStop
	}
	if l.n >= l.limit {
		l.tooLong, l.badLine = true, l.line+1
		return 0, errCSVStop
	}
	if room := l.limit - l.n; int64(len(p)) > room {
		p = p[:room]
	}
	n, err := l.r.Read(p)
	if at := bytes.IndexByte(p[:n], 0); at >= 0 {
		// Pass on what comes before the NUL; the next call stops.
		l.badLine = l.line + bytes.Count(p[:at], []byte{'\n'}) + 1
		_, msg, _ := textProblem(p[at:n])
		if l.n == 0 && at == 0 {
			l.notText = "the file starts with " + msg
		} else {
			l.notText = msg
		}
		n, err = at, nil
	}
	l.line += bytes.Count(p[:n], []byte{'\n'})
	l.n += int64(n)
	return n, err
}

// WritePredictionCSV writes predictions as a prediction CSV with the
// columns in their usual order. Numbers are written so that they read back
// exactly. Each prediction must name its image by FileName and its class
// by Category; a prediction that ReadPredictionCSV would refuse is an error.
func WritePredictionCSV(w io.Writer, preds []Prediction) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(predCSVColumns[:]); err != nil {
		return fmt.Errorf("writing prediction CSV: %w", err)
	}
	rec := make([]string, len(predCSVColumns))
	for i, p := range preds {
		switch {
		case strings.TrimSpace(p.FileName) != p.FileName || p.FileName == "":
			return fmt.Errorf("writing prediction CSV: prediction %d: file name %q is empty or starts or ends with a space", i, p.FileName)
		case strings.TrimSpace(p.Category) != p.Category || p.Category == "":
			return fmt.Errorf("writing prediction CSV: prediction %d: class %q is empty or starts or ends with a space", i, p.Category)
		case !p.Box.Valid():
			return fmt.Errorf("writing prediction CSV: prediction %d: box %v is not valid", i, p.Box)
		case !(p.Score >= 0 && p.Score <= 1):
			return fmt.Errorf("writing prediction CSV: prediction %d: score %v is outside 0..1", i, p.Score)
		}
		rec[pcImage], rec[pcClass] = p.FileName, p.Category
		rec[pcX0], rec[pcY0], rec[pcX1], rec[pcY1] = fmtNum(p.Box.X0), fmtNum(p.Box.Y0), fmtNum(p.Box.X1), fmtNum(p.Box.Y1)
		rec[pcScore] = fmtNum(p.Score)
		if err := cw.Write(rec); err != nil {
			return fmt.Errorf("writing prediction CSV: %w", err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("writing prediction CSV: %w", err)
	}
	return nil
}
