package canvas

import (
	"context"
	"fmt"
	"image"
	"math/rand/v2"
	"sync"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/project"
)

// viewBenchPyramid is a 4000×3000 pyramid of a synthetic photo-sized
// image, built once for all view benchmarks.
var viewBenchPyramid = sync.OnceValue(func() *Pyramid {
	m := image.NewRGBA(image.Rect(0, 0, 4000, 3000))
	for y := range 3000 {
		row := m.Pix[y*m.Stride:]
		for x := range 4000 {
			row[4*x], row[4*x+1], row[4*x+2], row[4*x+3] = uint8(x/16), uint8(y/12), uint8((x+y)/32), 0xff
		}
	}
	p, err := NewPyramid(context.Background(), m)
	if err != nil {
		panic(err)
	}
	return p
})

// viewBenchItems are n random boxes on a 4000×3000 image with palette
// colours and captions; every tenth is another annotator's.
func viewBenchItems(n int, seed uint64) []Item {
	rng := rand.New(rand.NewPCG(seed, 99))
	items := make([]Item, n)
	for i := range items {
		w, h := 8+rng.Float64()*300, 8+rng.Float64()*300
		x0, y0 := rng.Float64()*(4000-w), rng.Float64()*(3000-h)
		items[i] = Item{
			Key:      int64(i + 1),
			Box:      project.Box{X0: x0, Y0: y0, X1: x0 + w, Y1: y0 + h},
			Color:    project.Palette[i%len(project.Palette)],
			Caption:  fmt.Sprintf("class %d", i%7),
			ReadOnly: i%10 == 9,
		}
	}
	return items
}

// newBenchView puts a view showing the pyramid in a 1600×1000 test window
// (the software painter of fyne.io/fyne/v2/test).
func newBenchView(b *testing.B) (*View, fyne.Window) {
	b.Helper()
	test.NewTempApp(b)
	v := NewView()
	w := test.NewWindow(v)
	w.SetPadded(false)
	w.Resize(fyne.NewSize(1600, 1000))
	v.SetImage(viewBenchPyramid())
	b.Cleanup(w.Close)
	return v, w
}

// BenchmarkView2000BoxesSetItems measures replacing all 2,000 boxes and
// painting the window once (Capture runs the software painter, which
// calls the raster generator and draws every caption object).
func BenchmarkView2000BoxesSetItems(b *testing.B) {
	v, w := newBenchView(b)
	sets := [][]Item{viewBenchItems(2000, 1), viewBenchItems(2000, 2)}
	v.SetItems(sets[1])
	w.Canvas().Capture()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		v.SetItems(sets[i%2])
		w.Canvas().Capture()
	}
}

// BenchmarkView2000BoxesPan measures one pan step at 100 % zoom with
// 2,000 boxes: the new transform, the layout of captions and the paint.
func BenchmarkView2000BoxesPan(b *testing.B) {
	v, w := newBenchView(b)
	v.SetItems(viewBenchItems(2000, 1))
	start := Transform{Scale: 1, OffsetX: -1000, OffsetY: -800}
	v.SetTransform(start)
	w.Canvas().Capture()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		// Back and forth over 400 screen units, 7 at a time.
		d := float64(i%58) * 7
		if (i/58)%2 == 1 {
			d = 406 - d
		}
		v.SetTransform(start.Pan(-d, -d/2))
		w.Canvas().Capture()
	}
}

// BenchmarkView2000BoxesPanNoPaint is the pan step without the paint: the
// view's own work on the Fyne goroutine (transform, caption layout).
func BenchmarkView2000BoxesPanNoPaint(b *testing.B) {
	v, _ := newBenchView(b)
	v.SetItems(viewBenchItems(2000, 1))
	start := Transform{Scale: 1, OffsetX: -1000, OffsetY: -800}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		v.SetTransform(start.Pan(-float64(i%400), 0))
	}
}

// BenchmarkView2000BoxesRaster is the view's own share of a paint: the
// raster generator (image from the pyramid plus 2,000 box outlines) at
// 1600×1000 device pixels, without the test painter's compositing, after
// SetItems (which also lays out the captions).
func BenchmarkView2000BoxesRaster(b *testing.B) {
	v, _ := newBenchView(b)
	r := test.WidgetRenderer(v).(*viewRenderer)
	sets := [][]Item{viewBenchItems(2000, 1), viewBenchItems(2000, 2)}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		v.SetItems(sets[i%2])
		r.draw(1600, 1000)
	}
}
