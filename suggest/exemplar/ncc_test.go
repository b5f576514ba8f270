package exemplar

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// randomPlane fills a w×h plane with uniform noise 0..255.
func randomPlane(r *rand.Rand, w, h int) Plane {
	p := NewPlane(w, h)
	for i := range p.Pix {
		p.Pix[i] = float32(r.Float64() * 255)
	}
	return p
}

// paste copies src into dst with its top-left corner at (x, y).
func paste(dst, src Plane, x, y int) {
	for j := 0; j < src.H; j++ {
		copy(dst.Pix[(y+j)*dst.W+x:(y+j)*dst.W+x+src.W], src.Pix[j*src.W:(j+1)*src.W])
	}
}

// bothMethods runs f with the direct and the FFT correlation.
func bothMethods(t *testing.T, f func(t *testing.T, m nccMethod)) {
	t.Run("direct", func(t *testing.T) { f(t, methodDirect) })
	t.Run("fft", func(t *testing.T) { f(t, methodFFT) })
}

// TestNCCSelfMatch: a template correlated with itself scores 1 at the place
// it was cut from (Cauchy–Schwarz equality), and an inverted copy −1.
func TestNCCSelfMatch(t *testing.T) {
	bothMethods(t, func(t *testing.T, m nccMethod) {
		r := rand.New(rand.NewPCG(1, 2))
		img := randomPlane(r, 90, 70)
		tpl := Crop(img, image.Rect(31, 17, 48, 40)) // 17×23
		inv := NewPlane(tpl.W, tpl.H)
		for i, v := range tpl.Pix {
			inv.Pix[i] = 255 - v
		}
		paste(img, inv, 60, 40)
		out, err := nccWith(img, tpl, m)
		if err != nil {
			t.Fatal(err)
		}
		if out.W != 90-17+1 || out.H != 70-23+1 {
			t.Fatalf("map is %d×%d", out.W, out.H)
		}
		if v := out.At(31, 17); math.Abs(float64(v)-1) > 1e-5 {
			t.Errorf("self match %v, want 1", v)
		}
		if v := out.At(60, 40); math.Abs(float64(v)+1) > 1e-5 {
			t.Errorf("inverted copy %v, want -1", v)
		}
		for i, v := range out.Pix {
			if v < -1 || v > 1 || math.IsNaN(float64(v)) {
				t.Fatalf("value %v at %d outside [-1, 1]", v, i)
			}
		}
	})
}

// TestNCCInvariance: NCC ignores gain and offset of the image (its
// definition subtracts the window mean and divides by the window norm).
func TestNCCInvariance(t *testing.T) {
	bothMethods(t, func(t *testing.T, m nccMethod) {
		r := rand.New(rand.NewPCG(3, 4))
		img := randomPlane(r, 64, 48)
		tpl := randomPlane(r, 9, 7)
		a, _ := nccWith(img, tpl, m)
		scaled := NewPlane(img.W, img.H)
		for i, v := range img.Pix {
			scaled.Pix[i] = 0.5*v + 40
		}
		b, _ := nccWith(scaled, tpl, m)
		for i := range a.Pix {
			if math.Abs(float64(a.Pix[i]-b.Pix[i])) > 1e-5 {
				t.Fatalf("at %d: %v vs %v after gain/offset", i, a.Pix[i], b.Pix[i])
			}
		}
	})
}

// TestNCCFlat: zero variance in the window or the template gives exactly 0.
func TestNCCFlat(t *testing.T) {
	bothMethods(t, func(t *testing.T, m nccMethod) {
		r := rand.New(rand.NewPCG(5, 6))
		img := randomPlane(r, 80, 60)
		flat := NewPlane(30, 25)
		for i := range flat.Pix {
			flat.Pix[i] = 117.3
		}
		paste(img, flat, 40, 30)
		tpl := randomPlane(r, 11, 13)
		out, err := nccWith(img, tpl, m)
		if err != nil {
			t.Fatal(err)
		}
		for y := 30; y+tpl.H <= 55; y++ {
			for x := 40; x+tpl.W <= 70; x++ {
				if v := out.At(x, y); v != 0 {
					t.Fatalf("flat window at (%d,%d) scored %v", x, y, v)
				}
			}
		}
		ft := NewPlane(5, 5)
		for i := range ft.Pix {
			ft.Pix[i] = 3
		}
		out, _ = nccWith(img, ft, m)
		for _, v := range out.Pix {
			if v != 0 {
				t.Fatalf("flat template scored %v", v)
			}
		}
	})
}

// TestNCCErrors: empty or oversized templates and mismatched planes fail.
func TestNCCErrors(t *testing.T) {
	img := NewPlane(10, 10)
	for _, tc := range []struct {
		name string
		p, t Plane
		want string
	}{
		{"empty", img, NewPlane(0, 3), "empty"},
		{"wide", img, NewPlane(11, 2), "larger"},
		{"tall", img, NewPlane(2, 11), "larger"},
		{"bad plane", Plane{W: 4, H: 4, Pix: make([]float32, 3)}, NewPlane(2, 2), "does not match"},
	} {
		if _, err := NCC(tc.p, tc.t); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: err %v, want %q", tc.name, err, tc.want)
		}
	}
	if _, err := NCCPlanes([]Plane{img}, nil); err == nil {
		t.Error("NCCPlanes with unequal counts: no error")
	}
	if _, err := NCCPlanes([]Plane{img, NewPlane(9, 10)}, []Plane{NewPlane(2, 2), NewPlane(2, 2)}); err == nil {
		t.Error("NCCPlanes with unequal map sizes: no error")
	}
	// A template as large as the image gives one score.
	out, err := NCC(img, img)
	if err != nil || out.W != 1 || out.H != 1 {
		t.Errorf("same-size template: %d×%d, %v", out.W, out.H, err)
	}
}

// TestNCCPlanesAverage: the colour score is the mean of the channel scores.
func TestNCCPlanesAverage(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	var ps, ts []Plane
	for c := 0; c < 3; c++ {
		p := randomPlane(r, 40, 30)
		ps = append(ps, p)
		ts = append(ts, Crop(p, image.Rect(5, 6, 15, 14)))
	}
	got, err := NCCPlanes(ps, ts)
	if err != nil {
		t.Fatal(err)
	}
	if v := got.At(5, 6); math.Abs(float64(v)-1) > 1e-5 {
		t.Errorf("colour self match %v", v)
	}
	for i := range got.Pix {
		var want float64
		for c := range ps {
			m, _ := NCC(ps[c], ts[c])
			want += float64(m.Pix[i]) / 3
		}
		if math.Abs(float64(got.Pix[i])-want) > 1e-6 {
			t.Fatalf("at %d: %v, want %v", i, got.Pix[i], want)
		}
	}
}

// TestNCCDirectMatchesFFT: both correlation paths agree at odd sizes, at
// tile boundaries, and with templates as large as the image.
func TestNCCDirectMatchesFFT(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 10))
	for _, sz := range [][4]int{{50, 40, 1, 1}, {50, 40, 3, 5}, {131, 97, 17, 23}, {64, 64, 64, 64}, {300, 80, 40, 80}, {1100, 50, 7, 9},
		{1100, 60, 1050, 10}, {1201, 40, 1100, 20}} { // the last two: tiles the length of the image, beyond maxTile
		img := randomPlane(r, sz[0], sz[1])
		tpl := randomPlane(r, sz[2], sz[3])
		a, err := nccWith(img, tpl, methodDirect)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := nccWith(img, tpl, methodFFT)
		for i := range a.Pix {
			if math.Abs(float64(a.Pix[i]-b.Pix[i])) > 1e-5 {
				t.Fatalf("%v at %d: direct %v, FFT %v", sz, i, a.Pix[i], b.Pix[i])
			}
		}
	}
}

// TestNCCChooseMethod: tiny templates go direct, large ones by FFT.
func TestNCCChooseMethod(t *testing.T) {
	if m := chooseMethod(4000, 3000, 3, 3); m != methodDirect {
		t.Errorf("3×3 template on 12 MP: %v, want direct", m)
	}
	if m := chooseMethod(4000, 3000, 64, 64); m != methodFFT {
		t.Errorf("64×64 template on 12 MP: %v, want FFT", m)
	}
}

// A template half the image's size needs tiles larger than maxTileArea: a
// 512×512 tile leaves (512−500+1)² = 169 valid outputs of a 781×461 map,
// 2196 tiles (overlap-save arithmetic), which took 113 s where two large
// tiles take a fifth of a second (issue 14). The plan must cover the map
// in a handful of tiles, and the cost model must prefer it to the direct
// sum.
func TestNCCPlanLargeTemplate(t *testing.T) {
	for _, tpl := range [][2]int{{500, 500}, {700, 700}, {960, 960}, {1200, 100}} {
		m, n, cost := planTiles(1280, 960, tpl[0], tpl[1])
		if m < tpl[1] || n < tpl[0] {
			t.Errorf("template %v: tile %d×%d (rows×columns) smaller than the template", tpl, m, n)
			continue
		}
		ow, oh := 1280-tpl[0]+1, 960-tpl[1]+1
		tiles := ((oh + m - tpl[1]) / (m - tpl[1] + 1)) * ((ow + n - tpl[0]) / (n - tpl[0] + 1))
		if tiles > 8 || math.IsInf(cost, 0) {
			t.Errorf("template %v: %d tiles of %d×%d, cost %g", tpl, tiles, m, n, cost)
		}
	}
	if chooseMethod(1280, 960, 500, 500) != methodFFT {
		t.Error("500×500 template on 1280×960: not FFT")
	}
}

// TestFeaturePlanesLuma checks the gray feature against ITU-R BT.601 (Y = 0.299 R
// + 0.587 G + 0.114 B): pure red, green, blue, white and a mixed colour.
func TestFeaturePlanesLuma(t *testing.T) {
	cols := []color.RGBA{{255, 0, 0, 255}, {0, 255, 0, 255}, {0, 0, 255, 255}, {255, 255, 255, 255}, {10, 200, 60, 255}}
	img := image.NewRGBA(image.Rect(0, 0, len(cols), 1))
	nimg := image.NewNRGBA(img.Rect)
	for x, c := range cols {
		img.SetRGBA(x, 0, c)
		nimg.SetNRGBA(x, 0, color.NRGBA(c))
	}
	want := []float64{76.245, 149.685, 29.07, 255, 0.299*10 + 0.587*200 + 0.114*60}
	for _, im := range []image.Image{img, nimg} {
		g := Planes(im, FeatureGray)
		if len(g) != 1 || g[0].W != len(cols) || g[0].H != 1 {
			t.Fatalf("gray planes %v", g)
		}
		for x, w := range want {
			if math.Abs(float64(g[0].At(x, 0))-w) > 1e-4 {
				t.Errorf("%T luma of %v = %v, want %v", im, cols[x], g[0].At(x, 0), w)
			}
		}
		c := Planes(im, FeatureColor)
		if len(c) != 3 || c[0].At(0, 0) != 255 || c[1].At(1, 0) != 255 || c[2].At(2, 0) != 255 || c[0].At(4, 0) != 10 {
			t.Errorf("%T colour planes wrong", im)
		}
	}
}

// TestFeaturePlanesGradient: a vertical step edge of height 100 gives Sobel
// magnitude 400 on both sides of the edge (kernel weights 1, 2, 1) and 0 in
// flat parts, borders replicated.
func TestFeaturePlanesGradient(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 6, 4))
	for y := 0; y < 4; y++ {
		for x := 3; x < 6; x++ {
			img.SetGray(x, y, color.Gray{100})
		}
	}
	g := Planes(img, FeatureGradient)
	if len(g) != 1 {
		t.Fatal(len(g))
	}
	for y := 0; y < 4; y++ {
		for x := 0; x < 6; x++ {
			want := float32(0)
			if x == 2 || x == 3 {
				want = 400
			}
			if v := g[0].At(x, y); v != want {
				t.Errorf("gradient at (%d,%d) = %v, want %v", x, y, v, want)
			}
		}
	}
}

// TestFeatureParse: names round-trip and unknown names fail.
func TestFeatureParse(t *testing.T) {
	for _, f := range []Feature{FeatureGray, FeatureGradient, FeatureColor} {
		got, err := ParseFeature(f.String())
		if err != nil || got != f {
			t.Errorf("ParseFeature(%q) = %v, %v", f.String(), got, err)
		}
	}
	if _, err := ParseFeature("edges"); err == nil {
		t.Error("unknown feature accepted")
	}
}

// TestFeatureRotateRoundTrip: four quarter turns, or one turn and its
// inverse, give the plane back; one turn moves the top-left sample to the
// top-right.
func TestFeatureRotateRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	p := randomPlane(r, 7, 4)
	q := Rotate90(p, 1)
	if q.W != 4 || q.H != 7 || q.At(3, 0) != p.At(0, 0) || q.At(0, 0) != p.At(0, 3) {
		t.Fatalf("quarter turn wrong: %d×%d", q.W, q.H)
	}
	for _, ks := range [][]int{{1, 1, 1, 1}, {1, -1}, {2, 2}, {3, 1}, {-3, 3}} {
		got := p
		for _, k := range ks {
			got = Rotate90(got, k)
		}
		if got.W != p.W || got.H != p.H {
			t.Fatalf("%v: %d×%d", ks, got.W, got.H)
		}
		for i := range p.Pix {
			if got.Pix[i] != p.Pix[i] {
				t.Fatalf("%v: sample %d differs", ks, i)
			}
		}
	}
	if h := Rotate90(p, 2); h.At(0, 0) != p.At(6, 3) {
		t.Error("half turn wrong")
	}
}

// TestFeatureCropResize: Crop clamps, Resize keeps the mean when shrinking
// by whole factors (area average), reproduces constants, and shrinking a
// 2× nearest-neighbour enlargement gives the original back.
func TestFeatureCropResize(t *testing.T) {
	r := rand.New(rand.NewPCG(13, 14))
	p := randomPlane(r, 12, 10)
	c := Crop(p, image.Rect(8, 7, 20, 20))
	if c.W != 4 || c.H != 3 || c.At(0, 0) != p.At(8, 7) || c.At(3, 2) != p.At(11, 9) {
		t.Fatalf("crop %d×%d", c.W, c.H)
	}
	if e := Crop(p, image.Rect(20, 20, 30, 30)); !e.Empty() {
		t.Error("crop outside the plane is not empty")
	}
	big := NewPlane(24, 20)
	for y := 0; y < 20; y++ {
		for x := 0; x < 24; x++ {
			big.Pix[y*24+x] = p.At(x/2, y/2)
		}
	}
	back := Resize(big, 12, 10)
	for i := range p.Pix {
		if math.Abs(float64(back.Pix[i]-p.Pix[i])) > 1e-3 {
			t.Fatalf("2× shrink at %d: %v, want %v", i, back.Pix[i], p.Pix[i])
		}
	}
	third := Resize(p, 4, 5) // 3× and 2× area average
	if v, want := third.At(1, 2), meanOf(Crop(p, image.Rect(3, 4, 6, 6))); math.Abs(float64(v)-want) > 1e-3 {
		t.Errorf("area average %v, want %v", v, want)
	}
	odd := Resize(p, 5, 3) // non-integer factors keep the mean
	if d := math.Abs(meanOf(odd) - meanOf(p)); d > 1e-3 {
		t.Errorf("area shrink moved the mean by %v", d)
	}
	k := NewPlane(3, 2)
	for i := range k.Pix {
		k.Pix[i] = 42
	}
	for _, sz := range [][2]int{{7, 5}, {3, 9}, {1, 1}, {2, 4}} {
		g := Resize(k, sz[0], sz[1])
		for _, v := range g.Pix {
			if math.Abs(float64(v)-42) > 1e-4 {
				t.Fatalf("resize %v of a constant gave %v", sz, v)
			}
		}
	}
	// Bilinear growth: with centres aligned, 2× enlargement of [0, 4]
	// gives 0, 1, 3, 4 (edge samples replicated).
	line := Plane{W: 2, H: 1, Pix: []float32{0, 4}}
	g := Resize(line, 4, 1)
	for i, w := range []float32{0, 1, 3, 4} {
		if math.Abs(float64(g.Pix[i]-w)) > 1e-6 {
			t.Errorf("bilinear sample %d = %v, want %v", i, g.Pix[i], w)
		}
	}
}

func meanOf(p Plane) float64 {
	var s float64
	for _, v := range p.Pix {
		s += float64(v)
	}
	return s / float64(len(p.Pix))
}
