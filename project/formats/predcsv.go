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
// not clipped. Every error is a *PositionError with the line and, where one
// is to blame, the column name as Field.
func ReadPredictionCSV(r io.Reader, file string) ([]Prediction, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, &PositionError{File: file, Msg: "cannot read the file: " + err.Error()}
	}
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	cr := csv.NewReader(bytes.NewReader(data))
	cr.FieldsPerRecord = -1 // the count is checked here, with a better message
	cr.ReuseRecord = true
	cr.TrimLeadingSpace = true
	fail := func(line int, field, format string, args ...any) error {
		return &PositionError{File: file, Line: line, Field: field, Msg: fmt.Sprintf(format, args...)}
	}
	readErr := func(err error) error {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return fail(pe.Line, "", "malformed CSV: %v", pe.Err)
		}
		return fail(0, "", "cannot read the file: %v", err)
	}

	head, err := cr.Read()
	if err == io.EOF {
		return nil, fail(0, "", "the file is empty; want the header %s", strings.Join(predCSVColumns[:], ","))
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
			return nil, fail(headLine, "", "column %d of the header is %q; want only the columns %s", i+1, h, strings.Join(predCSVColumns[:], ","))
		case col[k] >= 0:
			return nil, fail(headLine, "", "the header names column %q twice", name)
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
		rec, err := cr.Read()
		if err == io.EOF {
			break
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
				return nil, fail(line, predCSVColumns[k], "%q is not a number", s)
			case err != nil || math.IsNaN(f) || math.IsInf(f, 0):
				return nil, fail(line, predCSVColumns[k], "%q is not a finite number", s)
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
		num := func(k int) string { return strings.TrimSpace(rec[col[k]]) }
		switch {
		case p.FileName == "":
			return nil, fail(line, "image", "is empty; want the image's file name or relative path")
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
