package canvas

import (
	"math"
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

// The expectations below are plain arithmetic on the definitions in
// transform.go and geometry.go, worked out by hand; the picking rules
// (a handle radius, corners before edge middles, the innermost box first)
// are common practice in drawing programs.

const geomEps = 1e-9

func geomNear(a, b float64) bool { return math.Abs(a-b) <= geomEps }

func geomNearBox(a, b project.Box) bool {
	return geomNear(a.X0, b.X0) && geomNear(a.Y0, b.Y0) && geomNear(a.X1, b.X1) && geomNear(a.Y1, b.Y1)
}

func TestZoomAtKeepsPointUnderPointer(t *testing.T) {
	factors := []float64{1 / 3.0, 7.3}
	for k := -6; k <= 6; k++ {
		factors = append(factors, math.Pow(1.25, float64(k)))
	}
	pointers := [][2]float64{{0, 0}, {311.5, 97.25}, {1012.75, 776.5}, {-40, 1200}}
	for _, start := range []Transform{Fit(1280, 960, 1013, 777), Fit(37, 23, 1013, 777), {Scale: 0.37, OffsetX: -123.125, OffsetY: 44.5}} {
		for _, p := range pointers {
			tr := start
			for _, f := range factors {
				ix, iy := tr.ToImage(p[0], p[1])
				next := tr.ZoomAt(f, p[0], p[1])
				jx, jy := next.ToImage(p[0], p[1])
				// The point is fixed relative to the image size it spans.
				if math.Abs(ix-jx) > geomEps*math.Max(1, math.Abs(ix)) || math.Abs(iy-jy) > geomEps*math.Max(1, math.Abs(iy)) {
					t.Errorf("%+v zoom %g at %v: image point (%g,%g) moved to (%g,%g)", tr, f, p, ix, iy, jx, jy)
				}
				if want := ClampScale(tr.Scale * f); next.Scale != want {
					t.Errorf("%+v zoom %g: scale %g, want %g", tr, f, next.Scale, want)
				}
				tr = next
				// Pan by odd amounts and come back through both mappings.
				tr = tr.Pan(13.375, -7.5)
				for _, q := range [][2]float64{{0, 0}, {0.5, 0.5}, {36.9, 22.1}, {1279.75, 959.25}} {
					sx, sy := tr.ToScreen(q[0], q[1])
					x, y := tr.ToImage(sx, sy)
					if math.Abs(x-q[0]) > geomEps || math.Abs(y-q[1]) > geomEps {
						t.Errorf("%+v: %v -> (%g,%g) -> (%g,%g)", tr, q, sx, sy, x, y)
					}
				}
			}
		}
	}
}

func TestZoomClampedAtLimits(t *testing.T) {
	if MinScale != 0.05 || MaxScale != 32 {
		t.Fatalf("zoom limits %g..%g, want 5 %% .. 3200 %%", MinScale, MaxScale)
	}
	tr := Fit(1280, 960, 1013, 777)
	in := tr
	for range 100 {
		in = in.ZoomAt(1.25, 400, 300)
	}
	if in.Scale != MaxScale {
		t.Errorf("zooming in 100 notches: scale %g, want %g", in.Scale, MaxScale)
	}
	out := tr
	for range 100 {
		out = out.ZoomAt(1/1.25, 400, 300)
	}
	if out.Scale != MinScale {
		t.Errorf("zooming out 100 notches: scale %g, want %g", out.Scale, MinScale)
	}
	// Clamped or not, the point under the pointer stays put.
	x0, y0 := tr.ToImage(400, 300)
	for _, z := range []Transform{tr.ZoomAt(1e6, 400, 300), tr.ZoomAt(1e-6, 400, 300)} {
		x, y := z.ToImage(400, 300)
		if !geomNear(x, x0) || !geomNear(y, y0) {
			t.Errorf("clamped zoom %+v moved (%g,%g) to (%g,%g)", z, x0, y0, x, y)
		}
	}
	if s := tr.ScaleAt(100, 0, 0).Scale; s != MaxScale {
		t.Errorf("ScaleAt(100) = %g", s)
	}
	if s := tr.ScaleAt(0.001, 0, 0).Scale; s != MinScale {
		t.Errorf("ScaleAt(0.001) = %g", s)
	}
	if z := (Transform{}).ZoomAt(2, 5, 5); z != (Transform{}) {
		t.Errorf("zooming the zero transform gave %+v", z)
	}
}

func TestKeepCentresSmallAndHoldsLargeImage(t *testing.T) {
	// 100×50 at scale 1 in 800×600: wherever it was panned, it is centred.
	for _, off := range [][2]float64{{0, 0}, {-5000, 7000}, {799, -49}} {
		k := Transform{Scale: 1, OffsetX: off[0], OffsetY: off[1]}.Keep(100, 50, 800, 600)
		if k.OffsetX != 350 || k.OffsetY != 275 || k.Scale != 1 {
			t.Errorf("small image from %v kept at %+v, want offsets (350,275)", off, k)
		}
	}
	// 4000×3000 at scale 1 in 800×600: the image covers the view, offsets
	// stay within [view-size, 0] = [-3200, 0] × [-2400, 0].
	cases := []struct{ in, want [2]float64 }{
		{[2]float64{100, 50}, [2]float64{0, 0}},
		{[2]float64{-5000, -9000}, [2]float64{-3200, -2400}},
		{[2]float64{-1234.5, -17.25}, [2]float64{-1234.5, -17.25}},
	}
	for _, c := range cases {
		k := Transform{Scale: 1, OffsetX: c.in[0], OffsetY: c.in[1]}.Keep(4000, 3000, 800, 600)
		if k.OffsetX != c.want[0] || k.OffsetY != c.want[1] {
			t.Errorf("large image from %v kept at (%g,%g), want %v", c.in, k.OffsetX, k.OffsetY, c.want)
		}
		v := k.Visible(4000, 3000, 800, 600)
		if !geomNear(v.Width(), 800) || !geomNear(v.Height(), 600) {
			t.Errorf("after Keep the view shows %v, want a full 800×600 of image", v)
		}
	}
	// Mixed: wider than the view, shorter than it.
	k := Transform{Scale: 2, OffsetX: 10, OffsetY: 10}.Keep(1000, 100, 800, 600)
	if k.OffsetX != 0 || k.OffsetY != 200 {
		t.Errorf("mixed keep %+v, want offsets (0,200)", k)
	}
}

func TestVisibleRegion(t *testing.T) {
	tr := Transform{Scale: 2, OffsetX: -100, OffsetY: 50}
	// Screen (0,0) is image (50,-25), screen (800,600) is image (450,275);
	// clipped to the 1000×1000 image.
	if v := tr.Visible(1000, 1000, 800, 600); !geomNearBox(v, project.Box{X0: 50, Y0: 0, X1: 450, Y1: 275}) {
		t.Errorf("Visible = %v", v)
	}
	whole := Fit(1280, 960, 1013, 777)
	if v := whole.Visible(1280, 960, 1013, 777); !geomNearBox(v, project.Box{X1: 1280, Y1: 960}) {
		t.Errorf("fitted image shows %v, want all of it", v)
	}
	if v := (Transform{Scale: 1, OffsetX: 5000}).Visible(1000, 1000, 800, 600); !v.Empty() {
		t.Errorf("image panned away shows %v, want nothing", v)
	}
	if v := (Transform{}).Visible(1000, 1000, 800, 600); !v.Empty() {
		t.Errorf("zero transform shows %v", v)
	}
}

func geomIsCorner(h Handle) bool {
	return h == HandleTopLeft || h == HandleTopRight || h == HandleBottomLeft || h == HandleBottomRight
}

func TestPickHandle(t *testing.T) {
	b := project.Box{X0: 100, Y0: 100, X1: 300, Y1: 200}
	want := map[Handle][2]float64{
		HandleTopLeft: {100, 100}, HandleTop: {200, 100}, HandleTopRight: {300, 100}, HandleRight: {300, 150},
		HandleBottomRight: {300, 200}, HandleBottom: {200, 200}, HandleBottomLeft: {100, 200}, HandleLeft: {100, 150},
	}
	const r = 5
	for _, h := range Handles {
		hx, hy := HandlePoint(b, h)
		if p := want[h]; hx != p[0] || hy != p[1] {
			t.Errorf("handle %d at (%g,%g), want %v", h, hx, hy, p)
		}
		for _, d := range [][2]float64{{0, 0}, {3, -2}, {-r, r}, {r, 0}} {
			if got := PickHandle(b, hx+d[0], hy+d[1], r); got != h {
				t.Errorf("press at handle %d + %v picked %d", h, d, got)
			}
		}
		// Just beyond the radius: the inside or nothing, never the handle.
		for _, d := range [][2]float64{{r + 0.01, 0}, {0, -(r + 0.01)}, {-(r + 0.5), r + 0.5}} {
			got := PickHandle(b, hx+d[0], hy+d[1], r)
			wantH := HandleNone
			if b.Contains(hx+d[0], hy+d[1]) {
				wantH = HandleInside
			}
			if got != wantH {
				t.Errorf("press at handle %d + %v picked %d, want %d", h, d, got, wantH)
			}
		}
	}
	if got := PickHandle(b, 150, 130, r); got != HandleInside {
		t.Errorf("press inside picked %d", got)
	}
	if got := PickHandle(b, 50, 50, r); got != HandleNone {
		t.Errorf("press outside picked %d", got)
	}
	if got := PickHandle(b, 150, 94, r); got != HandleNone {
		t.Errorf("press 6 above the top edge, far from handles, picked %d", got)
	}
	// The radius is honoured: a larger one reaches further.
	if got := PickHandle(b, 150, 94, 60); got == HandleNone || got == HandleInside {
		t.Errorf("radius 60 should reach a handle from (150,94), got %d", got)
	}
}

func TestPickHandleCornersWinOnTinyBox(t *testing.T) {
	// A 4×4 box with radius 5: every handle is in reach of every point.
	b := project.Box{X0: 100, Y0: 100, X1: 104, Y1: 104}
	// (101,100) is 1 from the top-left corner and 1 from the top middle.
	if got := PickHandle(b, 101, 100, 5); got != HandleTopLeft {
		t.Errorf("tie between corner and edge went to %d", got)
	}
	if got := PickHandle(b, 104, 103, 5); got != HandleBottomRight {
		t.Errorf("tie near bottom-right went to %d", got)
	}
	// The centre is 2 from all eight handles: a corner wins.
	if got := PickHandle(b, 102, 102, 5); !geomIsCorner(got) {
		t.Errorf("centre of a tiny box picked %d, want a corner", got)
	}
	// Exactly on an edge middle the edge is nearer than the corners.
	if got := PickHandle(b, 102, 100, 5); got != HandleTop {
		t.Errorf("on the top middle picked %d", got)
	}
	// A 1×1 box: at equal distances the corner wins.
	s := project.Box{X0: 10, Y0: 10, X1: 11, Y1: 11}
	for _, c := range []struct {
		x, y float64
		want Handle
	}{{10.25, 10, HandleTopLeft}, {11, 10.75, HandleBottomRight}, {9, 12, HandleBottomLeft}, {10.5, 10, HandleTop}} {
		if got := PickHandle(s, c.x, c.y, 5); got != c.want {
			t.Errorf("1×1 box at (%g,%g) picked %d, want %d", c.x, c.y, got, c.want)
		}
	}
	if got := PickHandle(s, 10.5, 10.5, 5); !geomIsCorner(got) {
		t.Errorf("centre of a 1×1 box picked %d, want a corner", got)
	}
}

func TestHitTestSmallestFirst(t *testing.T) {
	boxes := []project.Box{
		{X0: 10, Y0: 10, X1: 60, Y1: 60}, // 0 middle
		{X0: 0, Y0: 0, X1: 100, Y1: 100}, // 1 outer
		{X0: 20, Y0: 20, X1: 30, Y1: 30}, // 2 inner
		{X0: 70, Y0: 70, X1: 90, Y1: 90}, // 3 beside
		{X0: 20, Y0: 20, X1: 30, Y1: 30}, // 4 same as 2, drawn later
	}
	eq := func(a, b []int) bool {
		if len(a) != len(b) {
			return false
		}
		for i := range a {
			if a[i] != b[i] {
				return false
			}
		}
		return true
	}
	cases := []struct {
		x, y float64
		want []int
	}{
		{25, 25, []int{4, 2, 0, 1}}, // equal areas: the later (on top) first
		{50, 50, []int{0, 1}},
		{10, 35, []int{0, 1}}, // on an edge counts as inside
		{80, 80, []int{3, 1}},
		{200, 200, nil},
	}
	for _, c := range cases {
		if got := HitTest(boxes, c.x, c.y); !eq(got, c.want) {
			t.Errorf("HitTest(%g,%g) = %v, want %v", c.x, c.y, got, c.want)
		}
	}
}

func TestSpan(t *testing.T) {
	if DefaultMinSide != 2 {
		t.Fatalf("DefaultMinSide = %v", DefaultMinSide)
	}
	bd := Bounds{W: 640, H: 480, MinSide: DefaultMinSide, Snap: true}
	cases := []struct {
		ax, ay, bx, by float64
		want           project.Box
		ok             bool
	}{
		// A drag up and to the left is the same box as down and right.
		{300.4, 200.6, 100.2, 50.7, project.Box{X0: 100, Y0: 51, X1: 300, Y1: 201}, true},
		{100.2, 50.7, 300.4, 200.6, project.Box{X0: 100, Y0: 51, X1: 300, Y1: 201}, true},
		// Beyond the image: clamped to it.
		{-20, -5, 700.3, 500, project.Box{X0: 0, Y0: 0, X1: 640, Y1: 480}, true},
		// A click that moved a pixel: too small.
		{10, 10, 11.4, 30, project.Box{X0: 10, Y0: 10, X1: 11, Y1: 30}, false},
		{10, 10, 30, 11.4, project.Box{X0: 10, Y0: 10, X1: 30, Y1: 11}, false},
		// Exactly MinSide is allowed.
		{10, 10, 12, 12, project.Box{X0: 10, Y0: 10, X1: 12, Y1: 12}, true},
		// Entirely off the image: nothing.
		{-50, -50, -10, -10, project.Box{}, false},
		{700, 10, 800, 100, project.Box{X0: 640, Y0: 10, X1: 640, Y1: 100}, false},
	}
	for _, c := range cases {
		got, ok := bd.Span(c.ax, c.ay, c.bx, c.by)
		if got != c.want || ok != c.ok {
			t.Errorf("Span(%g,%g,%g,%g) = %v %v, want %v %v", c.ax, c.ay, c.bx, c.by, got, ok, c.want, c.ok)
		}
	}
	// Without snapping the edges stay where the pointer was.
	free := Bounds{W: 640, H: 480, MinSide: 2}
	if got, ok := free.Span(10.25, 20.5, 12.25, 30.75); !ok || got != (project.Box{X0: 10.25, Y0: 20.5, X1: 12.25, Y1: 30.75}) {
		t.Errorf("unsnapped Span = %v %v", got, ok)
	}
	if _, ok := free.Span(10.25, 20.5, 12.24, 30.75); ok {
		t.Errorf("unsnapped Span 1.99 wide accepted")
	}
}

func TestMoveKeepsSizeAndStopsAtEdges(t *testing.T) {
	bd := Bounds{W: 640, H: 480, MinSide: 2, Snap: true}
	b := project.Box{X0: 100, Y0: 100, X1: 150, Y1: 130}
	cases := []struct {
		dx, dy float64
		want   project.Box
	}{
		{10.4, -5.6, project.Box{X0: 110, Y0: 94, X1: 160, Y1: 124}},
		{1000, 1000, project.Box{X0: 590, Y0: 450, X1: 640, Y1: 480}},
		{-1000, -1000, project.Box{X0: 0, Y0: 0, X1: 50, Y1: 30}},
		{-1000, 3, project.Box{X0: 0, Y0: 103, X1: 50, Y1: 133}},
	}
	for _, c := range cases {
		if got := bd.Move(b, c.dx, c.dy); got != c.want {
			t.Errorf("Move(%g,%g) = %v, want %v", c.dx, c.dy, got, c.want)
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	free := Bounds{W: 640, H: 480, MinSide: 2}
	for range 1000 {
		x0, y0 := rng.Float64()*600, rng.Float64()*440
		b := project.Box{X0: x0, Y0: y0, X1: x0 + 2 + rng.Float64()*38, Y1: y0 + 2 + rng.Float64()*38}
		got := free.Move(b, rng.NormFloat64()*300, rng.NormFloat64()*300)
		if !geomNear(got.Width(), b.Width()) || !geomNear(got.Height(), b.Height()) {
			t.Fatalf("Move changed the size of %v to %v", b, got)
		}
		if got.X0 < 0 || got.Y0 < 0 || got.X1 > 640+geomEps || got.Y1 > 480+geomEps {
			t.Fatalf("Move left the image: %v -> %v", b, got)
		}
	}
}

func TestResizeEachHandle(t *testing.T) {
	bd := Bounds{W: 640, H: 480, MinSide: 2, Snap: true}
	b := project.Box{X0: 100, Y0: 100, X1: 200, Y1: 150}
	small := map[Handle]project.Box{ // drag by (+7, -4)
		HandleTopLeft:     {X0: 107, Y0: 96, X1: 200, Y1: 150},
		HandleTop:         {X0: 100, Y0: 96, X1: 200, Y1: 150},
		HandleTopRight:    {X0: 100, Y0: 96, X1: 207, Y1: 150},
		HandleRight:       {X0: 100, Y0: 100, X1: 207, Y1: 150},
		HandleBottomRight: {X0: 100, Y0: 100, X1: 207, Y1: 146},
		HandleBottom:      {X0: 100, Y0: 100, X1: 200, Y1: 146},
		HandleBottomLeft:  {X0: 107, Y0: 100, X1: 200, Y1: 146},
		HandleLeft:        {X0: 107, Y0: 100, X1: 200, Y1: 150},
	}
	outward := map[Handle]project.Box{ // dragged far away from the box
		HandleTopLeft:     {X0: 0, Y0: 0, X1: 200, Y1: 150},
		HandleTop:         {X0: 100, Y0: 0, X1: 200, Y1: 150},
		HandleTopRight:    {X0: 100, Y0: 0, X1: 640, Y1: 150},
		HandleRight:       {X0: 100, Y0: 100, X1: 640, Y1: 150},
		HandleBottomRight: {X0: 100, Y0: 100, X1: 640, Y1: 480},
		HandleBottom:      {X0: 100, Y0: 100, X1: 200, Y1: 480},
		HandleBottomLeft:  {X0: 0, Y0: 100, X1: 200, Y1: 480},
		HandleLeft:        {X0: 0, Y0: 100, X1: 200, Y1: 150},
	}
	inward := map[Handle]project.Box{ // dragged far across the opposite edge
		HandleTopLeft:     {X0: 198, Y0: 148, X1: 200, Y1: 150},
		HandleTop:         {X0: 100, Y0: 148, X1: 200, Y1: 150},
		HandleTopRight:    {X0: 100, Y0: 148, X1: 102, Y1: 150},
		HandleRight:       {X0: 100, Y0: 100, X1: 102, Y1: 150},
		HandleBottomRight: {X0: 100, Y0: 100, X1: 102, Y1: 102},
		HandleBottom:      {X0: 100, Y0: 100, X1: 200, Y1: 102},
		HandleBottomLeft:  {X0: 198, Y0: 100, X1: 200, Y1: 102},
		HandleLeft:        {X0: 198, Y0: 100, X1: 200, Y1: 150},
	}
	for _, h := range Handles {
		if got := bd.Resize(b, h, 7, -4); got != small[h] {
			t.Errorf("handle %d by (7,-4): %v, want %v", h, got, small[h])
		}
		ex, ey := h.edges()
		far := func(e int, s float64) float64 { return float64(e) * s }
		if got := bd.Resize(b, h, far(ex, 5000), far(ey, 5000)); got != outward[h] {
			t.Errorf("handle %d outward: %v, want %v", h, got, outward[h])
		}
		if got := bd.Resize(b, h, far(ex, -5000), far(ey, -5000)); got != inward[h] {
			t.Errorf("handle %d inward: %v, want %v", h, got, inward[h])
		}
	}
	if got := bd.Resize(b, HandleInside, 50, 50); got != b {
		t.Errorf("Resize with the inside handle changed the box: %v", got)
	}
	// Random drags of any handle never invert a box nor leave the image.
	rng := rand.New(rand.NewPCG(3, 4))
	free := Bounds{W: 640, H: 480, MinSide: 2}
	for range 2000 {
		x0, y0 := rng.Float64()*600, rng.Float64()*440
		b := project.Box{X0: x0, Y0: y0, X1: x0 + 2 + rng.Float64()*38, Y1: y0 + 2 + rng.Float64()*38}
		h := Handles[rng.IntN(8)]
		got := free.Resize(b, h, rng.NormFloat64()*200, rng.NormFloat64()*200)
		if got.Width() < 2-geomEps || got.Height() < 2-geomEps || got.X0 < 0 || got.Y0 < 0 || got.X1 > 640 || got.Y1 > 480 {
			t.Fatalf("handle %d on %v gave %v", h, b, got)
		}
	}
}

// TestSnappedEditsOfFractionalBoxes covers imported or suggested boxes,
// whose edges are not whole pixels, edited with snapping on (the view's
// default).
func TestSnappedEditsOfFractionalBoxes(t *testing.T) {
	bd := Bounds{W: 100, H: 100, MinSide: 2, Snap: true}
	// Width 10.4: clamping X0 to 89.6 and then rounding to 90 would put
	// X1 at 100.4, past the border.
	if got := bd.Move(project.Box{X0: 10, Y0: 10, X1: 20.4, Y1: 20}, 1000, 0); got.X1 > 100 || got.X0 < 0 {
		t.Errorf("Move pushed %v past the right border", got)
	}
	t.Run("resize", func(t *testing.T) {
		// X1 = 10.6: X0 may go to 8.6 at most, which rounds to 9: width 1.6.
		if got := bd.Resize(project.Box{X0: 0, Y0: 0, X1: 10.6, Y1: 10}, HandleLeft, 1000, 0); got.Width() < 2 {
			t.Errorf("Resize shrank the box below MinSide: %v", got)
		}
		// X0 = 10.4: X1 may go down to 12.4, which rounds to 12: width 1.6.
		if got := bd.Resize(project.Box{X0: 10.4, Y0: 0, X1: 30, Y1: 10}, HandleRight, -1000, 0); got.Width() < 2 {
			t.Errorf("Resize shrank the box below MinSide: %v", got)
		}
	})
}

func TestFitPullsBoxInside(t *testing.T) {
	bd := Bounds{W: 640, H: 480, MinSide: 2}
	cases := []struct{ in, want project.Box }{
		{project.Box{X0: 600, Y0: 470, X1: 700, Y1: 520}, project.Box{X0: 540, Y0: 430, X1: 640, Y1: 480}},
		{project.Box{X0: -30, Y0: -20, X1: 10, Y1: 5}, project.Box{X0: 0, Y0: 0, X1: 40, Y1: 25}},
		{project.Box{X0: -10, Y0: -10, X1: 1000, Y1: 1000}, project.Box{X0: 0, Y0: 0, X1: 640, Y1: 480}},
		{project.Box{X0: 5, Y0: 5, X1: 5.5, Y1: 5.5}, project.Box{X0: 5, Y0: 5, X1: 7, Y1: 7}},
		{project.Box{X0: 639.5, Y0: 10, X1: 640, Y1: 20}, project.Box{X0: 638, Y0: 10, X1: 640, Y1: 20}},
		{project.Box{X0: 10, Y0: 20, X1: 30, Y1: 40}, project.Box{X0: 10, Y0: 20, X1: 30, Y1: 40}},
	}
	for _, c := range cases {
		if got := bd.Fit(c.in); !geomNearBox(got, c.want) {
			t.Errorf("Fit(%v) = %v, want %v", c.in, got, c.want)
		}
	}
}

func TestKeepCentreLetsAnEdgeReachTheMiddle(t *testing.T) {
	// 4000×3000 at scale 1 in 800×600: offsets within
	// [400-4000, 400] × [300-3000, 300], so the image covers the middle.
	cases := []struct{ in, want [2]float64 }{
		{[2]float64{400, 300}, [2]float64{400, 300}},         // the top-left corner in the middle
		{[2]float64{900, 900}, [2]float64{400, 300}},         // past it: held
		{[2]float64{-3600, -2700}, [2]float64{-3600, -2700}}, // the bottom-right corner in the middle
		{[2]float64{-9000, -9000}, [2]float64{-3600, -2700}},
	}
	for _, c := range cases {
		k := Transform{Scale: 1, OffsetX: c.in[0], OffsetY: c.in[1]}.KeepCentre(4000, 3000, 800, 600)
		if k.OffsetX != c.want[0] || k.OffsetY != c.want[1] {
			t.Errorf("KeepCentre from %v: (%g,%g), want %v", c.in, k.OffsetX, k.OffsetY, c.want)
		}
	}
	// A small image may sit anywhere that covers the middle.
	k := Transform{Scale: 1, OffsetX: 380, OffsetY: 0}.KeepCentre(100, 50, 800, 600)
	if k.OffsetX != 380 || k.OffsetY != 250 {
		t.Errorf("small image kept at (%g,%g), want (380,250)", k.OffsetX, k.OffsetY)
	}
}
