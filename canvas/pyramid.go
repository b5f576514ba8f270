package canvas

import (
	"context"
	"encoding/binary"
	"errors"
	"image"
	"image/color"
	"image/draw"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// pyramidTop is the longest side at which halving stops.
const pyramidTop = 256

// bandRows is the height of the row bands that conversion and halving are
// split into; ctx is checked before each band.
const bandRows = 64

// Pyramid holds an image at full resolution and successive halvings, so a
// view can draw any zoom level from a copy not much larger than the screen.
// Every level is an *image.RGBA with Min = (0,0). A Pyramid is immutable
// after NewPyramid and safe for concurrent use.
type Pyramid struct {
	levels []*image.RGBA
}

// NewPyramid converts img to RGBA (level 0, full resolution, Min moved to
// (0,0)) and builds halvings with a 2×2 box filter until the longest side
// is at most 256 px. Level i+1 is ⌈w/2⌉×⌈h/2⌉ of level i; on odd sizes the
// last column/row averages the pixels that exist. Averages are of
// premultiplied RGBA, rounded to nearest with halves up.
//
// *image.YCbCr, *image.RGBA, *image.NRGBA and *image.Gray take image/draw's
// fast paths and are converted in parallel row bands; other types are read
// sequentially through At. ctx is checked between row bands and between
// levels; when it is done NewPyramid returns ctx.Err(). An empty image is
// an error.
func NewPyramid(ctx context.Context, img image.Image) (*Pyramid, error) {
	if img == nil || img.Bounds().Empty() {
		return nil, errors.New("image pyramid: empty image")
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	l0 := image.NewRGBA(image.Rect(0, 0, w, h))
	workers := 1
	switch img.(type) {
	case *image.YCbCr, *image.RGBA, *image.NRGBA, *image.Gray:
		// Known to be safe to read concurrently and fast per band.
		workers = runtime.GOMAXPROCS(0)
	}
	err := forBands(ctx, h, workers, func(y0, y1 int) {
		draw.Draw(l0, image.Rect(0, y0, w, y1), img, image.Pt(b.Min.X, b.Min.Y+y0), draw.Src)
	})
	if err != nil {
		return nil, err
	}
	return halvings(ctx, l0)
}

// AdoptPyramid is NewPyramid for an image the caller hands over: an
// *image.RGBA at the origin with packed rows becomes level 0 itself
// instead of a copy (a 12 MP photo's 48 MB copy and its time saved), so
// img must not be changed afterwards. Other images are copied as by
// NewPyramid.
func AdoptPyramid(ctx context.Context, img image.Image) (*Pyramid, error) {
	m, ok := img.(*image.RGBA)
	if !ok || m.Rect.Min != (image.Point{}) || m.Stride != 4*m.Rect.Dx() || m.Rect.Empty() {
		return NewPyramid(ctx, img)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return halvings(ctx, m)
}

// halvings builds the levels above l0.
func halvings(ctx context.Context, l0 *image.RGBA) (*Pyramid, error) {
	p := &Pyramid{levels: []*image.RGBA{l0}}
	for cur := l0; max(cur.Rect.Dx(), cur.Rect.Dy()) > pyramidTop; {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		next := image.NewRGBA(image.Rect(0, 0, (cur.Rect.Dx()+1)/2, (cur.Rect.Dy()+1)/2))
		src := cur
		err := forBands(ctx, next.Rect.Dy(), runtime.GOMAXPROCS(0), func(y0, y1 int) {
			halveRows(next, src, y0, y1)
		})
		if err != nil {
			return nil, err
		}
		p.levels = append(p.levels, next)
		cur = next
	}
	return p, nil
}

// forBands calls fn on consecutive bands of rows [0,h) from up to workers
// goroutines. It stops handing out bands once ctx is done and then returns
// the first ctx error it saw.
func forBands(ctx context.Context, h, workers int, fn func(y0, y1 int)) error {
	n := (h + bandRows - 1) / bandRows
	workers = max(1, min(workers, n))
	var (
		next  atomic.Int64
		wg    sync.WaitGroup
		once  sync.Once
		first error
		stop  atomic.Bool
	)
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for !stop.Load() {
				band := int(next.Add(1) - 1)
				if band >= n {
					return
				}
				if err := ctx.Err(); err != nil {
					once.Do(func() { first = err })
					stop.Store(true)
					return
				}
				y0 := band * bandRows
				fn(y0, min(y0+bandRows, h))
			}
		}()
	}
	wg.Wait()
	return first
}

// halveRows fills rows [y0,y1) of dst with the 2×2 box average of src.
// Both images have Min = (0,0) and dst is ⌈w/2⌉×⌈h/2⌉ of src.
func halveRows(dst, src *image.RGBA, y0, y1 int) {
	sw, sh := src.Rect.Dx(), src.Rect.Dy()
	dw := dst.Rect.Dx()
	pairs := sw / 2 // dst columns that have two source columns
	for y := y0; y < y1; y++ {
		d := dst.Pix[y*dst.Stride:][:dw*4]
		a := src.Pix[2*y*src.Stride:][:sw*4]
		if 2*y+1 < sh {
			b := src.Pix[(2*y+1)*src.Stride:][:sw*4]
			for x := range pairs {
				s, o := 8*x, 4*x
				a8, b8, d4 := a[s:s+8], b[s:s+8], d[o:o+4]
				for c := range 4 {
					d4[c] = uint8((uint(a8[c]) + uint(a8[c+4]) + uint(b8[c]) + uint(b8[c+4]) + 2) >> 2)
				}
			}
			if dw > pairs {
				s, o := 8*pairs, 4*pairs
				for c := range 4 {
					d[o+c] = uint8((uint(a[s+c]) + uint(b[s+c]) + 1) >> 1)
				}
			}
			continue
		}
		// Last row of an odd height: average horizontally only.
		for x := range pairs {
			s, o := 8*x, 4*x
			for c := range 4 {
				d[o+c] = uint8((uint(a[s+c]) + uint(a[s+c+4]) + 1) >> 1)
			}
		}
		if dw > pairs {
			copy(d[4*pairs:4*pairs+4], a[8*pairs:8*pairs+4])
		}
	}
}

// Size is the level-0 (full resolution) size.
func (p *Pyramid) Size() (w, h int) {
	r := p.levels[0].Rect
	return r.Dx(), r.Dy()
}

// Levels is the number of levels, at least 1.
func (p *Pyramid) Levels() int { return len(p.levels) }

// Level returns level i (0 = full resolution), or nil when i is out of
// range. The caller must not modify it.
func (p *Pyramid) Level(i int) *image.RGBA {
	if i < 0 || i >= len(p.levels) {
		return nil
	}
	return p.levels[i]
}

// Bytes is the pixel memory held, for cache budgets.
func (p *Pyramid) Bytes() int64 {
	var n int64
	for _, l := range p.levels {
		n += int64(len(l.Pix))
	}
	return n
}

// LevelFor is the coarsest level whose resolution is still at least the
// display scale: level L has scale 2^-L relative to level 0; it picks the
// largest L with 2^-L >= scale (L=0 when scale >= 1 or scale is NaN),
// capped at the last level.
func (p *Pyramid) LevelFor(scale float64) int {
	l := 0
	for l+1 < len(p.levels) && math.Ldexp(1, -(l+1)) >= scale {
		l++
	}
	return l
}

// Render draws the image as seen through t into dst. Screen coordinates
// are dst's own pixel coordinates: dst pixel (x,y) covers [x,x+1)×[y,y+1)
// even when dst.Rect.Min is not (0,0), so rendering into a SubImage gives
// the same pixels as rendering the whole and cropping. t maps level-0
// image coordinates (continuous, (0,0) = top-left corner of the top-left
// pixel) to those screen coordinates.
//
// Each dst pixel takes, nearest-neighbour from level LevelFor(t.Scale), the
// source pixel containing the image point under the dst pixel's centre, so
// at high zoom image pixels are crisp squares with edges where t puts them.
// Dst pixels whose centre falls outside the level-0 image area get bg, as
// does all of dst when t.Scale is not a positive finite number.
func (p *Pyramid) Render(dst *image.RGBA, t Transform, bg color.RGBA) {
	r := dst.Rect
	w, h := r.Dx(), r.Dy()
	if w <= 0 || h <= 0 {
		return
	}
	bgv := binary.LittleEndian.Uint32([]byte{bg.R, bg.G, bg.B, bg.A})
	s := t.Scale
	if !(s > 0) || math.IsInf(s, 1) {
		for j := range h {
			off := dst.PixOffset(r.Min.X, r.Min.Y+j)
			fill32(dst.Pix[off:off+4*w], bgv)
		}
		return
	}
	l := p.LevelFor(s)
	src := p.levels[l]
	w0, h0 := p.Size()

	// Byte offset of the source column per dst column, -1 outside.
	cols := make([]int, w)
	c0, c1 := w, 0 // dst columns [c0,c1) are inside; s > 0 keeps them contiguous
	for i := range w {
		x := (float64(r.Min.X+i) + 0.5 - t.OffsetX) / s
		if x >= 0 && x < float64(w0) {
			// floor(x/2^l) == floor(x)>>l for x >= 0.
			cols[i] = (int(x) >> l) * 4
			c0, c1 = min(c0, i), i+1
		} else {
			cols[i] = -1
		}
	}
	// Byte offset of the source row per dst row, -1 outside.
	rows := make([]int, h)
	for j := range h {
		y := (float64(r.Min.Y+j) + 0.5 - t.OffsetY) / s
		if y >= 0 && y < float64(h0) {
			rows[j] = (int(y) >> l) * src.Stride
		} else {
			rows[j] = -1
		}
	}

	// Split the inside columns into spans: runs of consecutive source
	// columns (1:1 and near it) are one copy, the rest a per-pixel gather.
	var spans []span
	for i := c0; i < c1; {
		k := i + 1
		for k < c1 && cols[k] == cols[k-1]+4 {
			k++
		}
		if k-i >= minCopyRun {
			spans = append(spans, span{i, k, true})
		} else if n := len(spans); n > 0 && !spans[n-1].run {
			spans[n-1].end = k
		} else {
			spans = append(spans, span{i, k, false})
		}
		i = k
	}

	job := renderJob{dst: dst, src: src, cols: cols, rows: rows, spans: spans, c0: c0, c1: c1, bg: bgv}
	workers := min(runtime.GOMAXPROCS(0), h/renderBandRows)
	if workers <= 1 {
		job.rowsRange(0, h)
		return
	}
	var wg sync.WaitGroup
	for k := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			job.rowsRange(k*h/workers, (k+1)*h/workers)
		}()
	}
	wg.Wait()
}

// minCopyRun is the shortest run of consecutive source pixels copied as a
// block rather than gathered.
const minCopyRun = 16

// renderBandRows is the fewest dst rows worth a goroutine of their own.
const renderBandRows = 128

// span is a range [start,end) of dst columns, a block copy when run.
type span struct {
	start, end int
	run        bool
}

type renderJob struct {
	dst, src   *image.RGBA
	cols, rows []int
	spans      []span
	c0, c1     int
	bg         uint32
}

// rowsRange renders dst rows [j0,j1) (offsets from dst.Rect.Min.Y).
func (r *renderJob) rowsRange(j0, j1 int) {
	dst, w := r.dst, len(r.cols)
	srcRow := 4 * r.src.Rect.Dx()
	var prev []byte
	for j := j0; j < j1; j++ {
		off := dst.PixOffset(dst.Rect.Min.X, dst.Rect.Min.Y+j)
		d := dst.Pix[off : off+4*w]
		sr := r.rows[j]
		switch {
		case prev != nil && sr == r.rows[j-1]:
			// Zoomed in, many dst rows repeat the previous one.
			copy(d, prev)
		case sr < 0 || r.c0 >= r.c1:
			fill32(d, r.bg)
		default:
			fill32(d[:4*r.c0], r.bg)
			fill32(d[4*r.c1:], r.bg)
			line := r.src.Pix[sr : sr+srcRow]
			for _, sp := range r.spans {
				if sp.run {
					so := r.cols[sp.start]
					copy(d[4*sp.start:4*sp.end], line[so:])
					continue
				}
				for i := sp.start; i < sp.end; i++ {
					so := r.cols[i]
					binary.LittleEndian.PutUint32(d[4*i:4*i+4], binary.LittleEndian.Uint32(line[so:so+4]))
				}
			}
		}
		prev = d
	}
}

// fill32 sets every 4-byte pixel of b to v (little-endian RGBA).
func fill32(b []byte, v uint32) {
	if len(b) < 4 {
		return
	}
	binary.LittleEndian.PutUint32(b, v)
	for n := 4; n < len(b); n *= 2 {
		copy(b[n:], b[:n])
	}
}
