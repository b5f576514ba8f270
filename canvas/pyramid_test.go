package canvas

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"math"
	"sync/atomic"
	"testing"

	xdraw "golang.org/x/image/draw"
	"golang.org/x/image/math/f64"
)

// testRGBA is a w×h premultiplied image whose pixels differ from their
// neighbours, so a wrong sample shows.
func testRGBA(w, h int) *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, w, h))
	v := uint32(12345)
	for i := 0; i < len(m.Pix); i += 4 {
		v = v*1664525 + 1013904223
		a := uint8(v>>24) | 1
		m.Pix[i+0] = uint8(v>>8) % a
		m.Pix[i+1] = uint8(v>>16) % a
		m.Pix[i+2] = uint8(v) % a
		m.Pix[i+3] = a
	}
	return m
}

// xdrawReference renders src through the affine map screen = image*s + o
// with golang.org/x/image v0.48.0 draw.NearestNeighbor onto dstRect filled
// with bg. x/image samples each dst pixel at its centre (x+0.5, y+0.5) in
// the dst's own coordinates, maps it back through the inverse transform and
// takes the source pixel whose unit square contains it (floor) — the same
// convention Render documents, so outputs must match exactly except where
// a centre maps onto a source pixel edge; checkNoTies rules those out.
func xdrawReference(src *image.RGBA, dstRect image.Rectangle, s, ox, oy float64, bg color.RGBA) *image.RGBA {
	ref := image.NewRGBA(dstRect)
	draw.Draw(ref, dstRect, image.NewUniform(bg), image.Point{}, draw.Src)
	xdraw.NearestNeighbor.Transform(ref, f64.Aff3{s, 0, ox, 0, s, oy}, src, src.Bounds(), xdraw.Src, nil)
	return ref
}

// checkNoTies fails when a dst pixel centre lands within 1e-9 of a source
// pixel edge, where the two implementations' float rounding may pick
// different sides; the case table must avoid such parameters.
func checkNoTies(t *testing.T, r image.Rectangle, s, ox, oy float64) {
	t.Helper()
	tie := func(lo, hi int, o float64) {
		for i := lo; i < hi; i++ {
			u := (float64(i) + 0.5 - o) / s
			if math.Abs(u-math.Round(u)) < 1e-9 {
				t.Fatalf("scale %v offset %v: pixel centre %d maps onto source edge %v; pick other parameters", s, o, i, u)
			}
		}
	}
	tie(r.Min.X, r.Max.X, ox)
	tie(r.Min.Y, r.Max.Y, oy)
}

func diffRGBA(t *testing.T, name string, got, want *image.RGBA) {
	t.Helper()
	if got.Rect != want.Rect {
		t.Fatalf("%s: bounds %v, want %v", name, got.Rect, want.Rect)
	}
	bad := 0
	for y := got.Rect.Min.Y; y < got.Rect.Max.Y; y++ {
		for x := got.Rect.Min.X; x < got.Rect.Max.X; x++ {
			g, w := got.RGBAAt(x, y), want.RGBAAt(x, y)
			if g != w {
				if bad < 5 {
					t.Errorf("%s: pixel (%d,%d) = %v, want %v", name, x, y, g, w)
				}
				bad++
			}
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d pixels differ", name, bad)
	}
}

func mustPyramid(t *testing.T, img image.Image) *Pyramid {
	t.Helper()
	p, err := NewPyramid(context.Background(), img)
	if err != nil {
		t.Fatalf("NewPyramid: %v", err)
	}
	return p
}

// Reference: golang.org/x/image v0.48.0 draw.NearestNeighbor.Transform.
func TestPyramidRenderMatchesXImageLevel0(t *testing.T) {
	src := testRGBA(23, 17)
	p := mustPyramid(t, src)
	bg := color.RGBA{10, 20, 30, 255}
	cases := []struct {
		s, ox, oy float64
		dst       image.Rectangle
	}{
		{3.7, 2.318, 1.937, image.Rect(0, 0, 100, 80)},
		{3.7, -11.453, -7.109, image.Rect(0, 0, 64, 48)},
		{1.0, 0.4, -0.35, image.Rect(0, 0, 30, 20)},
		{1.0, 3, 2, image.Rect(0, 0, 30, 20)}, // integer offsets take x/image's Copy path
		{0.83, 1.153, 0.617, image.Rect(0, 0, 25, 18)},
		{0.83, -2.219, 3.053, image.Rect(0, 0, 25, 18)},
		{16, -40.3, -30.2, image.Rect(0, 0, 300, 600)}, // row bands split inside repeated rows
		{2.5, 5.1, 4.2, image.Rect(7, 3, 60, 50)},      // dst with non-zero Min
	}
	for _, c := range cases {
		name := fmt.Sprintf("s=%v o=(%v,%v) dst=%v", c.s, c.ox, c.oy, c.dst)
		if l := p.LevelFor(c.s); l != 0 {
			t.Fatalf("%s: level %d, want 0", name, l)
		}
		checkNoTies(t, c.dst, c.s, c.ox, c.oy)
		got := image.NewRGBA(c.dst)
		p.Render(got, Transform{Scale: c.s, OffsetX: c.ox, OffsetY: c.oy}, bg)
		diffRGBA(t, name, got, xdrawReference(src, c.dst, c.s, c.ox, c.oy, bg))
	}
}

// At level L, Render of level-0 coordinates through scale s is
// x/image's nearest-neighbour of Level(L) through scale s·2^L (sizes here
// divide by 2^L, so both images cover the same area).
// Reference: golang.org/x/image v0.48.0 draw.NearestNeighbor.Transform.
func TestPyramidRenderMatchesXImageLevels(t *testing.T) {
	p := mustPyramid(t, testRGBA(600, 400))
	bg := color.RGBA{0, 0, 0, 0}
	cases := []struct {
		s, ox, oy float64
		level     int
	}{
		{0.83, 2.219, -1.317, 0}, // tall enough for parallel row bands
		{0.97, 3.141, 2.718, 0},  // runs of consecutive columns between skips
		{1.3, -20.113, -15.419, 0},
		{0.3, 4.137, 3.319, 1},
		{0.47, -6.153, 2.357, 1},
		{0.2, 7.713, 1.129, 2},
		{0.11, 3.317, 5.459, 2},
	}
	for _, c := range cases {
		name := fmt.Sprintf("s=%v o=(%v,%v)", c.s, c.ox, c.oy)
		if l := p.LevelFor(c.s); l != c.level {
			t.Fatalf("%s: level %d, want %d", name, l, c.level)
		}
		ls := math.Ldexp(c.s, c.level)
		r := image.Rect(0, 0, int(600*c.s)+12, int(400*c.s)+10)
		checkNoTies(t, r, ls, c.ox, c.oy)
		got := image.NewRGBA(r)
		p.Render(got, Transform{Scale: c.s, OffsetX: c.ox, OffsetY: c.oy}, bg)
		diffRGBA(t, name, got, xdrawReference(p.Level(c.level), r, ls, c.ox, c.oy, bg))
	}
}

// At a coarse level of an odd-sized image the level image reaches past the
// level-0 edge; Render stops at the level-0 edge. Derived from the
// transform: with s=0.3 and no offset, dst column i is inside when
// (i+0.5)/0.3 < 601, i.e. i <= 179, and row j when (j+0.5)/0.3 < 400, i.e.
// j <= 119 (119.5/0.3 = 398.3, 120.5/0.3 = 401.7).
func TestPyramidRenderCoarseEdgeIsLevel0Edge(t *testing.T) {
	p := mustPyramid(t, testRGBA(601, 400))
	bg := color.RGBA{1, 2, 3, 4}
	dst := image.NewRGBA(image.Rect(0, 0, 190, 130))
	p.Render(dst, Transform{Scale: 0.3}, bg)
	if got := dst.RGBAAt(179, 50); got == bg {
		t.Errorf("column 179 is bg, want image")
	}
	if got := dst.RGBAAt(180, 50); got != bg {
		t.Errorf("column 180 = %v, want bg", got)
	}
	if got := dst.RGBAAt(50, 119); got == bg {
		t.Errorf("row 119 is bg, want image")
	}
	if got := dst.RGBAAt(50, 120); got != bg {
		t.Errorf("row 120 = %v, want bg", got)
	}
}

// Derived from the transform: image pixel (u,v) covers screen
// [4u+3,4u+7)×[4v+5,4v+9), and dst pixel (x,y) takes the image pixel under
// its centre (x+0.5,y+0.5), so each cell is exactly the 4×4 block
// x∈[4u+3,4u+6], y∈[4v+5,4v+8].
func TestPyramidRenderCheckerboardZoom4(t *testing.T) {
	black, white := color.RGBA{0, 0, 0, 255}, color.RGBA{255, 255, 255, 255}
	bg := color.RGBA{255, 0, 0, 255}
	src := image.NewRGBA(image.Rect(0, 0, 8, 8))
	for v := range 8 {
		for u := range 8 {
			if (u+v)%2 == 0 {
				src.SetRGBA(u, v, black)
			} else {
				src.SetRGBA(u, v, white)
			}
		}
	}
	p := mustPyramid(t, src)
	dst := image.NewRGBA(image.Rect(0, 0, 40, 42))
	p.Render(dst, Transform{Scale: 4, OffsetX: 3, OffsetY: 5}, bg)
	for y := range 42 {
		for x := range 40 {
			want := bg
			if x >= 3 && x < 35 && y >= 5 && y < 37 {
				want = white
				if ((x-3)/4+(y-5)/4)%2 == 0 {
					want = black
				}
			}
			if got := dst.RGBAAt(x, y); got != want {
				t.Fatalf("pixel (%d,%d) = %v, want %v", x, y, got, want)
			}
		}
	}
}

func TestPyramidRenderBackground(t *testing.T) {
	bg := color.RGBA{9, 8, 7, 255}
	p := mustPyramid(t, testRGBA(5, 5))
	dst := image.NewRGBA(image.Rect(0, 0, 30, 30))
	// Derived from the transform: the image covers screen [10,20)².
	p.Render(dst, Transform{Scale: 2, OffsetX: 10, OffsetY: 10}, bg)
	for y := range 30 {
		for x := range 30 {
			inside := x >= 10 && x < 20 && y >= 10 && y < 20
			if got := dst.RGBAAt(x, y); (got == bg) == inside {
				t.Fatalf("pixel (%d,%d) = %v, inside=%v", x, y, got, inside)
			}
		}
	}
	// No usable scale: all bg.
	for _, s := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		p.Render(dst, Transform{Scale: s}, bg)
		for y := range 30 {
			for x := range 30 {
				if got := dst.RGBAAt(x, y); got != bg {
					t.Fatalf("scale %v: pixel (%d,%d) = %v, want bg", s, x, y, got)
				}
			}
		}
	}
}

// Rendering into a SubImage gives the same pixels as rendering the whole
// dst, because screen coordinates are dst's own pixel coordinates.
func TestPyramidRenderSubImage(t *testing.T) {
	p := mustPyramid(t, testRGBA(40, 30))
	tr := Transform{Scale: 2.3, OffsetX: 1.7, OffsetY: -3.1}
	bg := color.RGBA{50, 60, 70, 255}
	whole := image.NewRGBA(image.Rect(0, 0, 100, 70))
	p.Render(whole, tr, bg)
	part := image.NewRGBA(image.Rect(0, 0, 100, 70))
	sub := part.SubImage(image.Rect(13, 9, 77, 51)).(*image.RGBA)
	p.Render(sub, tr, bg)
	diffRGBA(t, "subimage", sub, whole.SubImage(sub.Rect).(*image.RGBA))
}

// Expected values: the definition of a 2×2 box filter (mean of the source
// pixels under each output pixel, only those that exist at an odd edge),
// rounded to nearest with halves up, worked by hand.
func TestPyramidHalveBoxFilter(t *testing.T) {
	px := func(m *image.RGBA, x, y int, r, g, b, a uint8) { m.SetRGBA(x, y, color.RGBA{r, g, b, a}) }

	two := image.NewRGBA(image.Rect(0, 0, 2, 2))
	px(two, 0, 0, 10, 0, 1, 255)
	px(two, 1, 0, 20, 0, 0, 255)
	px(two, 0, 1, 30, 1, 0, 255)
	px(two, 1, 1, 41, 1, 1, 255)
	half := image.NewRGBA(image.Rect(0, 0, 1, 1))
	halveRows(half, two, 0, 1)
	// R: 101/4 = 25.25 → 25; G: 2/4 = 0.5 → 1; B: 2/4 → 1; A: 255.
	if got, want := half.RGBAAt(0, 0), (color.RGBA{25, 1, 1, 255}); got != want {
		t.Errorf("2×2: %v, want %v", got, want)
	}

	three := image.NewRGBA(image.Rect(0, 0, 3, 3))
	// R holds 10*(row*3+col+1): 10 20 30 / 40 50 60 / 70 80 90; G,B 0; A varies.
	alpha := [3][3]uint8{{255, 255, 101}, {255, 255, 100}, {200, 51, 77}}
	for y := range 3 {
		for x := range 3 {
			px(three, x, y, uint8(10*(y*3+x+1)), 0, 0, alpha[y][x])
		}
	}
	half = image.NewRGBA(image.Rect(0, 0, 2, 2))
	halveRows(half, three, 0, 2)
	want := map[image.Point]color.RGBA{
		{0, 0}: {30, 0, 0, 255}, // R (10+20+40+50)/4 = 30; A 255
		{1, 0}: {45, 0, 0, 101}, // R (30+60)/2 = 45; A (101+100)/2 = 100.5 → 101
		{0, 1}: {75, 0, 0, 126}, // R (70+80)/2 = 75; A (200+51)/2 = 125.5 → 126
		{1, 1}: {90, 0, 0, 77},  // the corner pixel alone
	}
	for p, w := range want {
		if got := half.RGBAAt(p.X, p.Y); got != w {
			t.Errorf("3×3 → (%d,%d): %v, want %v", p.X, p.Y, got, w)
		}
	}
}

// Level sizes: ⌈w/2⌉×⌈h/2⌉ per level until the longest side is <= 256,
// worked by hand: 1025→513→257→129 and 300→150→75→38.
func TestPyramidLevelsAndBytes(t *testing.T) {
	src := image.NewRGBA(image.Rect(-4, 7, 1021, 307))
	src.SetRGBA(1020, 306, color.RGBA{80, 40, 20, 255})
	p := mustPyramid(t, src)
	if w, h := p.Size(); w != 1025 || h != 300 {
		t.Fatalf("Size = %d×%d, want 1025×300", w, h)
	}
	sizes := [][2]int{{1025, 300}, {513, 150}, {257, 75}, {129, 38}}
	if p.Levels() != len(sizes) {
		t.Fatalf("Levels = %d, want %d", p.Levels(), len(sizes))
	}
	var bytes int64
	for i, s := range sizes {
		r := p.Level(i).Rect
		if r != image.Rect(0, 0, s[0], s[1]) {
			t.Errorf("level %d: %v, want %dx%d at origin", i, r, s[0], s[1])
		}
		bytes += int64(4 * s[0] * s[1])
	}
	if p.Bytes() != bytes {
		t.Errorf("Bytes = %d, want %d", p.Bytes(), bytes)
	}
	if p.Level(-1) != nil || p.Level(len(sizes)) != nil {
		t.Errorf("out-of-range Level should be nil")
	}
	// Level-1 pixel (512,149) covers column 1024 only (odd width) and rows
	// 298–299, so it averages (1024,298) = 0 and (1024,299) = 80: R 40.
	if got := p.Level(1).RGBAAt(512, 149); got.R != 40 || got.A != 128 {
		t.Errorf("level 1 corner = %v, want R 40, A (0+255+1)/2 = 128", got)
	}
	if got := p.Level(0).RGBAAt(1024, 299); got != (color.RGBA{80, 40, 20, 255}) {
		t.Errorf("level 0 did not move Min to origin: %v", got)
	}

	small := mustPyramid(t, testRGBA(256, 100))
	if small.Levels() != 1 {
		t.Errorf("256×100: %d levels, want 1", small.Levels())
	}
	tall := mustPyramid(t, testRGBA(1, 257))
	if tall.Levels() != 2 || tall.Level(1).Rect != image.Rect(0, 0, 1, 129) {
		t.Errorf("1×257: %d levels, want 2 with a 1×129 top", tall.Levels())
	}
}

// Expected values from LevelFor's definition: the largest L with
// 2^-L >= scale, capped at the last level (here 2, for 600×400).
func TestPyramidLevelFor(t *testing.T) {
	p := mustPyramid(t, testRGBA(600, 400))
	cases := []struct {
		scale float64
		want  int
	}{
		{16, 0}, {1, 0}, {0.9999, 0}, {0.5000001, 0},
		{0.5, 1}, {0.4999, 1}, {0.2500001, 1},
		{0.25, 2}, {0.2, 2}, {0.01, 2}, {0, 2}, {-1, 2},
		{math.Inf(1), 0}, {math.NaN(), 0},
	}
	for _, c := range cases {
		if got := p.LevelFor(c.scale); got != c.want {
			t.Errorf("LevelFor(%v) = %d, want %d", c.scale, got, c.want)
		}
	}
}

func TestPyramidEmptyImage(t *testing.T) {
	for _, img := range []image.Image{nil, image.NewRGBA(image.Rect(0, 0, 0, 5)), image.NewGray(image.Rect(3, 3, 9, 3))} {
		if p, err := NewPyramid(context.Background(), img); err == nil || p != nil {
			t.Errorf("NewPyramid(%T empty) = %v, %v; want error", img, p, err)
		}
	}
}

// countdownCtx reports Canceled once Err has been asked n times, which
// stops NewPyramid at every place it checks, without timing.
type countdownCtx struct {
	context.Context
	left atomic.Int64
}

func (c *countdownCtx) Err() error {
	if c.left.Add(-1) < 0 {
		return context.Canceled
	}
	return nil
}

func TestPyramidCancellation(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if p, err := NewPyramid(ctx, testRGBA(600, 400)); !errors.Is(err, context.Canceled) || p != nil {
		t.Fatalf("cancelled ctx: %v, %v; want context.Canceled", p, err)
	}
	// 1025×300: 5 bands at level 0, then 3 levels; success needs every check.
	src := testRGBA(1025, 300)
	cancelled := 0
	for n := int64(0); ; n++ {
		c := &countdownCtx{Context: context.Background()}
		c.left.Store(n)
		p, err := NewPyramid(c, src)
		if err == nil {
			if p.Levels() != 4 {
				t.Fatalf("after %d checks: %d levels", n, p.Levels())
			}
			break
		}
		if !errors.Is(err, context.Canceled) || p != nil {
			t.Fatalf("cancel after %d checks: %v, %v; want context.Canceled", n, p, err)
		}
		cancelled++
		if n > 1000 {
			t.Fatal("never finished")
		}
	}
	// Checked at least once per band and per level.
	if cancelled < 5+3 {
		t.Errorf("only %d cancellation points", cancelled)
	}
}

// Reference: the standard library's image/draw (draw.Draw with draw.Src
// into an *image.RGBA) and each type's At converted by color.RGBAModel.
func TestPyramidConversionMatchesImageDraw(t *testing.T) {
	r := image.Rect(3, -5, 40, 296) // odd size, non-zero Min, several bands
	ycc := image.NewYCbCr(r, image.YCbCrSubsampleRatio420)
	for i := range ycc.Y {
		ycc.Y[i] = uint8(i * 7)
	}
	for i := range ycc.Cb {
		ycc.Cb[i] = uint8(i * 13)
		ycc.Cr[i] = uint8(255 - i*5)
	}
	nrgba := image.NewNRGBA(r)
	for i := range nrgba.Pix {
		nrgba.Pix[i] = uint8(i * 31)
	}
	gray := image.NewGray(r)
	for i := range gray.Pix {
		gray.Pix[i] = uint8(i * 3)
	}
	rgba := testRGBA(r.Dx(), r.Dy())
	rgba.Rect = r
	pal := image.NewPaletted(r, color.Palette{color.RGBA{1, 2, 3, 255}, color.NRGBA{200, 100, 50, 128}, color.Gray{77}})
	for i := range pal.Pix {
		pal.Pix[i] = uint8(i % 3)
	}
	for _, img := range []image.Image{ycc, nrgba, gray, rgba, pal} {
		name := fmt.Sprintf("%T", img)
		p := mustPyramid(t, img)
		want := image.NewRGBA(image.Rect(0, 0, r.Dx(), r.Dy()))
		draw.Draw(want, want.Rect, img, r.Min, draw.Src)
		diffRGBA(t, name+" vs draw.Draw", p.Level(0), want)
		at := image.NewRGBA(want.Rect)
		for y := r.Min.Y; y < r.Max.Y; y++ {
			for x := r.Min.X; x < r.Max.X; x++ {
				at.SetRGBA(x-r.Min.X, y-r.Min.Y, color.RGBAModel.Convert(img.At(x, y)).(color.RGBA))
			}
		}
		diffRGBA(t, name+" vs At", p.Level(0), at)
	}
}

// AdoptPyramid builds the same levels as NewPyramid; it takes a packed
// RGBA at the origin as level 0 itself and copies anything else.
func TestAdoptPyramidMatchesNewPyramid(t *testing.T) {
	src := image.NewRGBA(image.Rect(0, 0, 601, 333))
	for i := range src.Pix {
		src.Pix[i] = uint8(i*7 + i/13)
	}
	want := mustPyramid(t, src)
	sub := src.SubImage(image.Rect(10, 20, 300, 200)).(*image.RGBA)
	for _, c := range []struct {
		name  string
		img   *image.RGBA
		adopt bool
	}{{"packed at the origin", src, true}, {"sub-image", sub, false}} {
		got, err := AdoptPyramid(context.Background(), c.img)
		if err != nil {
			t.Fatal(err)
		}
		ref := want
		if !c.adopt {
			ref = mustPyramid(t, c.img)
		}
		if got.Levels() != ref.Levels() {
			t.Fatalf("%s: %d levels, want %d", c.name, got.Levels(), ref.Levels())
		}
		for i := 0; i < ref.Levels(); i++ {
			if !bytes.Equal(got.Level(i).Pix, ref.Level(i).Pix) || got.Level(i).Rect != ref.Level(i).Rect {
				t.Errorf("%s: level %d differs", c.name, i)
			}
		}
		if adopted := &got.Level(0).Pix[0] == &c.img.Pix[0]; adopted != c.adopt {
			t.Errorf("%s: level 0 adopted = %v, want %v", c.name, adopted, c.adopt)
		}
	}
}
