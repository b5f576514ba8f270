package ops

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"
	"strconv"
	"sync"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	xfont "golang.org/x/image/font"
	"golang.org/x/image/font/opentype"
)

// ChartStyle is how a chart looks, so that charts can wear the program's
// theme: colours, the typeface and the size of its text.
type ChartStyle struct {
	Background, Foreground color.Color
	GridLine               color.Color // grid lines, fainter than the text
	Primary                color.Color // lines and points of a single series; nil: the ramp's dark end
	Dark                   bool        // a dark background: the heat-map ramp runs dark to light
	// Typeface is a face registered with RegisterChartFont; empty for the
	// plotting library's own.
	Typeface font.Typeface
	// TextSize is the height of body text in pixels at 100 % scale (the
	// toolkit's text size); 0 means 14.
	TextSize float64
}

// LightChartStyle is black on white in the plotting library's typeface:
// charts outside the window and the reference for tests.
func LightChartStyle() ChartStyle {
	return ChartStyle{Background: color.White, Foreground: color.Black, GridLine: color.Gray{0xd0}}
}

// chartFonts guards the faces registered in font.DefaultCache.
var chartFonts sync.Mutex

// RegisterChartFont makes the regular and bold faces of an OpenType or
// TrueType font (the files' bytes) available to charts as typeface name.
// Registering a name again replaces it.
func RegisterChartFont(name string, regular, bold []byte) error {
	if name == "" {
		return errors.New("chart font: no name")
	}
	var coll font.Collection
	for _, f := range []struct {
		data   []byte
		weight xfont.Weight
		what   string
	}{{regular, xfont.WeightNormal, "regular"}, {bold, xfont.WeightBold, "bold"}} {
		if f.data == nil {
			continue
		}
		face, err := opentype.Parse(f.data)
		if err != nil {
			return fmt.Errorf("chart font %s (%s): %w", name, f.what, err)
		}
		coll = append(coll, font.Face{Font: font.Font{Typeface: font.Typeface(name), Weight: f.weight}, Face: face})
	}
	if len(coll) == 0 {
		return fmt.Errorf("chart font %s: no face given", name)
	}
	chartFonts.Lock()
	defer chartFonts.Unlock()
	font.DefaultCache.Add(coll)
	return nil
}

// pixelsToPoints turns a size in pixels at 100 % into the points that
// render at that size at chartDPI.
func pixelsToPoints(px float64) vg.Length { return vg.Length(px * 72 / chartDPI) }

// Font is the chart font at scale times the body text size.
func (s ChartStyle) Font(scale float64, bold bool) font.Font {
	size := s.TextSize
	if size <= 0 {
		size = 14
	}
	f := font.Font{Typeface: s.Typeface, Size: pixelsToPoints(size * scale)}
	if s.Typeface == "" {
		f = font.From(plot.DefaultFont, f.Size)
	}
	if bold {
		f.Weight = xfont.WeightBold
	}
	return f
}

// TextStyle is chart text in the foreground colour at scale times the
// body text size.
func (s ChartStyle) TextStyle(scale float64, bold bool) text.Style {
	return text.Style{Color: s.Foreground, Font: s.Font(scale, bold), Handler: plot.DefaultTextHandler,
		XAlign: draw.XLeft, YAlign: draw.YBottom}
}

// NewPlot is an empty plot in the style: background, title, axes, ticks
// and legend.
func (s ChartStyle) NewPlot() *plot.Plot {
	p := plot.New()
	p.BackgroundColor = s.Background
	title := s.TextStyle(1.1, true)
	title.XAlign, title.YAlign = draw.XCenter, draw.YTop
	p.Title.TextStyle = title
	p.Title.Padding = vg.Points(6)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Color = s.Foreground
		a.Label.TextStyle.Font = s.Font(1, false)
		a.Tick.Label.Color = s.Foreground
		a.Tick.Label.Font = s.Font(0.9, false)
		a.LineStyle.Color = s.Foreground
		a.Tick.LineStyle.Color = s.Foreground
	}
	p.Legend.TextStyle.Color = s.Foreground
	p.Legend.TextStyle.Font = s.Font(0.9, false)
	return p
}

// Grid is a grid in the style's grid colour.
func (s ChartStyle) Grid() *plotter.Grid {
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = s.GridColour(), s.GridColour()
	return g
}

// GridColour is the colour of grid lines.
func (s ChartStyle) GridColour() color.Color {
	if s.GridLine == nil {
		return color.Gray{0xd0}
	}
	return s.GridLine
}

// Accent is the colour of a single series.
func (s ChartStyle) Accent() color.Color {
	if s.Primary != nil {
		return s.Primary
	}
	_, hi := s.ramp()
	return hi
}

// ramp is the heat map's colours for none and for the most.
func (s ChartStyle) ramp() (lo, hi color.RGBA) {
	if s.Dark {
		return rampDarkLow, rampDarkHigh
	}
	return rampLight, rampDark
}

// IntegerTicks marks an axis of counts: whole numbers only, at a step of
// 1, 2 or 5 times a power of ten, about five of them.
type IntegerTicks struct{}

// Ticks implements plot.Ticker.
func (IntegerTicks) Ticks(lo, hi float64) []plot.Tick {
	if math.IsNaN(lo) || math.IsNaN(hi) || hi < lo {
		return nil
	}
	step := 1.0
	for _, mag := range []float64{1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9} {
		found := false
		for _, m := range []float64{1, 2, 5} {
			if (hi-lo)/(m*mag) <= 6 {
				step, found = m*mag, true
				break
			}
		}
		if found {
			break
		}
	}
	var ticks []plot.Tick
	for v := math.Ceil(lo/step) * step; v <= hi+1e-9; v += step {
		ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', 0, 64)})
	}
	return ticks
}

// PlotImageScaled renders p for a w×h area of the window (in the toolkit's
// units) at scale pixels per unit: the text keeps its size in units
// whatever the scale.
func PlotImageScaled(p *plot.Plot, w, h, scale float64) (image.Image, error) {
	if p == nil {
		return nil, errors.New("render chart: no plot")
	}
	pw, ph := int(math.Round(w*scale)), int(math.Round(h*scale))
	if pw <= 0 || ph <= 0 || math.IsNaN(scale) {
		return nil, fmt.Errorf("render chart: size %d×%d is not positive", pw, ph)
	}
	img := image.NewRGBA(image.Rect(0, 0, pw, ph))
	c := vgimg.NewWith(vgimg.UseImage(img), vgimg.UseDPI(int(math.Round(chartDPI*scale))))
	p.Draw(draw.New(c))
	return c.Image(), nil
}

// ConfusionCellAt finds the cell of a confusion matrix drawn by
// ConfusionPlot with rows×cols cells, filling a w×h area (any unit, the
// same as x and y, at the resolution of PlotImageScaled), under the point
// (x, y) measured from the top-left corner; ok is false off the cells.
func ConfusionCellAt(p *plot.Plot, rows, cols int, w, h, x, y float64) (row, col int, ok bool) {
	if p == nil || rows <= 0 || cols <= 0 || w <= 0 || h <= 0 {
		return 0, 0, false
	}
	// The layout in points of an image w×h pixels at chartDPI; it is the
	// same at every scale because the text scales with the image.
	toPt := func(v float64) vg.Length { return vg.Length(v * 72 / chartDPI) }
	c := draw.New(vgimg.NewWith(vgimg.UseWH(toPt(w), toPt(h)), vgimg.UseDPI(chartDPI)))
	da := p.DataCanvas(c)
	px, py := toPt(x), toPt(h-y) // vg's y axis points up
	if px < da.Min.X || px > da.Max.X || py < da.Min.Y || py > da.Max.Y {
		return 0, 0, false
	}
	fx := float64((px - da.Min.X) / (da.Max.X - da.Min.X))
	fy := float64((py - da.Min.Y) / (da.Max.Y - da.Min.Y))
	dx := p.X.Min + fx*(p.X.Max-p.X.Min)
	dy := p.Y.Min + fy*(p.Y.Max-p.Y.Min)
	col, gridRow := int(math.Round(dx)), int(math.Round(dy))
	if col < 0 || col >= cols || gridRow < 0 || gridRow >= rows {
		return 0, 0, false
	}
	return rows - 1 - gridRow, col, true // row 0 is drawn at the top
}

// ChartFontRegistered reports whether RegisterChartFont took a regular
// face under name.
func ChartFontRegistered(name string) bool {
	chartFonts.Lock()
	defer chartFonts.Unlock()
	return font.DefaultCache.Has(font.Font{Typeface: font.Typeface(name)})
}
