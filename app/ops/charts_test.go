package ops

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// chartPixel maps data coordinates of p, rendered at w×h, to the image pixel
// they land on. It lays the plot out the same way plotImage does.
func chartPixel(t *testing.T, p *plot.Plot, w, h int, x, y float64) image.Point {
	t.Helper()
	c := vgimg.NewWith(vgimg.UseImage(image.NewRGBA(image.Rect(0, 0, w, h))), vgimg.UseDPI(chartDPI))
	dc := p.DataCanvas(draw.New(c))
	trX, trY := p.Transforms(&dc)
	scale := float64(chartDPI) / 72 // vg lengths are points
	return image.Pt(int(float64(trX(x))*scale), h-1-int(float64(trY(y))*scale))
}

func distinctColours(img image.Image) int {
	seen := map[color.RGBA]bool{}
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			seen[color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)] = true
		}
	}
	return len(seen)
}

func near(a, b color.Color, tol int) bool {
	ar, ag, ab, _ := a.RGBA()
	br, bg, bb, _ := b.RGBA()
	d := func(u, v uint32) int { return int(math.Abs(float64(int(u>>8) - int(v>>8)))) }
	return d(ar, br) <= tol && d(ag, bg) <= tol && d(ab, bb) <= tol
}

func TestChartRampEndsAndOrder(t *testing.T) {
	// The two ends are the brief's chosen light and dark blues.
	if got := rampColor(0); got != (color.RGBA{0xf7, 0xfb, 0xff, 0xff}) {
		t.Errorf("rampColor(0) = %v, want #f7fbff", got)
	}
	if got := rampColor(1); got != (color.RGBA{0x08, 0x30, 0x6b, 0xff}) {
		t.Errorf("rampColor(1) = %v, want #08306b", got)
	}
	// A sequential scale must darken monotonically (common practice for
	// ordered data); derived from the WCAG 2 relative-luminance formula.
	prev := math.Inf(1)
	for i := 0; i <= 20; i++ {
		l := relativeLuminance(rampColor(float64(i) / 20))
		if l >= prev {
			t.Fatalf("luminance not decreasing at step %d: %v after %v", i, l, prev)
		}
		prev = l
	}
	cs := blueRamp{5, rampLight, rampDark}.Colors()
	if len(cs) != 5 || !near(cs[0], rampLight, 0) || !near(cs[4], rampDark, 0) {
		t.Errorf("blueRamp{5} = %v", cs)
	}
	// The dark theme's ramp brightens monotonically instead: more is
	// brighter on a dark background.
	prev = math.Inf(-1)
	for i := 0; i <= 20; i++ {
		l := relativeLuminance(mixRamp(rampDarkLow, rampDarkHigh, float64(i)/20))
		if l <= prev {
			t.Fatalf("dark ramp: luminance not increasing at step %d: %v after %v", i, l, prev)
		}
		prev = l
	}
	// Text contrast: dark text on the light end, light text on the dark end.
	if cellTextColor(rampColor(0)) != color.Black || cellTextColor(rampColor(1)) != color.White {
		t.Error("cell text colour does not contrast with the ramp ends")
	}
}

func TestChartConfusionCellsShowTheirCounts(t *testing.T) {
	rows := []string{"cat", "dog"}
	cols := []string{"cat", "dog", "missed"}
	counts := [][]float64{{9, 0, 1}, {2, 5, 0}}
	p, err := ConfusionPlot(LightChartStyle(), "Confusion", "ground truth", "prediction", rows, cols, counts)
	if err != nil {
		t.Fatal(err)
	}
	const w, h = 480, 360
	img, err := PlotImage(p, w, h)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
		t.Fatalf("image is %v, want %d×%d", b, w, h)
	}
	if n := distinctColours(img); n < 30 {
		t.Errorf("only %d colours: the chart looks blank", n)
	}
	// Matrix row i is drawn at y = n-1-i so that the first row is on top.
	// Sample off the cell centre, where the count is written.
	at := func(i, j int) color.Color {
		pt := chartPixel(t, p, w, h, float64(j)+0.3, float64(len(rows)-1-i)+0.3)
		return img.At(pt.X, pt.Y)
	}
	for i := range counts {
		for j, v := range counts[i] {
			if want, got := rampColor(v/9), at(i, j); !near(got, want, 3) {
				t.Errorf("cell %s/%s (count %v): colour %v, want %v", rows[i], cols[j], v, got, want)
			}
		}
	}
	if relativeLuminance(at(0, 0)) >= relativeLuminance(at(0, 1)) {
		t.Error("the cell with the largest count is not darker than a zero cell")
	}
	if top := chartPixel(t, p, w, h, 0, 1); top.Y > h/2 {
		t.Errorf("first row is drawn at y=%d, not in the top half", top.Y)
	}
}

func TestChartConfusionAllZeros(t *testing.T) {
	p, err := ConfusionPlot(LightChartStyle(), "", "", "", []string{"a"}, []string{"a"}, [][]float64{{0}})
	if err != nil {
		t.Fatal(err)
	}
	img, err := PlotImage(p, 200, 200)
	if err != nil {
		t.Fatal(err)
	}
	pt := chartPixel(t, p, 200, 200, 0.3, 0.3)
	if got := img.At(pt.X, pt.Y); !near(got, rampLight, 3) {
		t.Errorf("a zero cell is %v, want the light end of the ramp", got)
	}
}

func TestChartIoUHistogram(t *testing.T) {
	bins := []int{0, 1, 3, 8, 20, 12, 4, 2, 0, 0}
	p, err := IoUHistogramPlot(LightChartStyle(), "IoU of matched pairs", bins, 0.55)
	if err != nil {
		t.Fatal(err)
	}
	const w, h = 500, 300
	img, err := PlotImage(p, w, h)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
		t.Fatalf("image is %v, want %d×%d", b, w, h)
	}
	if n := distinctColours(img); n < 30 {
		t.Errorf("only %d colours: the chart looks blank", n)
	}
	// Bin 4 covers [0.4, 0.5) with 20 pairs: its middle is bar fill.
	pt := chartPixel(t, p, w, h, 0.45, 10)
	if got := img.At(pt.X, pt.Y); !near(got, rampColor(0.6), 3) {
		t.Errorf("bar of bin 4 is %v, want fill %v", got, rampColor(0.6))
	}
	// Above bin 9 (empty) the plot is background.
	pt = chartPixel(t, p, w, h, 0.95, 10)
	if got := img.At(pt.X, pt.Y); !near(got, color.White, 3) {
		t.Errorf("above an empty bin is %v, want white", got)
	}
	// The dashed threshold line: dark pixels and gaps in its column.
	dark, light := 0, 0
	for y := 1.0; y < 20; y += 0.25 {
		pt := chartPixel(t, p, w, h, 0.55, y)
		if relativeLuminance(img.At(pt.X, pt.Y)) < 0.1 {
			dark++
		} else {
			light++
		}
	}
	if dark == 0 || light == 0 {
		t.Errorf("threshold column: %d dark and %d light samples, want a dashed line", dark, light)
	}
}

func TestChartSavePNG(t *testing.T) {
	p, err := IoUHistogramPlot(LightChartStyle(), "", []int{1, 2, 3}, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "iou.png")
	if err := SavePlotPNG(p, 321, 123, path); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("saved chart does not decode as PNG: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 321 || b.Dy() != 123 {
		t.Errorf("PNG is %v, want 321×123", b)
	}
	if err := SavePlotPNG(p, 10, 10, filepath.Join(t.TempDir(), "no", "such", "dir.png")); err == nil {
		t.Error("saving into a missing folder did not fail")
	}
	// Saving again replaces the file whole and leaves no temporary file; a
	// failed save (no plot) leaves the saved chart as it was.
	before, _ := os.ReadFile(path)
	if err := SavePlotPNG(p, 64, 32, path); err != nil {
		t.Fatal(err)
	}
	if err := SavePlotPNG(nil, 64, 32, path); err == nil {
		t.Error("saving no plot did not fail")
	}
	after, _ := os.ReadFile(path)
	if entries, _ := os.ReadDir(filepath.Dir(path)); len(entries) != 1 || bytes.Equal(before, after) {
		t.Errorf("after saving again: %v in the folder, file changed %v", entries, !bytes.Equal(before, after))
	}
	if img, err := png.Decode(bytes.NewReader(after)); err != nil || img.Bounds().Dx() != 64 {
		t.Errorf("the chart saved again: %v", err)
	}
}

func TestChartBadInput(t *testing.T) {
	two := []string{"a", "b"}
	for name, c := range map[string]struct {
		rows, cols []string
		counts     [][]float64
	}{
		"no rows":         {nil, two, nil},
		"no columns":      {two, nil, [][]float64{{}, {}}},
		"too few rows":    {two, two, [][]float64{{1, 2}}},
		"ragged":          {two, two, [][]float64{{1, 2}, {3}}},
		"too many counts": {two, two, [][]float64{{1, 2, 3}, {4, 5, 6}}},
		"negative":        {two, two, [][]float64{{1, -2}, {3, 4}}},
		"NaN":             {two, two, [][]float64{{1, math.NaN()}, {3, 4}}},
		"infinite":        {two, two, [][]float64{{1, math.Inf(1)}, {3, 4}}},
	} {
		if _, err := ConfusionPlot(LightChartStyle(), "", "", "", c.rows, c.cols, c.counts); err == nil {
			t.Errorf("confusion matrix %s: no error", name)
		}
	}
	for name, c := range map[string]struct {
		bins []int
		thr  float64
	}{
		"no bins":          {nil, 0.5},
		"negative count":   {[]int{1, -1}, 0.5},
		"threshold above":  {[]int{1}, 1.5},
		"threshold below":  {[]int{1}, -0.1},
		"threshold is NaN": {[]int{1}, math.NaN()},
	} {
		if _, err := IoUHistogramPlot(LightChartStyle(), "", c.bins, c.thr); err == nil {
			t.Errorf("IoU histogram %s: no error", name)
		}
	}
	p, _ := IoUHistogramPlot(LightChartStyle(), "", []int{1}, 0.5)
	if _, err := PlotImage(p, 0, 10); err == nil {
		t.Error("zero width rendered")
	}
	if _, err := PlotImage(nil, 10, 10); err == nil {
		t.Error("nil plot rendered")
	}
}
