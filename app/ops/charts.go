package ops

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"strconv"

	"boxwright/project"
	"boxwright/project/formats"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// chartDPI is the resolution charts are rendered at, so that w×h pixels on
// screen and in a saved PNG are the same picture.
const chartDPI = 96

// The heat-map ramp: one hue, light to dark, so that order is readable
// without telling colours apart (and in greyscale print).
var (
	rampLight = color.RGBA{0xf7, 0xfb, 0xff, 0xff}
	rampDark  = color.RGBA{0x08, 0x30, 0x6b, 0xff}
)

// On a dark background the ramp runs the other way, from a blue barely
// off the background to a light blue: more is brighter there.
var (
	rampDarkLow  = color.RGBA{0x1f, 0x2a, 0x38, 0xff}
	rampDarkHigh = color.RGBA{0x9e, 0xca, 0xe1, 0xff}
)

// blueRamp is a palette.Palette of n colours from lo to hi.
type blueRamp struct {
	n      int
	lo, hi color.RGBA
}

// Colors implements palette.Palette.
func (r blueRamp) Colors() []color.Color {
	n := max(r.n, 2)
	cs := make([]color.Color, n)
	for i := range cs {
		cs[i] = mixRamp(r.lo, r.hi, float64(i)/float64(n-1))
	}
	return cs
}

var _ palette.Palette = blueRamp{}

// rampColor returns the light theme's ramp colour at t in [0,1] (0
// lightest, 1 darkest); t outside the range is clamped.
func rampColor(t float64) color.RGBA { return mixRamp(rampLight, rampDark, t) }

// mixRamp returns the colour a fraction t of the way from lo to hi, t
// clamped to [0,1].
func mixRamp(lo, hi color.RGBA, t float64) color.RGBA {
	if math.IsNaN(t) || t < 0 {
		t = 0
	}
	t = min(t, 1)
	mix := func(a, b uint8) uint8 {
		return uint8(math.Round(float64(a) + t*(float64(b)-float64(a))))
	}
	return color.RGBA{mix(lo.R, hi.R), mix(lo.G, hi.G), mix(lo.B, hi.B), 0xff}
}

// relativeLuminance is the WCAG 2 relative luminance of c, 0 (black) to 1 (white).
func relativeLuminance(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	lin := func(v uint32) float64 {
		s := float64(v) / 0xffff
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(r) + 0.7152*lin(g) + 0.0722*lin(b)
}

// cellTextColor picks the text colour with the better contrast on bg.
// 0.179 is where black and white text have equal WCAG 2 contrast (derived:
// (L+0.05)/0.05 = 1.05/(L+0.05)).
func cellTextColor(bg color.Color) color.Color {
	if relativeLuminance(bg) > 0.179 {
		return color.Black
	}
	return color.White
}

// matrixGrid adapts a counts matrix to plotter.GridXYZ with row 0 drawn at
// the top: grid row r (counted from the bottom) is matrix row n-1-r.
type matrixGrid struct{ counts [][]float64 }

func (g matrixGrid) Dims() (c, r int)   { return len(g.counts[0]), len(g.counts) }
func (g matrixGrid) X(c int) float64    { return float64(c) }
func (g matrixGrid) Y(r int) float64    { return float64(r) }
func (g matrixGrid) Z(c, r int) float64 { return g.counts[len(g.counts)-1-r][c] }

// formatCount writes whole numbers without decimals and fractions (a
// normalised matrix) with two.
func formatCount(v float64) string {
	if v == math.Trunc(v) && math.Abs(v) < 1e15 {
		return strconv.FormatFloat(v, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', 2, 64)
}

// ConfusionPlot draws a confusion matrix as a heat map with the count
// written in each cell, rowNames down the y axis (first row at the top) and
// colNames along the x axis. counts must have len(rowNames) rows of
// len(colNames) finite, non-negative values.
func ConfusionPlot(st ChartStyle, title, rowLabel, colLabel string, rowNames, colNames []string, counts [][]float64) (*plot.Plot, error) {
	if len(rowNames) == 0 || len(colNames) == 0 {
		return nil, errors.New("confusion matrix: no rows or no columns")
	}
	if len(counts) != len(rowNames) {
		return nil, fmt.Errorf("confusion matrix: %d rows of counts for %d row names", len(counts), len(rowNames))
	}
	hi := 0.0
	for i, row := range counts {
		if len(row) != len(colNames) {
			return nil, fmt.Errorf("confusion matrix: row %d (%s) has %d counts for %d columns", i, rowNames[i], len(row), len(colNames))
		}
		for j, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
				return nil, fmt.Errorf("confusion matrix: count at row %s, column %s is %v", rowNames[i], colNames[j], v)
			}
			hi = max(hi, v)
		}
	}

	p := st.NewPlot()
	p.Title.Text = title
	p.Y.Label.Text = rowLabel
	p.X.Label.Text = colLabel

	grid := matrixGrid{counts}
	rlo, rhi := st.ramp()
	hm := plotter.NewHeatMap(grid, blueRamp{256, rlo, rhi})
	hm.Min = 0
	// An all-zero matrix would make the palette scale infinite; any positive
	// Max keeps every cell at the light end.
	hm.Max = max(hi, 1)
	p.Add(hm)

	n := len(rowNames)
	var pts plotter.XYs
	var labels []string
	for i, row := range counts {
		for j, v := range row {
			pts = append(pts, plotter.XY{X: float64(j), Y: float64(n - 1 - i)})
			labels = append(labels, formatCount(v))
		}
	}
	cells, err := plotter.NewLabels(plotter.XYLabels{XYs: pts, Labels: labels})
	if err != nil {
		return nil, fmt.Errorf("confusion matrix: cell labels: %w", err)
	}
	k := 0
	for _, row := range counts {
		for _, v := range row {
			ts := &cells.TextStyle[k]
			*ts = st.TextStyle(1, false)
			ts.XAlign = draw.XCenter
			ts.YAlign = draw.YCenter
			ts.Color = cellTextColor(mixRamp(rlo, rhi, v/hm.Max))
			k++
		}
	}
	p.Add(cells)

	yt := make(plot.ConstantTicks, n)
	for i, name := range rowNames {
		yt[i] = plot.Tick{Value: float64(n - 1 - i), Label: name}
	}
	xt := make(plot.ConstantTicks, len(colNames))
	long := false
	for j, name := range colNames {
		xt[j] = plot.Tick{Value: float64(j), Label: name}
		long = long || len([]rune(name)) > 6
	}
	p.Y.Tick.Marker = yt
	p.X.Tick.Marker = xt
	if long {
		// Slanted names overlap less when there are many classes.
		p.X.Tick.Label.Rotation = math.Pi / 4
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YCenter
	}
	p.X.Min, p.X.Max = -0.5, float64(len(colNames))-0.5
	p.Y.Min, p.Y.Max = -0.5, float64(n)-0.5
	return p, nil
}

// IoUHistogramPlot draws the IoU histogram of matched pairs: bins[i] counts
// pairs with IoU in [i/n, (i+1)/n). A dashed vertical line marks threshold.
func IoUHistogramPlot(st ChartStyle, title string, bins []int, threshold float64) (*plot.Plot, error) {
	if len(bins) == 0 {
		return nil, errors.New("IoU histogram: no bins")
	}
	if math.IsNaN(threshold) || threshold < 0 || threshold > 1 {
		return nil, fmt.Errorf("IoU histogram: threshold %v is outside 0..1", threshold)
	}
	w := 1 / float64(len(bins))
	hb := make([]plotter.HistogramBin, len(bins))
	top := 0
	for i, c := range bins {
		if c < 0 {
			return nil, fmt.Errorf("IoU histogram: bin %d has a negative count %d", i, c)
		}
		hb[i] = plotter.HistogramBin{Min: float64(i) * w, Max: float64(i+1) * w, Weight: float64(c)}
		top = max(top, c)
	}

	p := st.NewPlot()
	p.Title.Text = title
	p.X.Label.Text = "IoU"
	p.Y.Label.Text = "pairs"
	p.Y.Tick.Marker = IntegerTicks{} // pairs are counted

	lo, hi := st.ramp()
	h := &plotter.Histogram{Bins: hb, Width: w, FillColor: mixRamp(lo, hi, 0.6), LineStyle: plotter.DefaultLineStyle}
	h.LineStyle.Color = hi
	p.Add(h)

	// Headroom above the tallest bar for the threshold's label.
	yMax := float64(max(top, 1)) * 1.12
	line, err := plotter.NewLine(plotter.XYs{{X: threshold, Y: 0}, {X: threshold, Y: yMax}})
	if err != nil {
		return nil, fmt.Errorf("IoU histogram: threshold line: %w", err)
	}
	line.Color = st.Foreground
	line.Width = vg.Points(1.5)
	line.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
	p.Add(line)

	lbl, err := plotter.NewLabels(plotter.XYLabels{
		XYs:    plotter.XYs{{X: threshold, Y: yMax}},
		Labels: []string{"threshold " + strconv.FormatFloat(threshold, 'f', -1, 64)},
	})
	if err != nil {
		return nil, fmt.Errorf("IoU histogram: threshold label: %w", err)
	}
	lbl.TextStyle[0] = st.TextStyle(1, false)
	lbl.TextStyle[0].YAlign = draw.YTop
	if threshold > 0.7 {
		// Keep the label inside the plot near the right edge.
		lbl.TextStyle[0].XAlign = draw.XRight
		lbl.Offset = vg.Point{X: -vg.Points(3)}
	} else {
		lbl.Offset = vg.Point{X: vg.Points(3)}
	}
	p.Add(lbl)

	p.X.Min, p.X.Max = 0, 1
	p.Y.Min, p.Y.Max = 0, yMax
	return p, nil
}

// PlotImage renders p to a w×h pixel image at chartDPI.
func PlotImage(p *plot.Plot, w, h int) (image.Image, error) {
	if p == nil {
		return nil, errors.New("render chart: no plot")
	}
	if w <= 0 || h <= 0 {
		return nil, fmt.Errorf("render chart: size %d×%d is not positive", w, h)
	}
	// Handing vgimg the image fixes the pixel size exactly; from a length in
	// inches it would round.
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	c := vgimg.NewWith(vgimg.UseImage(img), vgimg.UseDPI(chartDPI))
	p.Draw(draw.New(c))
	return c.Image(), nil
}

// WritePlotPNG writes p to w as a w×h pixel PNG.
func WritePlotPNG(p *plot.Plot, width, height int, w io.Writer) error {
	img, err := PlotImage(p, width, height)
	if err != nil {
		return err
	}
	return png.Encode(w, img)
}

// SavePlotPNG writes p to path as a w×h pixel PNG, by way of a temporary
// file renamed over path when complete: a failure leaves path as it was.
func SavePlotPNG(p *plot.Plot, w, h int, path string) error {
	if err := formats.WriteFileAtomic(path, func(out io.Writer) error { return WritePlotPNG(p, w, h, out) }); err != nil {
		return fmt.Errorf("save chart: %w", err)
	}
	return nil
}

// LearningCurvePlots draws a training run's loss and validation AP50 per
// epoch, as two charts (their scales differ).
func LearningCurvePlots(st ChartStyle, epochs []project.Epoch) (loss, ap *plot.Plot, err error) {
	loss, ap = st.NewPlot(), st.NewPlot()
	loss.X.Tick.Marker, ap.X.Tick.Marker = IntegerTicks{}, IntegerTicks{} // epochs are counted
	loss.Title.Text, ap.Title.Text = "Training loss", "Validation AP50"
	loss.X.Label.Text, ap.X.Label.Text = "epoch", "epoch"
	loss.Y.Label.Text, ap.Y.Label.Text = "loss", "AP50"
	loss.Y.Min, ap.Y.Min, ap.Y.Max = 0, 0, 1
	loss.X.Min, ap.X.Min = 1, 1 // epochs count from 1
	var ls, as plotter.XYs
	for _, e := range epochs {
		if !math.IsNaN(e.Loss) && !math.IsInf(e.Loss, 0) {
			ls = append(ls, plotter.XY{X: float64(e.Epoch), Y: e.Loss})
		}
		if !math.IsNaN(e.ValAP50) {
			as = append(as, plotter.XY{X: float64(e.Epoch), Y: e.ValAP50})
		}
	}
	for _, c := range []struct {
		p   *plot.Plot
		xys plotter.XYs
	}{{loss, ls}, {ap, as}} {
		c.p.Add(st.Grid())
		if len(c.xys) == 0 {
			continue
		}
		line, points, err := plotter.NewLinePoints(c.xys)
		if err != nil {
			return nil, nil, err
		}
		line.Color = st.Accent()
		points.Color = st.Accent()
		c.p.Add(line, points)
	}
	return loss, ap, nil
}
