package gui

import (
	"image/color"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
	"gonum.org/v1/plot/vg"

	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// evalDone opens the evaluation window on the demo as Ines and evaluates.
func evalDone(t *testing.T, u *ui) *evalScreen {
	t.Helper()
	s := newEvalScreen(u)
	s.truth.SetSelected("Ines")
	computeAndWait(t, "the evaluation did not finish", &s.done, s.compute)
	return s
}

// Charts wear the theme: in the light and the dark variant the chart's
// own picture has the theme's background in its corner, and its text is
// the theme's foreground colour somewhere.
func TestChartsFollowTheTheme(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	s := evalDone(t, u)
	s.win.Resize(fyne.NewSize(1100, 820))
	for _, v := range []struct {
		name string
		v    fyne.ThemeVariant
	}{{"dark", theme.VariantDark}, {"light", theme.VariantLight}} {
		u.app.Settings().SetTheme(variantTheme{theme.DefaultTheme(), v.v})
		bg := color.NRGBAModel.Convert(theme.DefaultTheme().Color(theme.ColorNameBackground, v.v))
		fg := color.NRGBAModel.Convert(theme.DefaultTheme().Color(theme.ColorNameForeground, v.v))
		for name, c := range map[string]*chartView{"precision-recall": s.prChart, "confusion": s.confChart} {
			size := c.Size()
			if size.Width < 100 {
				t.Fatalf("%s chart is %v, not laid out", name, size)
			}
			img := c.draw(int(size.Width), int(size.Height))
			if got := color.NRGBAModel.Convert(img.At(1, 1)); got != bg {
				t.Errorf("%s, %s theme: background %v, want the theme's %v", name, v.name, got, bg)
			}
			foreground := 0
			b := img.Bounds()
			for y := b.Min.Y; y < b.Max.Y; y++ {
				for x := b.Min.X; x < b.Max.X; x++ {
					if color.NRGBAModel.Convert(img.At(x, y)) == fg {
						foreground++
					}
				}
			}
			if foreground < 50 {
				t.Errorf("%s, %s theme: %d pixels in the theme's text colour %v", name, v.name, foreground, fg)
			}
		}
	}
}

// The IoU histogram counts pairs: its count axis has whole-number ticks,
// never "250.00" — which the plotting library's default ticks wrote on the
// full demo, whose axis ran to 526.4. The chart's tick marker is checked on
// its own range and on that one.
func TestAgreementHistogramCountsAreWhole(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	u.showAgreement()
	s := u.agree
	compareNow(t, s)
	p := s.hist.Plot()
	for _, r := range [][2]float64{{p.Y.Min, p.Y.Max}, {0, 526.4}, {0, 1.12}} {
		labelled := 0
		for _, tk := range p.Y.Tick.Marker.Ticks(r[0], r[1]) {
			if tk.Label == "" {
				continue
			}
			labelled++
			if strings.ContainsAny(tk.Label, ".e") {
				t.Errorf("axis %v: count tick %q", r, tk.Label)
			}
		}
		if labelled < 2 {
			t.Errorf("axis %v: %d labelled count ticks", r, labelled)
		}
	}
}

// A tap at the centre of a cell of the evaluation's confusion matrix
// chooses that cell, as the row and column lists do, and lists its boxes.
// The centres come from the chart's own forward transform.
func TestConfusionCellTapListsItsBoxes(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	s := evalDone(t, u)
	s.win.Resize(fyne.NewSize(1100, 820))
	c := s.confChart
	size := c.Size()
	p := c.Plot()
	rows, cols := len(s.cellRow.Options), len(s.cellCol.Options)
	toPt := func(v float32) vg.Length { return vg.Length(float64(v) * 72 / 96) }
	dc := p.DataCanvas(draw.New(vgimg.NewWith(vgimg.UseWH(toPt(size.Width), toPt(size.Height)), vgimg.UseDPI(96))))
	trX, trY := p.Transforms(&dc)
	centre := func(r, col int) fyne.Position {
		x, y := trX(float64(col)), trY(float64(rows-1-r)) // row 0 on top
		return fyne.NewPos(float32(x*96/72), size.Height-float32(y*96/72))
	}
	for _, cell := range [][2]int{{0, 0}, {rows - 1, 2}, {1, cols - 1}, {2, 2}} {
		s.tabs.SelectIndex(0)
		test.TapAt(c, centre(cell[0], cell[1]))
		if got := [2]int{s.cellRow.SelectedIndex(), s.cellCol.SelectedIndex()}; got != cell {
			t.Errorf("tap at the centre of cell %v chose %v", cell, got)
			continue
		}
		if want := s.conf.Cells[cell[0]][cell[1]]; len(s.cell) != len(want) || len(s.cellBoxes.rows) != len(want) {
			t.Errorf("cell %v: %d boxes listed, the matrix has %d", cell, len(s.cellBoxes.rows), len(want))
		}
		if s.tabs.SelectedIndex() != 2 {
			t.Errorf("cell %v: the boxes' tab is not shown", cell)
		}
	}
	// Off the matrix (the title): nothing changes.
	s.cellRow.SetSelectedIndex(0)
	s.cellCol.SetSelectedIndex(0)
	test.TapAt(c, fyne.NewPos(size.Width/2, 4))
	if s.cellRow.SelectedIndex() != 0 || s.cellCol.SelectedIndex() != 0 {
		t.Errorf("a tap on the title chose a cell")
	}
}
