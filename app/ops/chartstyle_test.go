package ops

import (
	"image/color"
	"math"
	"strings"
	"testing"

	"fyne.io/fyne/v2/theme"
	"gonum.org/v1/plot/font"
)

// Count axes carry whole numbers only, "250" and never "250.00", about
// five of them over the range (derived from the 1-2-5 rule of the ticker).
func TestIntegerTicks(t *testing.T) {
	for _, r := range [][2]float64{{0, 1.12}, {0, 7}, {0, 560}, {0, 1e6 * 1.12}, {3, 4}, {0, 0}} {
		ticks := IntegerTicks{}.Ticks(r[0], r[1])
		if len(ticks) == 0 || len(ticks) > 7 {
			t.Errorf("range %v: %d ticks", r, len(ticks))
		}
		for _, tk := range ticks {
			if tk.Value != math.Trunc(tk.Value) || strings.ContainsAny(tk.Label, ".e") || tk.Value < r[0] || tk.Value > r[1] {
				t.Errorf("range %v: tick %v %q", r, tk.Value, tk.Label)
			}
		}
	}
	// The histogram's count axis uses them.
	p, err := IoUHistogramPlot(LightChartStyle(), "", []int{0, 3, 250, 17}, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	for _, tk := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
		if tk.Label != "" && strings.Contains(tk.Label, ".") {
			t.Errorf("histogram count tick %q", tk.Label)
		}
	}
}

// The toolkit's bundled font becomes a chart typeface: text set in it
// renders, and the plot draws on the style's background.
func TestChartStyleFontAndBackground(t *testing.T) {
	if err := RegisterChartFont("test-toolkit", theme.TextFont().Content(), theme.TextBoldFont().Content()); err != nil {
		t.Fatal(err)
	}
	if err := RegisterChartFont("broken", []byte("not a font"), nil); err == nil {
		t.Error("a file that is no font was taken")
	}
	bg := color.NRGBA{0x17, 0x17, 0x18, 0xff}
	st := ChartStyle{Background: bg, Foreground: color.White, Dark: true, Typeface: "test-toolkit", TextSize: 14}
	if f := st.Font(1, true); !font.DefaultCache.Has(f) {
		t.Errorf("font %+v is not in the cache", f)
	}
	p, err := IoUHistogramPlot(st, "IoU", []int{1, 2, 3}, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	img, err := PlotImage(p, 320, 240)
	if err != nil {
		t.Fatal(err)
	}
	if got := color.NRGBAModel.Convert(img.At(1, 1)); got != color.Color(bg) {
		t.Errorf("background %v, want %v", got, bg)
	}
	// 14 px text is 10.5 pt at 96 dpi (1 pt = 1/72 in).
	if got := st.Font(1, false).Size.Points(); math.Abs(got-10.5) > 1e-9 {
		t.Errorf("body text %v pt, want 10.5", got)
	}
}

// A point at the centre of each cell, found with the plot's forward
// transform, maps back to that cell, the first row on top; points off the
// matrix map to none. Checked at 1× and 2× scale.
func TestConfusionCellAt(t *testing.T) {
	rows := []string{"cat", "dog", "false alarm"}
	cols := []string{"cat", "dog", "missed", "x"}
	counts := [][]float64{{9, 0, 1, 0}, {2, 5, 0, 0}, {1, 1, 0, 0}}
	p, err := ConfusionPlot(LightChartStyle(), "Confusion", "truth", "prediction", rows, cols, counts)
	if err != nil {
		t.Fatal(err)
	}
	const w, h = 480, 360
	for i := range rows {
		for j := range cols {
			pt := chartPixel(t, p, w, h, float64(j), float64(len(rows)-1-i))
			for _, scale := range []float64{1, 2} {
				r, c, ok := ConfusionCellAt(p, len(rows), len(cols), w*scale, h*scale, float64(pt.X)*scale, float64(pt.Y)*scale)
				if !ok || r != i || c != j {
					t.Errorf("centre of cell %d,%d at %v (scale %v): got %d,%d %v", i, j, pt, scale, r, c, ok)
				}
			}
		}
	}
	for _, pt := range [][2]float64{{2, 2}, {w - 2, h - 2}, {2, h / 2}} {
		if r, c, ok := ConfusionCellAt(p, len(rows), len(cols), w, h, pt[0], pt[1]); ok {
			t.Errorf("point %v off the matrix gave cell %d,%d", pt, r, c)
		}
	}
}
