package exemplar

import (
	"cmp"
	"context"
	"errors"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"boxwright/project"
)

// The scenes below are invented test data (round-trips of a planted
// pattern); the facts they rest on are that a copy of the template scores 1
// and that NCC ignores a linear brightness change (the definition of
// TM_CCOEFF_NORMED, OpenCV 4 imgproc docs, "Template Matching").

// texture is a rough random texture: value noise on 4- and 2-pixel grids
// plus per-pixel noise, around gray level 128.
func texture(w, h int, seed uint64) *image.Gray {
	rng := rand.New(rand.NewPCG(seed, 1))
	grid := func(cell int) func(x, y int) float64 {
		gw, gh := w/cell+2, h/cell+2
		v := make([]float64, gw*gh)
		for i := range v {
			v[i] = rng.Float64()*2 - 1
		}
		return func(x, y int) float64 {
			fx, fy := float64(x)/float64(cell), float64(y)/float64(cell)
			ix, iy := int(fx), int(fy)
			tx, ty := fx-float64(ix), fy-float64(iy)
			a := v[iy*gw+ix]*(1-tx) + v[iy*gw+ix+1]*tx
			b := v[(iy+1)*gw+ix]*(1-tx) + v[(iy+1)*gw+ix+1]*tx
			return a*(1-ty) + b*ty
		}
	}
	coarse, fine := grid(4), grid(2)
	img := image.NewGray(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			v := 128 + 40*coarse(x, y) + 40*fine(x, y) + 25*(rng.Float64()*2-1)
			img.Pix[y*img.Stride+x] = uint8(max(0, min(255, math.Round(v))))
		}
	}
	return img
}

// plant copies patch into img at (x, y), each pixel as a*v+b plus uniform
// noise of ±noise levels.
func plant(img, patch *image.Gray, x, y int, a, b, noise float64, rng *rand.Rand) {
	pb := patch.Bounds()
	for j := range pb.Dy() {
		for i := range pb.Dx() {
			v := a*float64(patch.Pix[j*patch.Stride+i]) + b
			if noise > 0 {
				v += noise * (rng.Float64()*2 - 1)
			}
			img.SetGray(x+i, y+j, color.Gray{uint8(max(0, min(255, math.Round(v))))})
		}
	}
}

// grayOf turns a plane back into an image.
func grayOf(p Plane) *image.Gray {
	img := image.NewGray(image.Rect(0, 0, p.W, p.H))
	for i, v := range p.Pix {
		img.Pix[i] = uint8(max(0, min(255, math.Round(float64(v)))))
	}
	return img
}

// box is the box of a w×h object at (x, y).
func box(x, y int, w, h float64) project.Box {
	return project.Box{X0: float64(x), Y0: float64(y), X1: float64(x) + w, Y1: float64(y) + h}
}

// The base scene: a 400×300 texture (seed 1) with a 24×20 patch cut from
// another texture (seed 2) planted three times: exactly at (30,40), with
// ±6 levels of noise at (200,60), and at 0.7·v+50 (darker, less contrast)
// at (310,220). The first copy is the exemplar.
var planted = [][2]int{{30, 40}, {200, 60}, {310, 220}}

func baseScene() (*image.Gray, *image.Gray) {
	img := texture(400, 300, 1)
	patch := texture(24, 20, 2)
	rng := rand.New(rand.NewPCG(3, 3))
	plant(img, patch, 30, 40, 1, 0, 0, rng)
	plant(img, patch, 200, 60, 1, 0, 6, rng)
	plant(img, patch, 310, 220, 0.7, 50, 0, rng)
	return img, patch
}

// run searches with the automatic level, a forced coarse level and
// exhaustively, checks each finds exactly want (best first, corners within
// tol) and that the coarse-to-fine peaks equal the exhaustive ones.
func run(t *testing.T, img image.Image, exemplars []project.Box, opt Options, want []project.Box, tol float64) []Match {
	t.Helper()
	ctx := context.Background()
	ex, err := Exhaustive(ctx, img, exemplars, opt)
	if err != nil {
		t.Fatal(err)
	}
	auto, err := Search(ctx, img, exemplars, opt)
	if err != nil {
		t.Fatal(err)
	}
	forced, err := searchImage(ctx, img, exemplars, opt, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		ms   []Match
	}{{"Exhaustive", ex}, {"Search", auto}, {"Search at level 1", forced}} {
		checkFound(t, c.name, c.ms, want, tol)
		samePeaks(t, c.name, c.ms, ex)
	}
	return ex
}

func checkFound(t *testing.T, name string, ms []Match, want []project.Box, tol float64) {
	t.Helper()
	if len(ms) != len(want) {
		t.Errorf("%s: %d matches %v, want %d at %v", name, len(ms), ms, len(want), want)
		return
	}
	used := make([]bool, len(want))
	for i, m := range ms {
		if i > 0 && m.Score > ms[i-1].Score {
			t.Errorf("%s: match %d scores %g above its predecessor %g", name, i, m.Score, ms[i-1].Score)
		}
		ok := false
		for j, w := range want {
			if !used[j] && near(m.Box, w, tol) {
				used[j], ok = true, true
				break
			}
		}
		if !ok {
			t.Errorf("%s: match %v (score %.3f) is none of %v", name, m.Box, m.Score, want)
		}
	}
}

func near(a, b project.Box, tol float64) bool {
	return math.Abs(a.X0-b.X0) <= tol && math.Abs(a.Y0-b.Y0) <= tol && math.Abs(a.X1-b.X1) <= tol && math.Abs(a.Y1-b.Y1) <= tol
}

// samePeaks: same positions within a pixel, scores within 1e-3.
func samePeaks(t *testing.T, name string, got, want []Match) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d peaks, Exhaustive %d", name, len(got), len(want))
		return
	}
	for i := range got {
		if !near(got[i].Box, want[i].Box, 1) || math.Abs(got[i].Score-want[i].Score) > 1e-3 {
			t.Errorf("%s: peak %d %v %.5f, Exhaustive %v %.5f", name, i, got[i].Box, got[i].Score, want[i].Box, want[i].Score)
		}
	}
}

func TestSearchPlanted(t *testing.T) {
	img, _ := baseScene()
	ex := []project.Box{box(30, 40, 24, 20)}
	ms := run(t, img, ex, Options{}, []project.Box{box(200, 60, 24, 20), box(310, 220, 24, 20)}, 1)
	if len(ms) == 2 {
		// The copy without noise, only a linear change, correlates perfectly.
		if ms[0].Box != box(310, 220, 24, 20) || ms[0].Score < 0.999 {
			t.Errorf("best match %v %.4f, want the brightness-changed copy at (310,220) with 1", ms[0].Box, ms[0].Score)
		}
		if ms[0].Scale != 1 || ms[0].Rotation != 0 || ms[0].Exemplar != 0 {
			t.Errorf("best match %+v, want scale 1, rotation 0, exemplar 0", ms[0])
		}
	}
}

// A larger patch (48×40, seed 4) at the same three places lets the
// automatic level go coarse (its shortest template side, 32, halves to 16).
func TestSearchCoarseLevel(t *testing.T) {
	img := texture(400, 300, 1)
	patch := texture(48, 40, 4)
	rng := rand.New(rand.NewPCG(5, 5))
	plant(img, patch, 30, 40, 1, 0, 0, rng)
	plant(img, patch, 200, 60, 1, 0, 6, rng)
	plant(img, patch, 310, 220-20, 0.7, 50, 0, rng)
	opt, _ := Options{}.withDefaults()
	set, err := newTemplateSet(context.Background(), Planes(img, FeatureGray), []project.Box{box(30, 40, 48, 40)}, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	if l := set.coarseLevel(400, 300); l != 1 {
		t.Fatalf("coarse level %d, want 1", l)
	}
	run(t, img, []project.Box{box(30, 40, 48, 40)}, Options{}, []project.Box{box(200, 60, 48, 40), box(310, 200, 48, 40)}, 1)
}

// The patch resized by 1.2 (to 29×24) planted at (200,60) beside the
// exemplar copy at (30,40); scales 1 and 1.2.
func TestSearchScaled(t *testing.T) {
	img := texture(400, 300, 1)
	patch := texture(24, 20, 2)
	rng := rand.New(rand.NewPCG(3, 3))
	plant(img, patch, 30, 40, 1, 0, 0, rng)
	big := grayOf(Resize(Planes(patch, FeatureGray)[0], 29, 24))
	plant(img, big, 200, 60, 1, 0, 0, rng)
	scales, err := ParseScales("1:1.2:2")
	if err != nil {
		t.Fatal(err)
	}
	ms := run(t, img, []project.Box{box(30, 40, 24, 20)}, Options{Scales: scales}, []project.Box{box(200, 60, 24*1.2, 20*1.2)}, 1.2)
	if len(ms) == 1 && ms[0].Scale != 1.2 {
		t.Errorf("scale %g, want 1.2", ms[0].Scale)
	}
}

// The patch turned 90° clockwise (20×24) planted at (200,60): found with
// Rotations, not without.
func TestSearchRotated(t *testing.T) {
	img := texture(400, 300, 1)
	patch := texture(24, 20, 2)
	rng := rand.New(rand.NewPCG(3, 3))
	plant(img, patch, 30, 40, 1, 0, 0, rng)
	plant(img, grayOf(Rotate90(Planes(patch, FeatureGray)[0], 1)), 200, 60, 1, 0, 0, rng)
	ex := []project.Box{box(30, 40, 24, 20)}
	ms := run(t, img, ex, Options{Rotations: true}, []project.Box{box(200, 60, 20, 24)}, 1)
	if len(ms) == 1 && ms[0].Rotation != 90 {
		t.Errorf("rotation %d, want 90", ms[0].Rotation)
	}
	run(t, img, ex, Options{}, nil, 1)
}

// The right half of the base scene below y=150 flattened to level 128
// (the copy at (310,220) goes with it): no NaN, no matches there.
func TestSearchFlatRegion(t *testing.T) {
	img, _ := baseScene()
	for y := 150; y < 300; y++ {
		for x := 200; x < 400; x++ {
			img.Pix[y*img.Stride+x] = 128
		}
	}
	ex := []project.Box{box(30, 40, 24, 20)}
	run(t, img, ex, Options{}, []project.Box{box(200, 60, 24, 20)}, 1)
	opt, _ := Options{}.withDefaults()
	set, err := newTemplateSet(context.Background(), Planes(img, FeatureGray), ex, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	flat := Crop(Planes(img, FeatureGray)[0], image.Rect(200, 150, 400, 300))
	for _, tp := range set.templates {
		m, err := tp.score(context.Background(), []Plane{flat}, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, v := range m.Pix {
			if v != 0 {
				t.Fatalf("scale %g: %v on a flat region, want 0", tp.scale, v)
			}
		}
	}
}

// Four copies of the patch, each with its own ±10 levels of noise, at
// (30,40), (120,40), (200,160) and (310,220); the first two are exemplars.
func TestSearchTwoExemplarsVote(t *testing.T) {
	img := texture(400, 300, 1)
	patch := texture(24, 20, 2)
	rng := rand.New(rand.NewPCG(6, 6))
	at := [][2]int{{30, 40}, {120, 40}, {200, 160}, {310, 220}}
	for _, p := range at {
		plant(img, patch, p[0], p[1], 1, 0, 10, rng)
	}
	ex := []project.Box{box(30, 40, 24, 20), box(120, 40, 24, 20)}
	want := []project.Box{box(200, 160, 24, 20), box(310, 220, 24, 20)}
	max := run(t, img, ex, Options{Vote: "max"}, want, 1)
	mean := run(t, img, ex, Options{Vote: "mean"}, want, 1)
	// The mean of two noisy exemplars is closer to the clean patch than
	// either alone, and never above the better one.
	if len(max) == 2 && len(mean) == 2 {
		for i := range mean {
			if mean[i].Score > max[i].Score+1e-6 {
				t.Errorf("mean vote %g above max vote %g", mean[i].Score, max[i].Score)
			}
		}
	}
	// Same size: one template per scale; different sizes fall back to max.
	opt, _ := Options{Vote: "mean"}.withDefaults()
	set, err := newTemplateSet(context.Background(), Planes(img, FeatureGray), ex, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	if n := len(set.templates); n != len(opt.Scales) {
		t.Errorf("mean vote, same size: %d templates, want %d", n, len(opt.Scales))
	}
	opt.Rotations = true
	set, err = newTemplateSet(context.Background(), Planes(img, FeatureGray), []project.Box{box(30, 40, 24, 20), box(120, 40, 30, 26)}, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	if n := len(set.templates); n != 2*4*len(opt.Scales) {
		t.Errorf("mean vote, two sizes: %d templates, want %d", n, 2*4*len(opt.Scales))
	}
}

func TestSearchCancelled(t *testing.T) {
	img, _ := baseScene()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Search(ctx, img, []project.Box{box(30, 40, 24, 20)}, Options{}); !errors.Is(err, context.Canceled) {
		t.Errorf("err %v, want context.Canceled", err)
	}
}

func TestSearchBadOptions(t *testing.T) {
	img, _ := baseScene()
	ex := []project.Box{box(30, 40, 24, 20)}
	for _, o := range []Options{{Vote: "median"}, {Threshold: 1.5}, {Scales: []float64{}}, {Scales: []float64{-1}}, {NMS: 2}} {
		if _, err := Search(context.Background(), img, ex, o); err == nil {
			t.Errorf("%+v: no error", o)
		}
	}
	for _, b := range [][]project.Box{nil, {box(398, 298, 24, 20)}, {{X0: 5, Y0: 5, X1: 2, Y1: 9}}} {
		if _, err := Search(context.Background(), img, b, Options{}); err == nil {
			t.Errorf("exemplars %v: no error", b)
		}
	}
}

func TestSearchParseScales(t *testing.T) {
	got, err := ParseScales("0.8:1.25:5")
	if err != nil {
		t.Fatal(err)
	}
	// Geometric: a constant ratio (1.25/0.8)^(1/4) = 1.25^(1/2) ≈ 1.1180 (arithmetic).
	want := []float64{0.8, 0.8 * math.Sqrt(1.25), 1, math.Sqrt(1.25), 1.25}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-12 {
			t.Fatalf("ParseScales = %v, want %v", got, want)
		}
	}
	if d := DefaultScales(); !slices.Equal(d, got) {
		t.Errorf("DefaultScales = %v, want %v", d, got)
	}
	if got, err := ParseScales("0.9, 1 ,1.1"); err != nil || !slices.Equal(got, []float64{0.9, 1, 1.1}) {
		t.Errorf("list: %v %v", got, err)
	}
	for _, s := range []string{"", "a:1:3", "1:0.5:3", "0.8:1.2", "0.8:1.2:0", "0.8:1.2:1", "1,-2", "1,,2"} {
		if _, err := ParseScales(s); err == nil {
			t.Errorf("ParseScales(%q): no error", s)
		}
	}
}

// matcherScene: image 1 is the base scene (exemplar at (30,40)); image 2 a
// texture of seed 7 with the patch at (50,50), (150,200) and (300,100).
func matcherScene() (*Matcher, []project.Image) {
	img1, patch := baseScene()
	img2 := texture(400, 300, 7)
	rng := rand.New(rand.NewPCG(8, 8))
	for _, p := range [][2]int{{50, 50}, {150, 200}, {300, 100}} {
		plant(img2, patch, p[0], p[1], 1, 0, 4, rng)
	}
	m := &Matcher{
		ClassID:         9,
		Exemplars:       []project.Box{box(30, 40, 24, 20)},
		ExemplarImage:   img1,
		ExemplarImageID: 1,
		Load: func(ctx context.Context, im project.Image) (image.Image, error) {
			if im.ID != 2 {
				return nil, errors.New("no such image")
			}
			return img2, nil
		},
		Existing: func(id int64) ([]project.Box, error) {
			if id == 2 {
				return []project.Box{box(151, 201, 24, 20)}, nil // already labelled, a pixel off
			}
			return nil, nil
		},
	}
	return m, []project.Image{{ID: 1, Path: "one.png"}, {ID: 2, Path: "two.png"}}
}

func TestMatcherSuggest(t *testing.T) {
	m, images := matcherScene()
	if m.Name() != "exemplar" {
		t.Errorf("Name = %q", m.Name())
	}
	var calls [][2]int
	ps, err := m.Suggest(context.Background(), images, []project.Class{{ID: 3, Name: "other"}, {ID: 9, Name: "crate"}},
		func(done, total int) { calls = append(calls, [2]int{done, total}) })
	if err != nil {
		t.Fatal(err)
	}
	want := map[int64][]project.Box{
		1: {box(200, 60, 24, 20), box(310, 220, 24, 20)}, // not the exemplar itself
		2: {box(50, 50, 24, 20), box(300, 100, 24, 20)},  // not the labelled copy
	}
	got := map[int64][]project.Box{}
	for _, p := range ps {
		if p.ClassID != 9 || p.ClassName != "crate" || !(p.Score >= 0.6 && p.Score <= 1+1e-6) || p.Where == "" {
			t.Errorf("proposal %+v", p)
		}
		got[p.ImageID] = append(got[p.ImageID], p.Box)
	}
	for id, w := range want {
		if len(got[id]) != len(w) {
			t.Errorf("image %d: %v, want %v", id, got[id], w)
			continue
		}
		for _, g := range got[id] {
			if !slices.ContainsFunc(w, func(b project.Box) bool { return near(g, b, 1) }) {
				t.Errorf("image %d: %v is none of %v", id, g, w)
			}
		}
	}
	if !slices.Equal(calls, [][2]int{{1, 2}, {2, 2}}) {
		t.Errorf("progress %v, want [[1 2] [2 2]]", calls)
	}
}

func TestMatcherCancelled(t *testing.T) {
	m, images := matcherScene()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := m.Suggest(ctx, images, nil, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled first: err %v", err)
	}
	// Cancelled while the second image loads.
	ctx, cancel = context.WithCancel(context.Background())
	load := m.Load
	m.Load = func(c context.Context, im project.Image) (image.Image, error) {
		cancel()
		return load(c, im)
	}
	var done int
	if _, err := m.Suggest(ctx, images, nil, func(d, _ int) { done = d }); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled on the way: err %v", err)
	}
	if done != 1 {
		t.Errorf("progress reached %d, want 1", done)
	}
}

func TestMatcherErrors(t *testing.T) {
	m, images := matcherScene()
	images = append(images, project.Image{ID: 5, Path: "gone.png"})
	if _, err := m.Suggest(context.Background(), images, nil, nil); err == nil || !strings.Contains(err.Error(), "gone.png") {
		t.Errorf("unloadable image: err %v, want one naming gone.png", err)
	}
	m.ClassID = 0
	if _, err := m.Suggest(context.Background(), images[:1], nil, nil); err == nil {
		t.Error("no class: no error")
	}
}

// A failed read of the labels already there stops the search with an error
// that names the image, instead of proposing labelled places again.
func TestMatcherSuggestStopsWhenExistingFails(t *testing.T) {
	m, images := matcherScene()
	m.Existing = func(id int64) ([]project.Box, error) { return nil, errors.New("disk I/O error") }
	_, err := m.Suggest(context.Background(), images, []project.Class{{ID: 9, Name: "crate"}}, nil)
	if err == nil || !strings.Contains(err.Error(), "disk I/O error") || !strings.Contains(err.Error(), "reading the labels on image") {
		t.Errorf("error %v", err)
	}
}

// Search cuts each image's matches to MaxResults after leaving out the
// labels already there, and says how many there were before the cut, so
// that a caller can state the cut: image 1 holds two copies besides the
// exemplar, image 2 three, one of them labelled already (matcherScene).
func TestMatcherSearchStatesTheCut(t *testing.T) {
	m, images := matcherScene()
	m.Options.MaxResults = 1
	res, err := m.Search(context.Background(), images, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	per := map[int64]int{}
	for _, p := range res.Proposals {
		per[p.ImageID]++
	}
	if per[1] != 1 || per[2] != 1 || res.MaxResults != 1 {
		t.Errorf("kept %v per image with a cut of %d, want one on each", per, res.MaxResults)
	}
	for id, want := range map[int64]int{1: 2, 2: 2} {
		sc := res.Scores[id]
		if len(sc) != want || !slices.IsSortedFunc(sc, func(a, b float64) int { return cmp.Compare(b, a) }) {
			t.Errorf("image %d: scores %v, want %d best first", id, sc, want)
		}
	}
	if n := res.Found(DefaultThreshold); n != 4 {
		t.Errorf("Found(%.2f) = %d, want 4", DefaultThreshold, n)
	}
	if n := res.Found(1.01); n != 0 {
		t.Errorf("Found above 1 = %d", n)
	}
}
