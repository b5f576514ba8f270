package gui

import (
	"image"
	"image/color"
	"sync"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"

	"boxwright/app/ops"
)

// chartTypeface is the name the toolkit's text font is registered under
// for charts.
const chartTypeface = "boxwright-ui"

var chartFontOnce sync.Once

// chartStyle is the current theme as a chart style: its background,
// foreground, separator and primary colours, its text font and size.
func chartStyle() ops.ChartStyle {
	chartFontOnce.Do(func() {
		// The bundled font ships with the toolkit; should a theme's font not
		// parse, charts fall back to the plotting library's own.
		if err := ops.RegisterChartFont(chartTypeface, theme.TextFont().Content(), theme.TextBoldFont().Content()); err != nil {
			fyne.LogError("charts keep their own font", err)
		}
	})
	bg := theme.Color(theme.ColorNameBackground)
	st := ops.ChartStyle{
		Background: bg,
		Foreground: theme.Color(theme.ColorNameForeground),
		GridLine:   theme.Color(theme.ColorNameSeparator),
		Primary:    theme.Color(theme.ColorNamePrimary),
		Dark:       isDarkColour(bg),
		TextSize:   float64(theme.TextSize()),
	}
	if ops.ChartFontRegistered(chartTypeface) {
		st.Typeface = chartTypeface
	}
	return st
}

// isDarkColour tells a dark background from a light one by its grey value.
func isDarkColour(c color.Color) bool {
	g := color.GrayModel.Convert(c).(color.Gray)
	return g.Y < 0x80
}

// chartView shows a chart drawn at the size and scale it is shown at, in
// the current theme (it is drawn again when either changes). A confusion
// matrix's cells can be tapped.
type chartView struct {
	widget.BaseWidget
	min    fyne.Size
	raster *fcanvas.Raster

	mu    sync.Mutex
	build func(ops.ChartStyle) (*plot.Plot, error)
	last  *plot.Plot // the chart as last drawn
	// rows×cols, when both are positive, make the chart a confusion
	// matrix whose cells report to onCell when tapped.
	rows, cols int
	onCell     func(row, col int)
}

func newChartView(min fyne.Size) *chartView {
	c := &chartView{min: min}
	c.raster = fcanvas.NewRaster(c.draw)
	c.ExtendBaseWidget(c)
	return c
}

// SetChart shows the chart that build makes for a style; nil clears it.
func (c *chartView) SetChart(build func(ops.ChartStyle) (*plot.Plot, error)) {
	c.mu.Lock()
	c.build, c.last = build, nil
	c.rows, c.cols = 0, 0
	c.mu.Unlock()
	c.Refresh()
}

// SetMatrix marks the chart as a rows×cols confusion matrix drawn by
// ops.ConfusionPlot: a tap on a cell calls onCell with its row and column.
func (c *chartView) SetMatrix(rows, cols int, onCell func(row, col int)) {
	c.mu.Lock()
	c.rows, c.cols, c.onCell = rows, cols, onCell
	c.mu.Unlock()
}

// Plot is the chart in the current theme, for saving; nil without one.
func (c *chartView) Plot() *plot.Plot {
	c.mu.Lock()
	build := c.build
	c.mu.Unlock()
	if build == nil {
		return nil
	}
	p, err := build(chartStyle())
	if err != nil {
		return nil
	}
	return p
}

// draw renders the chart at w×h pixels for the raster.
func (c *chartView) draw(w, h int) image.Image {
	c.mu.Lock()
	defer c.mu.Unlock()
	size := c.Size()
	if c.build == nil || w <= 0 || h <= 0 || size.Width <= 0 {
		return image.NewRGBA(image.Rect(0, 0, 1, 1)) // transparent
	}
	p, err := c.build(chartStyle())
	if err != nil {
		c.last = nil
		return image.NewRGBA(image.Rect(0, 0, 1, 1))
	}
	c.last = p
	img, err := ops.PlotImageScaled(p, float64(size.Width), float64(size.Height), float64(w)/float64(size.Width))
	if err != nil {
		return image.NewRGBA(image.Rect(0, 0, 1, 1))
	}
	return img
}

// Tapped chooses the confusion matrix's cell under the pointer.
func (c *chartView) Tapped(ev *fyne.PointEvent) {
	c.mu.Lock()
	p, rows, cols, onCell := c.last, c.rows, c.cols, c.onCell
	build := c.build
	c.mu.Unlock()
	if onCell == nil || rows <= 0 || cols <= 0 || build == nil {
		return
	}
	if p == nil { // not drawn yet
		var err error
		if p, err = build(chartStyle()); err != nil {
			return
		}
	}
	size := c.Size()
	if r, col, ok := ops.ConfusionCellAt(p, rows, cols, float64(size.Width), float64(size.Height), float64(ev.Position.X), float64(ev.Position.Y)); ok {
		onCell(r, col)
	}
}

func (c *chartView) MinSize() fyne.Size {
	c.ExtendBaseWidget(c)
	return c.min
}

func (c *chartView) CreateRenderer() fyne.WidgetRenderer {
	return &chartRenderer{c: c}
}

type chartRenderer struct{ c *chartView }

func (r *chartRenderer) Layout(s fyne.Size)           { r.c.raster.Resize(s) }
func (r *chartRenderer) MinSize() fyne.Size           { return r.c.min }
func (r *chartRenderer) Refresh()                     { r.c.raster.Refresh() }
func (r *chartRenderer) Objects() []fyne.CanvasObject { return []fyne.CanvasObject{r.c.raster} }
func (r *chartRenderer) Destroy()                     {}
