package gui

import (
	"bytes"
	"encoding/csv"
	"math"
	"slices"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

var nan = math.NaN()

// The expected orders below follow from the sorting rules themselves
// (derived): numbers before blanks, text case folded with digit runs by
// value, ties in the order given.

// sortTableFixture shows a table of invented rows in a test window. Column
// 1 is numeric with two blanks (NaN), column 0 is text, column 2 has ties.
func sortTableFixture(t *testing.T) (*sortTable, fyne.Window, *[]int) {
	t.Helper()
	test.NewTempApp(t)
	var got []int
	st := newSortTable([]string{"image", "score", "class"}, func(r int) { got = append(got, r) })
	st.SetRows([][]string{
		{"img10", "0.50", "dog"},
		{"img9", "—", "cat"},
		{"Img2", "0.90", "dog"},
		{"img1", "0.10", "cat"},
		{"img3", "—", "bird"},
	}, [][]float64{
		{nan, 0.5, nan},
		{nan, nan, nan},
		{nan, 0.9, nan},
		{nan, 0.1, nan},
		{nan, nan, nan},
	})
	w := test.NewTempWindow(t, st.Object())
	w.Resize(fyne.NewSize(600, 400))
	return st, w, &got
}

// sortTableCell finds the visible body cell showing text. The body draws
// its cells on refresh, which the test driver does not run by itself.
func sortTableCell(t *testing.T, st *sortTable, text string) *widget.Label {
	t.Helper()
	for _, o := range test.LaidOutObjects(st.Object()) {
		body, ok := o.(fyne.Widget)
		if !ok || o == st.table {
			continue
		}
		body.Refresh()
		for _, c := range test.WidgetRenderer(body).Objects() {
			if l, ok := c.(*widget.Label); ok && l.Text == text && l.Visible() {
				return l
			}
		}
	}
	t.Fatalf("no cell shows %q", text)
	return nil
}

func sortTableHeader(t *testing.T, st *sortTable, text string) *widget.Button {
	t.Helper()
	for _, o := range test.LaidOutObjects(st.Object()) {
		if b, ok := o.(*widget.Button); ok && b.Text == text && b.Visible() {
			return b
		}
	}
	t.Fatalf("no header button %q", text)
	return nil
}

func TestSortTableNumericColumn(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	if got, want := st.Order(), []int{0, 1, 2, 3, 4}; !slices.Equal(got, want) {
		t.Errorf("unsorted order %v, want %v", got, want)
	}
	// Blanks (NaN) after the numbers in both directions; the two blanks
	// keep their given order.
	st.SortBy(1, false)
	if got, want := st.Order(), []int{3, 0, 2, 1, 4}; !slices.Equal(got, want) {
		t.Errorf("ascending %v, want %v", got, want)
	}
	st.SortBy(1, true)
	if got, want := st.Order(), []int{2, 0, 3, 1, 4}; !slices.Equal(got, want) {
		t.Errorf("descending %v, want %v", got, want)
	}
	st.SortBy(-1, false)
	if got, want := st.Order(), []int{0, 1, 2, 3, 4}; !slices.Equal(got, want) {
		t.Errorf("unsorted again %v, want %v", got, want)
	}
}

func TestSortTableTextColumn(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	// Case folded, digit runs by value: img1 < Img2 < img3 < img9 < img10.
	st.SortBy(0, false)
	if got, want := st.Order(), []int{3, 2, 4, 1, 0}; !slices.Equal(got, want) {
		t.Errorf("ascending %v, want %v", got, want)
	}
	st.SortBy(0, true)
	if got, want := st.Order(), []int{0, 1, 4, 2, 3}; !slices.Equal(got, want) {
		t.Errorf("descending %v, want %v", got, want)
	}
}

func TestSortTableTiesKeepGivenOrder(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	// dog: rows 0, 2; cat: rows 1, 3 — each pair in given order both ways.
	st.SortBy(2, false)
	if got, want := st.Order(), []int{4, 1, 3, 0, 2}; !slices.Equal(got, want) {
		t.Errorf("ascending %v, want %v", got, want)
	}
	st.SortBy(2, true)
	if got, want := st.Order(), []int{0, 2, 1, 3, 4}; !slices.Equal(got, want) {
		t.Errorf("descending %v, want %v", got, want)
	}
	// Numeric ties too.
	st.SetRows([][]string{{"a", "1"}, {"b", "1"}, {"c", "0"}}, [][]float64{{nan, 1}, {nan, 1}, {nan, 0}})
	st.SortBy(1, true)
	if got, want := st.Order(), []int{0, 1, 2}; !slices.Equal(got, want) {
		t.Errorf("numeric ties %v, want %v", got, want)
	}
}

func TestSortTableSetRowsKeepsSortAndAcceptsNoKeys(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	st.SortBy(1, false)
	// Without keys every column sorts by text, "10" after "9".
	st.SetRows([][]string{{"x", "10"}, {"y", "9"}, {"z", ""}}, nil)
	if got, want := st.Order(), []int{2, 1, 0}; !slices.Equal(got, want) {
		t.Errorf("order %v, want %v (empty text first, then by value)", got, want)
	}
}

func TestSortTableWriteCSV(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	st.SortBy(1, true)
	var buf bytes.Buffer
	if err := st.WriteCSV(&buf); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatalf("output is not CSV: %v", err)
	}
	want := [][]string{
		{"image", "score", "class"},
		{"Img2", "0.90", "dog"},
		{"img10", "0.50", "dog"},
		{"img1", "0.10", "cat"},
		{"img9", "—", "cat"},
		{"img3", "—", "bird"},
	}
	if !slices.EqualFunc(recs, want, slices.Equal) {
		t.Errorf("CSV\n%v\nwant\n%v", recs, want)
	}
}

func TestSortTableRowClickGivesOriginalIndex(t *testing.T) {
	st, _, got := sortTableFixture(t)
	st.SortBy(1, true) // display: 2, 0, 3, 1, 4
	st.table.Select(widget.TableCellID{Row: 0, Col: 1})
	st.table.Select(widget.TableCellID{Row: 0, Col: 1}) // same row again
	st.table.Select(widget.TableCellID{Row: 4, Col: 0})
	if want := []int{2, 2, 4}; !slices.Equal(*got, want) {
		t.Errorf("onRow got %v, want %v", *got, want)
	}

	// A tap on the window at the cell showing "img10" (display row 1).
	*got = nil
	cell := sortTableCell(t, st, "img10")
	// Body cells sit below the header row, whose height a header button has.
	pos := cell.Position().AddXY(cell.Size().Width/2, sortTableHeader(t, st, "image").Size().Height+cell.Size().Height/2)
	test.TapAt(st.table, pos)
	test.TapAt(st.table, pos) // the same row again
	// Space chooses the focused cell, which the tap left on that row.
	st.table.TypedKey(&fyne.KeyEvent{Name: fyne.KeySpace})
	if want := []int{0, 0, 0}; !slices.Equal(*got, want) {
		t.Errorf("taps and Space on img10 gave %v, want %v", *got, want)
	}
}

func TestSortTableHeaderTapToggles(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	score := sortTableHeader(t, st, "score")
	if score.Icon != nil {
		t.Error("unsorted header shows a direction")
	}
	test.Tap(score)
	if st.sortCol != 1 || st.desc {
		t.Fatalf("first tap: column %d descending %v, want 1 ascending", st.sortCol, st.desc)
	}
	if got, want := st.Order(), []int{3, 0, 2, 1, 4}; !slices.Equal(got, want) {
		t.Errorf("after first tap %v, want %v", got, want)
	}
	if b := sortTableHeader(t, st, "score"); b.Icon != theme.MenuDropUpIcon() {
		t.Errorf("ascending header icon %v", b.Icon)
	}
	test.Tap(sortTableHeader(t, st, "score"))
	if !st.desc {
		t.Error("second tap did not sort descending")
	}
	if b := sortTableHeader(t, st, "score"); b.Icon != theme.MenuDropDownIcon() {
		t.Errorf("descending header icon %v", b.Icon)
	}
	// Another column starts ascending, and the old one loses its mark.
	test.Tap(sortTableHeader(t, st, "image"))
	if st.sortCol != 0 || st.desc {
		t.Errorf("tap on image: column %d descending %v", st.sortCol, st.desc)
	}
	if sortTableHeader(t, st, "score").Icon != nil {
		t.Error("score header still shows a direction")
	}
}

func TestSortTableColumnWidths(t *testing.T) {
	st, _, _ := sortTableFixture(t)
	st.SetColumnWidths(250, 0)
	image, score := sortTableCell(t, st, "img10"), sortTableCell(t, st, "0.50")
	if w := image.Size().Width; w < 245 || w > 255 {
		t.Errorf("image column is %v wide, want 250", w)
	}
	if w := score.Size().Width; w < sortTableMinWidth || w > sortTableMaxWidth {
		t.Errorf("fitted score column is %v wide", w)
	}
}
