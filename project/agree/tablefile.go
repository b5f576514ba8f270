package agree

import (
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// Matrix is a square table of numbers read from a file: counts (rows
// rater A, columns rater B) or disagreement weights.
type Matrix struct {
	Values [][]float64
	// Names of the categories in order: those the file writes in a
	// header row or a first column, else "1"…"k".
	Names []string
	// Named is whether the file wrote the names.
	Named bool
}

// ReadTable reads a k×k table of counts (see records.go for the text
// layout; file names it in errors). The table may have a header row and a
// first column of category names:
//
//   - the first row is a header when none of its cells is a number, or
//     when its first cell (the corner) is empty; it names the k columns,
//     after an optional corner cell;
//   - rows of k+1 cells start with their category's name; with a header
//     the row names must be the column names in the same order, without
//     one they must not be numbers;
//   - every other cell is a count: a decimal number (such as 12, 0.5 or
//     1e3), finite, not negative, and all of them together finite and
//     not all 0.
//
// An empty cell at the end of every line (a separator ending each line)
// is dropped. Every error is an *InputError naming the file and, where
// one is to blame, the line and column.
func ReadTable(r io.Reader, file string) (Matrix, error) {
	total := 0.0
	m, err := readMatrix(r, file, "table of counts", func(i, j int, v float64, text string) string {
		if v < 0 {
			return fmt.Sprintf("%s is negative; a count cannot be", text)
		}
		if total += v; total > maxFloat {
			return fmt.Sprintf("the counts add up to more than %.3g, the largest number this program can hold", maxFloat)
		}
		return ""
	})
	if err != nil {
		return Matrix{}, err
	}
	if total == 0 {
		return Matrix{}, &InputError{File: file, Msg: "every count is 0: the table holds no units to compare"}
	}
	return m, nil
}

// ReadWeights reads a k×k table of disagreement weights, laid out as
// ReadTable's counts: finite, not negative, 0 on the diagonal (larger
// means worse). Every error is an *InputError naming the file.
func ReadWeights(r io.Reader, file string) (Matrix, error) {
	return readMatrix(r, file, "table of weights", func(i, j int, v float64, text string) string {
		switch {
		case v < 0:
			return fmt.Sprintf("%s is negative; a disagreement weight cannot be", text)
		case i == j && v != 0:
			return fmt.Sprintf("the weight on the diagonal must be 0 (the raters agree there), not %s", text)
		}
		return ""
	})
}

const maxFloat = 1.7976931348623157e308

// readMatrix reads a square table; check says what is wrong with the
// finite number v written text at row i, column j of the table, or "".
func readMatrix(r io.Reader, file, what string, check func(i, j int, v float64, text string) string) (Matrix, error) {
	rr := newRecordReader(r, file)
	var rows [][]string
	var lines []int
	for {
		cells, line, err := rr.next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return Matrix{}, err
		}
		if len(rows) > MaxCells { // a header and MaxCells rows at most
			return Matrix{}, rr.fail(line, 0, "more than %d rows: a %s may have at most %d categories here", MaxCells, what, MaxCells)
		}
		rows, lines = append(rows, cells), append(lines, line)
	}
	if len(rows) == 0 {
		return Matrix{}, rr.fail(0, 0, "the file is empty; want a k×k %s", what)
	}
	trailing := true
	for _, row := range rows {
		trailing = trailing && len(row) > 1 && row[len(row)-1] == ""
	}
	if trailing {
		for i := range rows {
			rows[i] = rows[i][:len(rows[i])-1]
		}
	}

	head := rows[0]
	header := true
	for _, c := range head {
		if _, msg := parseDecimal(c); msg == "" {
			header = false
		}
	}
	header = header || head[0] == ""
	data, dlines := rows, lines
	if header {
		data, dlines = rows[1:], lines[1:]
	}
	n := len(data)
	if n == 0 {
		return Matrix{}, rr.fail(lines[0], 0, "a header row of names but no rows of numbers after it")
	}
	w := len(data[0])
	if w != n && w != n+1 {
		return Matrix{}, rr.fail(dlines[0], 0, "the row has %d cells, but there are %d rows: a %s is square, k rows of k numbers, each row optionally after its category's name (cells are separated by a %s, as the first line shows)", w, n, what, sepName(rr.sep))
	}
	for i, d := range data {
		if len(d) != w {
			return Matrix{}, rr.fail(0, 0, "line %d has %d cells, line %d has %d: every row of the %s needs as many (cells are separated by a %s, as the first line shows)", dlines[i], len(d), dlines[0], w, what, sepName(rr.sep))
		}
	}
	nameCol := w == n+1

	var names []string
	if header {
		off := 0
		switch {
		case len(head) == n+1 && (nameCol || head[0] == ""):
			names, off = head[1:], 1
		case len(head) == n:
			names = head
		default:
			return Matrix{}, rr.fail(lines[0], 0, "the header has %d cells for %d rows of %d numbers: it must name each of the %d categories once (after a corner cell, which is empty when the rows do not start with names)", len(head), n, n, n)
		}
		if err := distinct(names, func(j int) (int, int) { return lines[0], j + 1 + off }, rr, "column"); err != nil {
			return Matrix{}, err
		}
	}
	if nameCol {
		rowNames := make([]string, n)
		for i, d := range data {
			rowNames[i] = d[0]
			if _, msg := parseDecimal(d[0]); !header && (msg == "" || d[0] == "") {
				return Matrix{}, rr.fail(dlines[i], 1, "the %s must be square, but its %d rows hold %d numbers each; a first column of category names must not hold numbers (or blanks) unless a header row names the columns as well", what, n, w)
			}
			if header && d[0] != names[i] {
				return Matrix{}, rr.fail(dlines[i], 1, "the row is named %q, but column %d of the header (line %d) is %q: the rows must name the categories in the order the columns do", d[0], i+1+len(head)-n, lines[0], names[i])
			}
		}
		if !header {
			if err := distinct(rowNames, func(i int) (int, int) { return dlines[i], 1 }, rr, "line"); err != nil {
				return Matrix{}, err
			}
			names = rowNames
		}
	}

	m := Matrix{Values: make([][]float64, n), Names: names, Named: names != nil}
	for i, d := range data {
		off := 0
		if nameCol {
			off = 1
		}
		m.Values[i] = make([]float64, n)
		for j, c := range d[off:] {
			v, msg := parseDecimal(c)
			if msg == "" {
				msg = check(i, j, v, c)
			} else if !header && i == 0 && c != "" {
				msg += "; a first line that holds a number is a row of numbers, not a header (a header holds only names)"
			}
			if msg != "" {
				return Matrix{}, rr.fail(dlines[i], j+1+off, "%s", msg)
			}
			m.Values[i][j] = v
		}
	}
	if m.Names == nil {
		for i := 1; i <= n; i++ {
			m.Names = append(m.Names, strconv.Itoa(i))
		}
	}
	return m, nil
}

// distinct checks that names are not empty and differ; where(i) is the
// line and column of name i, and what says where the earlier one was.
func distinct(names []string, where func(i int) (int, int), rr *recordReader, what string) error {
	seen := make(map[string]int, len(names))
	for i, s := range names {
		line, col := where(i)
		if s == "" {
			return rr.fail(line, col, "the category has no name")
		}
		if k, dup := seen[s]; dup {
			l0, c0 := where(k)
			at := fmt.Sprintf("column %d", c0)
			if what == "line" {
				at = fmt.Sprintf("line %d", l0)
			}
			return rr.fail(line, col, "the category %q is named twice (also at %s)", s, at)
		}
		seen[s] = i
	}
	return nil
}

// parseDecimal reads a number written in decimal: an optional sign,
// digits with an optional decimal point, an optional exponent; finite.
// It returns what is wrong with s, or "".
func parseDecimal(s string) (float64, string) {
	if s == "" {
		return 0, "the cell is empty; write a number (0 for none)"
	}
	i := 0
	if s[0] == '+' || s[0] == '-' {
		i++
	}
	digits := 0
	for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
		digits++
	}
	if i < len(s) && s[i] == '.' {
		for i++; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			digits++
		}
	}
	if digits > 0 && i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			exp++
		}
		if exp == 0 {
			digits = 0
		}
	}
	if digits == 0 || i != len(s) {
		if strings.Count(s, ",") == 1 && isNumber(strings.Replace(s, ",", ".", 1)) {
			return 0, fmt.Sprintf("%q is not a number: write decimals with a point (%s)", s, strings.Replace(s, ",", ".", 1))
		}
		return 0, fmt.Sprintf("%q is not a number", s)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, fmt.Sprintf("%q is too large: numbers here must lie within ±%.3g", s, maxFloat)
	}
	return v, ""
}

// isNumber is whether s is a number as parseDecimal reads them.
func isNumber(s string) bool {
	_, msg := parseDecimal(s)
	return msg == ""
}
