package agree

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"
)

// The files of counts, weights and ratings that ReadTable, ReadWeights and
// ReadRatings take are text in the CSV manner:
//
//   - UTF-8, with or without a byte-order mark; lines end in LF or CRLF.
//   - Cells are separated by a tab, a semicolon or a comma: the first of
//     these three found on the first line that holds anything (outside
//     double quotes) separates the cells of the whole file; a comma when
//     the first line has none of them.
//   - A cell may be put in double quotes, and must be when it holds the
//     separator, a double quote (written twice) or a line end.
//   - Spaces around cells are ignored; lines that hold nothing but spaces
//     are skipped (a line of separators is a row of empty cells).
//   - One record (a line, or the lines a quoted cell spans) may hold at
//     most MaxRecordBytes bytes and MaxCells cells.

const (
	// MaxRecordBytes is the most one record of a table or ratings file
	// may hold, line end included.
	MaxRecordBytes = 1 << 20
	// MaxCells is the most cells one record may hold: so a table of
	// counts has at most MaxCells−1 categories after a name column, and
	// a file of ratings at most MaxCells−1 raters after a unit column.
	MaxCells = 1000
)

// recordReader splits a file into records of trimmed cells.
type recordReader struct {
	br   *bufio.Reader
	file string
	line int  // lines read so far
	sep  byte // 0 until the first record decides it
	buf  []byte
}

func newRecordReader(r io.Reader, file string) *recordReader {
	return &recordReader{br: bufio.NewReaderSize(r, 64<<10), file: file}
}

// fail is an InputError about this file.
func (rr *recordReader) fail(line, col int, format string, args ...any) error {
	return &InputError{File: rr.file, Line: line, Column: col, Msg: fmt.Sprintf(format, args...)}
}

var errTooLong = errors.New("too long")

// physLine appends one line, its line end included, to rr.buf; io.EOF
// when there was nothing left to read.
func (rr *recordReader) physLine() error {
	start := len(rr.buf)
	for {
		chunk, err := rr.br.ReadSlice('\n')
		if len(rr.buf)+len(chunk) > MaxRecordBytes {
			return errTooLong
		}
		rr.buf = append(rr.buf, chunk...)
		switch {
		case err == nil:
			rr.line++
			return nil
		case errors.Is(err, bufio.ErrBufferFull):
			continue
		case errors.Is(err, io.EOF):
			if len(rr.buf) == start {
				return io.EOF
			}
			rr.line++
			return nil
		default:
			return err
		}
	}
}

// next returns the cells of the next record that is not blank, trimmed of
// spaces, and the line it starts on; io.EOF after the last.
func (rr *recordReader) next() ([]string, int, error) {
	for {
		rr.buf = rr.buf[:0]
		first := rr.line + 1
		err := rr.physLine()
		if err == nil && first == 1 {
			if bytes.HasPrefix(rr.buf, []byte("\xff\xfe")) || bytes.HasPrefix(rr.buf, []byte("\xfe\xff")) {
				return nil, 0, rr.fail(0, 0, "the file is UTF-16 text; save it as UTF-8 (CSV UTF-8 in a spreadsheet)")
			}
			rr.buf = bytes.TrimPrefix(rr.buf, []byte("\xef\xbb\xbf"))
		}
		// A quoted cell may span lines: read on while a quote is open,
		// counting the quotes of each new line only.
		quotes := bytes.Count(rr.buf, []byte(`"`))
		for err == nil && quotes%2 == 1 {
			n := len(rr.buf)
			if err = rr.physLine(); errors.Is(err, io.EOF) {
				return nil, 0, rr.fail(first, 0, "a double quote opens a cell that is never closed")
			}
			quotes += bytes.Count(rr.buf[n:], []byte(`"`))
		}
		switch {
		case errors.Is(err, io.EOF):
			return nil, 0, io.EOF
		case errors.Is(err, errTooLong) && quotes%2 == 1:
			return nil, 0, rr.fail(first, 0, "a double quote opens a cell that is not closed within %d bytes (1 MiB), the most one line may hold here", MaxRecordBytes)
		case errors.Is(err, errTooLong):
			return nil, 0, rr.fail(first, 0, "the line holds more than %d bytes (1 MiB), the most one line may hold here", MaxRecordBytes)
		case err != nil:
			return nil, 0, rr.fail(0, 0, "cannot read the file: %v", err)
		}
		rec := rr.buf
		rec = bytes.TrimSuffix(bytes.TrimSuffix(rec, []byte("\n")), []byte("\r"))
		if !utf8.Valid(rec) {
			return nil, 0, rr.fail(first, 0, "the line is not UTF-8 text; save the file as UTF-8")
		}
		if bytes.IndexByte(rec, 0) >= 0 {
			return nil, 0, rr.fail(first, 0, "the line holds a NUL byte: this is not a text file (UTF-16 text must be saved as UTF-8)")
		}
		if rr.sep == 0 {
			if len(bytes.TrimSpace(rec)) == 0 {
				continue // blank lines before the first record decide nothing
			}
			rr.sep = detectSeparator(rec)
		}
		blank := true
		for _, b := range rec {
			blank = blank && (b == ' ' || b == '\t' && rr.sep != '\t')
		}
		if blank {
			continue
		}
		cells, col, msg := splitRecord(string(rec), rr.sep)
		if msg != "" {
			return nil, 0, rr.fail(first, col, "%s", msg)
		}
		return cells, first, nil
	}
}

// detectSeparator is the first of tab, semicolon and comma that the line
// holds outside double quotes; a comma when it holds none.
func detectSeparator(line []byte) byte {
	var seen [256]bool
	quoted := false
	for _, b := range line {
		if b == '"' {
			quoted = !quoted
		} else if !quoted {
			seen[b] = true
		}
	}
	for _, s := range []byte{'\t', ';', ','} {
		if seen[s] {
			return s
		}
	}
	return ','
}

// sepName names a separator for messages.
func sepName(sep byte) string {
	switch sep {
	case '\t':
		return "tab"
	case ';':
		return "semicolon"
	}
	return "comma"
}

// splitRecord cuts a record into cells trimmed of spaces. On a fault it
// returns the 1-based cell it is in and what is wrong.
func splitRecord(s string, sep byte) ([]string, int, string) {
	var cells []string
	space := func(b byte) bool { return b == ' ' || (b == '\t' && sep != '\t') }
	i := 0
	for {
		col := len(cells) + 1
		if col > MaxCells {
			return nil, col, fmt.Sprintf("the line holds more than %d cells, the most one line may hold here", MaxCells)
		}
		j := i
		for j < len(s) && space(s[j]) {
			j++
		}
		if j < len(s) && s[j] == '"' {
			var b strings.Builder
			k := j + 1
			for {
				q := strings.IndexByte(s[k:], '"')
				if q < 0 {
					return nil, col, "a double quote opens a cell that is never closed"
				}
				b.WriteString(s[k : k+q])
				k += q + 1
				if k < len(s) && s[k] == '"' {
					b.WriteByte('"')
					k++
					continue
				}
				break
			}
			for k < len(s) && space(s[k]) {
				k++
			}
			cells = append(cells, strings.TrimSpace(b.String()))
			if k == len(s) {
				return cells, 0, ""
			}
			if s[k] != sep {
				return nil, col, fmt.Sprintf("text follows the closing double quote of the cell (the separator is a %s)", sepName(sep))
			}
			i = k + 1
			continue
		}
		e := strings.IndexByte(s[i:], sep)
		cell := s[i:]
		if e >= 0 {
			cell = s[i : i+e]
		}
		switch {
		case strings.IndexByte(cell, '"') >= 0:
			return nil, col, fmt.Sprintf("%q holds a double quote but does not start with one: put the whole cell in double quotes and write the quote twice", strings.TrimSpace(cell))
		case strings.IndexByte(cell, '\r') >= 0:
			return nil, col, "a carriage return inside the line: lines must end in LF or CRLF, not in a carriage return alone"
		}
		cells = append(cells, strings.TrimSpace(cell))
		if e < 0 {
			return cells, 0, ""
		}
		i += e + 1
	}
}
