package exemplar

import (
	"context"
	"encoding/json"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
)

// fiveScales are the scales of the five-scale search and its benchmark.
var fiveScales = []float64{0.8, 0.9, 1, 1.1, 1.25}

// fiveScaleScene is invented test data for the multi-scale search: a w×h
// texture (seed 21) with a 64×64 patch (texture seed 22) as the exemplar at
// (w/20, h/20), true copies at each other scale of fiveScales (resized with
// Resize) and two more at scale 1 (brightness and contrast changed; light
// noise), and distractors that must not be found: another patch of the
// same texture (seed 23), the patch turned 180°, the patch at scale 1.6
// (outside the scales) and the patch under heavy noise. Positions are
// fractions of the image so that any size from about 1200×900 works. It
// returns the image, the exemplar box and the boxes of the true copies.
func fiveScaleScene(w, h int) (*image.Gray, project.Box, []project.Box) {
	img := texture(w, h, 21)
	patch := texture(64, 64, 22)
	pp := Planes(patch, FeatureGray)[0]
	rng := rand.New(rand.NewPCG(24, 24))
	at := func(fx, fy float64) (int, int) { return int(fx * float64(w)), int(fy * float64(h)) }
	ex := box(w/20, h/20, 64, 64)
	plant(img, patch, w/20, h/20, 1, 0, 0, rng)
	var want []project.Box
	put := func(s, fx, fy float64) {
		x, y := at(fx, fy)
		sz := templateSize(image.Pt(64, 64), s)
		plant(img, grayOf(Resize(pp, sz.X, sz.Y)), x, y, 1, 0, 0, rng)
		want = append(want, box(x, y, float64(sz.X), float64(sz.Y)))
	}
	put(0.8, 0.25, 0.12)
	put(0.9, 0.62, 0.30)
	put(1.1, 0.15, 0.60)
	put(1.25, 0.82, 0.72)
	x, y := at(0.50, 0.82)
	plant(img, patch, x, y, 0.7, 40, 0, rng) // contrast 0.7, brightness +40
	want = append(want, box(x, y, 64, 64))
	x, y = at(0.88, 0.10)
	plant(img, patch, x, y, 1, 0, 10, rng) // ±10 levels of noise
	want = append(want, box(x, y, 64, 64))

	x, y = at(0.40, 0.50)
	plant(img, texture(64, 64, 23), x, y, 1, 0, 0, rng)
	x, y = at(0.70, 0.50)
	plant(img, grayOf(Rotate90(pp, 2)), x, y, 1, 0, 0, rng)
	x, y = at(0.30, 0.85)
	big := templateSize(image.Pt(64, 64), 1.6)
	plant(img, grayOf(Resize(pp, big.X, big.Y)), x, y, 1, 0, 0, rng)
	x, y = at(0.05, 0.85)
	plant(img, patch, x, y, 1, 0, 80, rng)
	return img, ex, want
}

// fiveScaleOptions search the gray plane at fiveScales with threshold 0.8.
func fiveScaleOptions() Options {
	return Options{Feature: FeatureGray, Threshold: 0.8, Scales: fiveScales}
}

// opencvFiveScales runs OpenCV 4.6's matchTemplate TM_CCOEFF_NORMED (Debian
// 12 python3-opencv) of the exemplar crop, resized to each scale's size
// with cv2.resize (INTER_AREA to shrink, INTER_LINEAR to enlarge, the
// interpolations Resize implements), over the full-resolution plane, and
// writes each map as float32.
const opencvFiveScales = `
import json, sys
import cv2
import numpy as np
c = json.load(sys.stdin)
img = np.fromfile(c["img"], dtype="<f4").reshape(c["h"], c["w"])
x, y, s = c["ex"]
tpl = img[y:y + s, x:x + s].copy()
for k, (tw, th) in enumerate(c["sizes"]):
    interp = cv2.INTER_AREA if tw < s else cv2.INTER_LINEAR
    t = tpl if tw == s else cv2.resize(tpl, (tw, th), interpolation=interp)
    t.astype("<f4").tofile(c["tpls"][k])
    cv2.matchTemplate(img, t, cv2.TM_CCOEFF_NORMED).astype("<f4").tofile(c["maps"][k])
print(cv2.__version__)
`

// TestSearchFiveScalesEqualsExhaustive: on the five-scale scene the
// coarse-to-fine Search finds exactly the true copies, and its matches are
// the exhaustive search's, positions equal and scores within 1e-6; and
// they are also what the same peak selection (local maxima at or above the
// threshold, NMS, the exemplar dropped) gives on OpenCV 4.6's exhaustive
// TM_CCOEFF_NORMED maps at the five scales, scores within refTol (the
// tolerance of TestNCCAgainstOpenCV).
func TestSearchFiveScalesEqualsExhaustive(t *testing.T) {
	img, ex, want := fiveScaleScene(2000, 1500)
	opt := fiveScaleOptions()
	ctx := context.Background()
	full, err := Exhaustive(ctx, img, []project.Box{ex}, opt)
	if err != nil {
		t.Fatal(err)
	}
	fast, err := Search(ctx, img, []project.Box{ex}, opt)
	if err != nil {
		t.Fatal(err)
	}
	set, err := newTemplateSet(ctx, Planes(img, opt.Feature), []project.Box{ex}, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	if l := set.coarseLevel(2000, 1500); l != 2 {
		t.Fatalf("coarse level %d, want 2 (the 0.8 template, 51 px, quartered to 12)", l)
	}
	checkFound(t, "Exhaustive", full, want, 0)
	checkFound(t, "Search", fast, want, 0)
	sameMatches(t, "Search", fast, full, 1e-6)
	for _, m := range full {
		t.Logf("exhaustive: %v scale %g score %.5f", m.Box, m.Scale, m.Score)
	}

	checkOpenCV(t)
	py := "/usr/bin/python3"
	dir := t.TempDir()
	plane := Planes(img, opt.Feature)[0]
	job := map[string]any{"img": filepath.Join(dir, "img.f32"), "w": plane.W, "h": plane.H,
		"ex": []int{int(ex.X0), int(ex.Y0), 64}}
	if err := writeRaw(job["img"].(string), plane); err != nil {
		t.Fatal(err)
	}
	var sizes [][2]int
	var tpls, maps []string
	for k, s := range opt.Scales {
		sz := templateSize(image.Pt(64, 64), s)
		sizes = append(sizes, [2]int{sz.X, sz.Y})
		tpls = append(tpls, filepath.Join(dir, fmt.Sprintf("tpl%d.f32", k)))
		maps = append(maps, filepath.Join(dir, fmt.Sprintf("map%d.f32", k)))
	}
	job["sizes"], job["tpls"], job["maps"] = sizes, tpls, maps
	manifest, _ := json.Marshal(job)
	cmd := exec.Command(py, "-c", opencvFiveScales)
	cmd.Stdin = strings.NewReader(string(manifest))
	ver, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("running OpenCV: %v\n%s", err, ver)
	}
	t.Logf("OpenCV %s", strings.TrimSpace(string(ver)))

	// OpenCV's resized templates against ours: the same interpolation.
	for k, tp := range set.templates {
		got := tp.voters[0][0]
		ref := readRaw32(t, tpls[k], got.W*got.H)
		var worst float64
		for i, v := range got.Pix {
			worst = max(worst, math.Abs(float64(v)-float64(ref[i])))
		}
		if worst > 1e-3 {
			t.Errorf("scale %g: Resize differs from cv2.resize by up to %.3g levels", tp.scale, worst)
		}
		t.Logf("scale %g: Resize against cv2.resize: worst %.2g levels", tp.scale, worst)
	}
	var cands []Match
	for k, tp := range set.templates {
		m := Plane{W: plane.W - tp.w + 1, H: plane.H - tp.h + 1}
		m.Pix = readRaw32(t, maps[k], m.W*m.H)
		for _, p := range peaks(m, float32(opt.Threshold)) {
			cands = append(cands, tp.match(p.x, p.y, p.v))
		}
	}
	ref, err := set.suppress(ctx, cands, []project.Box{ex})
	if err != nil {
		t.Fatal(err)
	}
	checkFound(t, "OpenCV maps", ref, want, 0)
	sameMatches(t, "Search against OpenCV", fast, ref, refTol)
}

// sameMatches: the same matches in the same order, boxes and scales equal,
// scores within tol.
func sameMatches(t *testing.T, name string, got, want []Match, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d matches, want %d", name, len(got), len(want))
		return
	}
	var worst float64
	defer func() { t.Logf("%s: %d matches, worst score difference %.2g", name, len(got), worst) }()
	for i := range got {
		g, w := got[i], want[i]
		worst = max(worst, math.Abs(g.Score-w.Score))
		if g.Box != w.Box || g.Scale != w.Scale || math.Abs(g.Score-w.Score) > tol {
			t.Errorf("%s: match %d %v scale %g score %.6f, want %v scale %g score %.6f", name, i, g.Box, g.Scale, g.Score, w.Box, w.Scale, w.Score)
		}
	}
}

// BenchmarkSearch12MPFiveScales is the coarse-to-fine search of the
// five-scale scene at 4000×3000, gray, scales 0.8, 0.9, 1, 1.1, 1.25. With
// BENCH_DATA set it writes, for compare_ncc.py --mode five-scales,
// $BENCH_DATA/image.f32 (the gray plane, 4000×3000 float32),
// $BENCH_DATA/template.f32 (the 64×64 exemplar crop) and
// $BENCH_DATA/scales.json (the scales and each template's size).
func BenchmarkSearch12MPFiveScales(b *testing.B) {
	img, ex, want := fiveScaleScene(4000, 3000)
	opt := fiveScaleOptions()
	if dir := os.Getenv("BENCH_DATA"); dir != "" {
		plane := Planes(img, opt.Feature)[0]
		if err := writeRaw(filepath.Join(dir, "image.f32"), plane); err != nil {
			b.Fatal(err)
		}
		r := image.Rect(int(ex.X0), int(ex.Y0), int(ex.X1), int(ex.Y1))
		if err := writeRaw(filepath.Join(dir, "template.f32"), Crop(plane, r)); err != nil {
			b.Fatal(err)
		}
		var sizes [][2]int
		for _, s := range opt.Scales {
			sz := templateSize(r.Size(), s)
			sizes = append(sizes, [2]int{sz.X, sz.Y})
		}
		js, _ := json.Marshal(map[string]any{"width": plane.W, "height": plane.H,
			"template": []int{r.Dx(), r.Dy()}, "scales": opt.Scales, "sizes": sizes})
		if err := os.WriteFile(filepath.Join(dir, "scales.json"), js, 0o644); err != nil {
			b.Fatal(err)
		}
	}
	ctx := context.Background()
	var found int
	b.ResetTimer()
	for b.Loop() {
		ms, err := Search(ctx, img, []project.Box{ex}, opt)
		if err != nil {
			b.Fatal(err)
		}
		found = len(ms)
	}
	b.ReportMetric(float64(found), "matches")
	if found != len(want) {
		b.Errorf("%d matches, the scene has %d copies", found, len(want))
	}
}

// TestPlanesGrayImage: a gray image's one-plane path gives the planes of
// the general path (the same image as RGBA) sample for sample: BT.601's
// weights sum to 1 (ITU-R BT.601-7, Table 3), so gray stays gray.
func TestPlanesGrayImage(t *testing.T) {
	g := texture(37, 23, 5)
	rgba := image.NewRGBA(g.Bounds())
	for y := range 23 {
		for x := range 37 {
			rgba.Set(x, y, g.GrayAt(x, y))
		}
	}
	for _, f := range []Feature{FeatureGray, FeatureGradient, FeatureColor} {
		a, b := Planes(g, f), Planes(rgba, f)
		if len(a) != len(b) {
			t.Fatalf("%v: %d planes, RGBA %d", f, len(a), len(b))
		}
		for c := range a {
			for i := range a[c].Pix {
				if a[c].Pix[i] != b[c].Pix[i] {
					t.Fatalf("%v plane %d at %d: %v, RGBA %v", f, c, i, a[c].Pix[i], b[c].Pix[i])
				}
			}
		}
	}
}
