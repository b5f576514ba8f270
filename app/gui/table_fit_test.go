package gui

import (
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// shownCells returns the table's body cells on show (refreshed, since the
// test driver draws no frame by itself) and its header buttons.
func shownCells(st *sortTable) (cells []*widget.Label, headers []*widget.Button) {
	for _, o := range test.LaidOutObjects(st.Object()) {
		if b, ok := o.(*widget.Button); ok && b.Visible() && b.Text != "" {
			headers = append(headers, b)
			continue
		}
		body, ok := o.(fyne.Widget)
		if !ok || o == st.table {
			continue
		}
		body.Refresh()
		for _, c := range test.WidgetRenderer(body).Objects() {
			if l, ok := c.(*widget.Label); ok && l.Visible() && l.Text != "" {
				cells = append(cells, l)
			}
		}
	}
	return cells, headers
}

// checkFits fails for every header or cell on show whose text is wider
// than its column, unless choosing its row shows the text whole in the
// table's detail line. A header must be as wide as an untruncated button
// of its text needs; a cell must draw its text whole, without the
// toolkit's ellipsis (which it applies already at a width equal to the
// label's minimum).
func checkFits(t *testing.T, name string, st *sortTable) {
	t.Helper()
	cells, headers := shownCells(st)
	if len(headers) != len(st.headers) {
		t.Errorf("%s: %d of %d headers on show; make the window wider for the test", name, len(headers), len(st.headers))
	}
	for _, b := range headers {
		need := widget.NewButtonWithIcon(b.Text, theme.MenuDropDownIcon(), nil).MinSize().Width
		if b.Size().Width+0.5 < need {
			t.Errorf("%s: header %q is %.0f wide, its text needs %.0f", name, b.Text, b.Size().Width, need)
		}
	}
	if len(cells) == 0 {
		t.Errorf("%s: no cells on show", name)
	}
	for _, l := range cells {
		drawn := drawnText(l)
		if drawn == l.Text {
			continue
		}
		// Cut short: its row must show it whole below the table.
		pos := -1
		for p, r := range st.order {
			for c := range st.headers {
				if st.cell(r, c) == l.Text {
					pos = p
				}
			}
		}
		if pos < 0 {
			t.Fatalf("%s: cell %q is in no row", name, l.Text)
		}
		st.table.Select(widget.TableCellID{Row: pos, Col: 0})
		if !st.detail.Visible() || !strings.Contains(st.detail.Text, l.Text) {
			t.Errorf("%s: cell %q is drawn as %q, and the detail line says %q", name, l.Text, drawn, st.detail.Text)
		}
	}
}

// The agreement window's tables show every value whole: each column is as
// wide as its widest cell and its header.
func TestAgreementTablesFitTheirValues(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.app.Settings().SetTheme(theme.DefaultTheme()) // the sizes people see, not the test theme's
	u.showAgreement()
	s := u.agree
	compareNow(t, s)
	s.win.Resize(fyne.NewSize(2400, 900)) // every column on show
	tabs := findTabs(s.win.Content())
	for i, c := range []struct {
		name string
		st   *sortTable
	}{{"images", s.images}, {"classes", s.classes}, {"pairs", s.pairs}} {
		tabs.SelectIndex(i + 1)
		checkFits(t, c.name, c.st)
	}
}

// So do the evaluation window's tables, the box coordinates included.
func TestEvaluationTablesFitTheirValues(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.app.Settings().SetTheme(theme.DefaultTheme()) // the sizes people see, not the test theme's
	s := newEvalScreen(u)
	s.truth.SetSelected("Ines")
	computeAndWait(t, "the evaluation did not finish", &s.done, s.compute)
	s.cellRow.SetSelectedIndex(0)
	s.cellCol.SetSelectedIndex(0)
	s.win.Resize(fyne.NewSize(2400, 900))
	tabs := findTabs(s.win.Content())
	tabs.SelectIndex(1)
	checkFits(t, "classes", s.classes)
	tabs.SelectIndex(2)
	checkFits(t, "boxes behind a cell", s.cellBoxes)
}

// In the statistics window every column of the table is on show, none of
// it under the chart, at the window's opening size.
func TestSuggestionStatsTableBesideTheChart(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.app.Settings().SetTheme(theme.DefaultTheme()) // the sizes people see, not the test theme's
	decideTop(t, u, 3)
	sw := u.newStatsWindow()
	sw.win.Show()
	st, chart := sw.table, sw.chart
	d := u.app.Driver()
	tablePos, chartPos := d.AbsolutePositionForObject(st.table), d.AbsolutePositionForObject(chart)
	if right := tablePos.X + st.table.Size().Width; right > chartPos.X {
		t.Errorf("the table reaches x=%.0f, under the chart from x=%.0f", right, chartPos.X)
	}
	if st.table.Size().Width < st.FullWidth() {
		t.Errorf("the table is %.0f wide for columns %.0f wide: the last ones are hidden", st.table.Size().Width, st.FullWidth())
	}
	checkFits(t, "statistics", st)
}

// drawnText is the text a label draws, an ellipsis included when it cuts
// the text short.
func drawnText(l *widget.Label) string {
	l.Refresh()
	var b strings.Builder
	var walk func(o fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		switch x := o.(type) {
		case *fcanvas.Text:
			b.WriteString(x.Text)
		case fyne.Widget:
			for _, c := range test.WidgetRenderer(x).Objects() {
				walk(c)
			}
		}
	}
	walk(l)
	return b.String()
}

// A value wider than a column may grow is cut short with an ellipsis and
// shown whole in the detail line once its row is chosen; until then the
// line says how to read it.
func TestSortTableDetailLineShowsLongValues(t *testing.T) {
	st, w, got := sortTableFixture(t)
	long := strings.Repeat("a long file name ", 40) + "end.jpg"
	st.SetRows([][]string{{"img1", "0.5", "cat"}, {long, "0.7", "dog"}}, [][]float64{{nan, 0.5, nan}, {nan, 0.7, nan}})
	w.Resize(fyne.NewSize(1600, 400))
	if !st.detail.Visible() || st.detail.Text != sortTableCutHint {
		t.Fatalf("detail line before a choice: visible %v, %q", st.detail.Visible(), st.detail.Text)
	}
	checkFits(t, "long", st)
	if !strings.Contains(st.detail.Text, "image: "+long) || !strings.Contains(st.detail.Text, "score: 0.7") {
		t.Errorf("detail line %q", st.detail.Text)
	}
	if len(*got) == 0 || (*got)[len(*got)-1] != 1 {
		t.Errorf("choosing the row reported %v", *got)
	}
	// Short values again: no detail line.
	st.SetRows([][]string{{"img1", "0.5", "cat"}}, nil)
	if st.detail.Visible() {
		t.Errorf("detail line still shown for values that fit")
	}
}
