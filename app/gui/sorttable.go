package gui

import (
	"cmp"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
	"unicode"
	"unicode/utf8"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// sortTable is a table whose column headers sort it (click: ascending,
// again: descending) and whose rows can be clicked.
type sortTable struct {
	headers []string
	rows    [][]string
	keys    [][]float64
	order   []int // display position -> index into rows

	sortCol int // -1: rows in the order given
	desc    bool

	widths  map[int]float32 // set by SetColumnWidths; others fit their content
	colW    []float32       // the width each column was given
	leading map[int]bool    // columns aligned as text whatever their keys
	cut     bool            // some cell may be wider than its column
	onRow   func(row int)
	table   *widget.Table
	detail  *widget.Label // the chosen row in full, when cells are cut short
	obj     fyne.CanvasObject
}

// Auto-fitted columns stay within these widths so one long name cannot
// push the rest off screen; a cell cut short is shown whole in the detail
// line under the table when its row is chosen.
const (
	sortTableMinWidth = 56
	sortTableMaxWidth = 360
	sortTableFitRows  = 500 // rows measured when fitting a column
	sortTableSlack    = 2   // pixels beyond a label's minimum width, against rounding
)

// sortTableCutHint is the detail line before a row is chosen.
const sortTableCutHint = "Some values are cut short: choose a row to read it whole here."

// newSortTable returns an empty table with the given column headers.
// onRow, when not nil, is called with the index (into the rows given to
// SetRows) of a row that is clicked or chosen with the keyboard.
func newSortTable(headers []string, onRow func(row int)) *sortTable {
	t := &sortTable{headers: slices.Clone(headers), sortCol: -1, onRow: onRow, widths: map[int]float32{}, leading: map[int]bool{}}
	t.detail = widget.NewLabel("")
	t.detail.Wrapping = fyne.TextWrapWord
	t.detail.Hide()
	t.table = widget.NewTable(
		func() (int, int) { return len(t.order), len(t.headers) },
		func() fyne.CanvasObject {
			l := widget.NewLabel("")
			l.Truncation = fyne.TextTruncateEllipsis
			return l
		},
		t.updateCell,
	)
	t.table.ShowHeaderRow = true
	t.table.CreateHeader = func() fyne.CanvasObject {
		b := widget.NewButton("", nil)
		b.Importance = widget.LowImportance
		b.IconPlacement = widget.ButtonIconTrailingText
		return b
	}
	t.table.UpdateHeader = t.updateHeader
	t.table.OnSelected = func(id widget.TableCellID) {
		// Unselect at once so that clicking the same row again reports again.
		t.table.Unselect(id)
		if id.Row < 0 || id.Row >= len(t.order) {
			return
		}
		if t.cut {
			t.detail.SetText(t.rowText(t.order[id.Row]))
		}
		if t.onRow != nil {
			t.onRow(t.order[id.Row])
		}
	}
	t.obj = container.NewBorder(nil, t.detail, nil, nil, t.table)
	t.fitColumns()
	return t
}

// Object is the table, with its detail line, to place in a layout.
func (t *sortTable) Object() fyne.CanvasObject { return t.obj }

// rowText is row r in full: "header: value" for each column.
func (t *sortTable) rowText(r int) string {
	parts := make([]string, len(t.headers))
	for c, h := range t.headers {
		parts[c] = h + ": " + t.cell(r, c)
	}
	return strings.Join(parts, "   ·   ")
}

// SetTextColumns aligns the given columns to the leading edge, as text,
// even where their cells have numeric sort keys (a verbal band sorted by
// its number).
func (t *sortTable) SetTextColumns(cols ...int) {
	for _, c := range cols {
		t.leading[c] = true
	}
	t.table.Refresh()
}

// FullWidth is the width that shows every column side by side.
func (t *sortTable) FullWidth() float32 {
	pad := theme.Current().Size(theme.SizeNamePadding) // the table's separators
	w := float32(0)
	for _, c := range t.colW {
		w += c + pad
	}
	return w
}

func (t *sortTable) updateCell(id widget.TableCellID, o fyne.CanvasObject) {
	l := o.(*widget.Label)
	if id.Row < 0 || id.Row >= len(t.order) {
		l.SetText("")
		return
	}
	r := t.order[id.Row]
	// Numbers line up on the right, as on paper.
	align := fyne.TextAlignLeading
	if !math.IsNaN(t.key(r, id.Col)) && !t.leading[id.Col] {
		align = fyne.TextAlignTrailing
	}
	if l.Alignment != align {
		l.Alignment = align
		l.Refresh()
	}
	l.SetText(t.cell(r, id.Col))
}

func (t *sortTable) updateHeader(id widget.TableCellID, o fyne.CanvasObject) {
	b := o.(*widget.Button)
	if id.Row >= 0 || id.Col < 0 || id.Col >= len(t.headers) {
		b.SetText("")
		b.SetIcon(nil)
		b.OnTapped = nil
		return
	}
	col := id.Col
	b.OnTapped = func() { t.headerTapped(col) }
	var icon fyne.Resource
	if col == t.sortCol {
		// Drawn triangles, not ▲/▼ glyphs, which the bundled font may lack.
		icon = theme.MenuDropUpIcon()
		if t.desc {
			icon = theme.MenuDropDownIcon()
		}
	}
	b.Text = t.headers[col]
	b.SetIcon(icon)
}

// headerTapped sorts by col, ascending first, and flips the direction when
// col is already the sorted column.
func (t *sortTable) headerTapped(col int) {
	if col == t.sortCol {
		t.SortBy(col, !t.desc)
		return
	}
	t.SortBy(col, false)
}

// SetRows replaces the contents, keeping the current sort. keys[i][j], when
// keys is not nil, is the numeric sort key of cell (i,j); NaN or a missing
// key means the cell sorts by its text.
func (t *sortTable) SetRows(rows [][]string, keys [][]float64) {
	t.rows = slices.Clone(rows)
	t.keys = slices.Clone(keys)
	t.table.UnselectAll()
	t.resort()
	t.fitColumns()
	t.table.Refresh()
	if t.cut {
		t.detail.SetText(sortTableCutHint)
		t.detail.Show()
	} else {
		t.detail.Hide()
	}
}

// SortBy orders the rows by column col (a col outside the headers restores
// the order given to SetRows). Numbers sort before text and NaN keys, in
// either direction; ties keep the order given to SetRows.
func (t *sortTable) SortBy(col int, descending bool) {
	if col < 0 || col >= len(t.headers) {
		col, descending = -1, false
	}
	t.sortCol, t.desc = col, descending
	t.resort()
	t.table.Refresh()
}

// Order returns the display order as indices into the rows given to SetRows.
func (t *sortTable) Order() []int { return slices.Clone(t.order) }

// WriteCSV writes the headers and then the rows in display order.
func (t *sortTable) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(t.headers); err != nil {
		return fmt.Errorf("write table header: %w", err)
	}
	for pos, r := range t.order {
		rec := slices.Clone(t.rows[r])
		for len(rec) < len(t.headers) {
			rec = append(rec, "")
		}
		if err := cw.Write(rec); err != nil {
			return fmt.Errorf("write table row %d: %w", pos+1, err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("write table: %w", err)
	}
	return nil
}

// SetColumnWidths fixes the widths of the first len(widths) columns; a
// width of 0 or less leaves that column fitted to its content.
func (t *sortTable) SetColumnWidths(widths ...float32) {
	for i, w := range widths {
		if i >= len(t.headers) {
			break
		}
		if w > 0 {
			t.widths[i] = w
		} else {
			delete(t.widths, i)
		}
	}
	t.fitColumns()
}

func (t *sortTable) cell(r, c int) string {
	if c < len(t.rows[r]) {
		return t.rows[r][c]
	}
	return ""
}

func (t *sortTable) key(r, c int) float64 {
	if r < len(t.keys) && c < len(t.keys[r]) {
		return t.keys[r][c]
	}
	return math.NaN()
}

func (t *sortTable) resort() {
	t.order = t.order[:0]
	for i := range t.rows {
		t.order = append(t.order, i)
	}
	if t.sortCol < 0 {
		return
	}
	c := t.sortCol
	slices.SortStableFunc(t.order, func(a, b int) int {
		ka, kb := t.key(a, c), t.key(b, c)
		na, nb := math.IsNaN(ka), math.IsNaN(kb)
		var d int
		switch {
		case na != nb: // numbers first whichever the direction
			if na {
				return 1
			}
			return -1
		case !na:
			d = cmp.Compare(ka, kb)
		default:
			if d = compareText(t.cell(a, c), t.cell(b, c)); d == 0 {
				// Cells that differ only in letter case still get a fixed order.
				d = cmp.Compare(t.cell(a, c), t.cell(b, c))
			}
		}
		if t.desc {
			d = -d
		}
		return d
	})
}

// compareText orders text ignoring letter case and with runs of digits
// compared as numbers, so that "img9" comes before "img10".
func compareText(a, b string) int {
	for a != "" && b != "" {
		ra, sa := utf8.DecodeRuneInString(a)
		rb, sb := utf8.DecodeRuneInString(b)
		if isDigit(ra) && isDigit(rb) {
			da, db := digitRun(a), digitRun(b)
			if d := compareDigits(a[:da], b[:db]); d != 0 {
				return d
			}
			a, b = a[da:], b[db:]
			continue
		}
		la, lb := unicode.ToLower(ra), unicode.ToLower(rb)
		if la != lb {
			return cmp.Compare(la, lb)
		}
		a, b = a[sa:], b[sb:]
	}
	return cmp.Compare(len(a), len(b))
}

func isDigit(r rune) bool { return r >= '0' && r <= '9' }

func digitRun(s string) int {
	n := 0
	for n < len(s) && isDigit(rune(s[n])) {
		n++
	}
	return n
}

// compareDigits compares two runs of ASCII digits by value, of any length.
func compareDigits(a, b string) int {
	trim := func(s string) string {
		for len(s) > 1 && s[0] == '0' {
			s = s[1:]
		}
		return s
	}
	ta, tb := trim(a), trim(b)
	if len(ta) != len(tb) {
		return cmp.Compare(len(ta), len(tb))
	}
	return cmp.Compare(ta, tb)
}

// fitColumns sizes each column without a fixed width to its header and the
// widest of its first cells, as a label and a header button measure them,
// within sortTableMinWidth..sortTableMaxWidth.
func (t *sortTable) fitColumns() {
	th := theme.Current()
	size := th.Size(theme.SizeNameText)
	// A label adds the same padding to any text; measure it once. Its
	// ellipsis sets in already when the text fills it exactly (Fyne 2.7.1,
	// seen in the table tests), so give each cell sortTableSlack more.
	probe := widget.NewLabel("M")
	lpad := probe.MinSize().Width - fyne.MeasureText("M", size, fyne.TextStyle{}).Width + sortTableSlack
	t.colW = make([]float32, len(t.headers))
	t.cut = len(t.rows) > sortTableFitRows
	for c, h := range t.headers {
		// Room for the sort direction's icon whether or not it shows.
		hb := widget.NewButtonWithIcon(h, theme.MenuDropDownIcon(), nil)
		hb.IconPlacement = widget.ButtonIconTrailingText
		need := hb.MinSize().Width
		for r := 0; r < len(t.rows) && r < sortTableFitRows; r++ {
			need = max(need, fyne.MeasureText(t.cell(r, c), size, fyne.TextStyle{}).Width+lpad)
		}
		w, fixed := t.widths[c]
		if !fixed {
			w = min(max(need, sortTableMinWidth), sortTableMaxWidth)
		}
		t.cut = t.cut || need > w
		t.colW[c] = w
		t.table.SetColumnWidth(c, w)
	}
}
