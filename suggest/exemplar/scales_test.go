package exemplar

import (
	"context"
	"errors"
	"image"
	"math/rand/v2"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"boxwright/project"
	"boxwright/suggest"
)

// The bounds below are arithmetic on the sizes: a w×h crop scaled by s
// becomes round(w·s)×round(h·s) pixels (Go's math.Round, half away from
// zero), which must be at least MinTemplateSide on a side and fit the image.

// A 60×40 exemplar in a 640×480 image: the shorter side reaches 8 px at
// 7.5/40 = 0.1875 (0.188 rounded up), the template fills the width at
// 640.5/60 = 10.675 (10.6 rounded down; 480.5/40 = 12.01 is looser).
func TestPlanScalesBounds(t *testing.T) {
	ex := []project.Box{box(100, 100, 60, 40)}
	img := image.Pt(640, 480)
	plan, err := PlanScales(Options{Scales: []float64{0.01, 0.1, 0.5, 1, 10, 11, 1000}}, ex, img, img)
	if err != nil {
		t.Fatal(err)
	}
	if plan.Min != 0.188 || plan.Max != 10.6 {
		t.Errorf("range %g to %g, want 0.188 to 10.6", plan.Min, plan.Max)
	}
	if want := []float64{0.5, 1, 10}; !slices.Equal(plan.Searched, want) {
		t.Errorf("searched %v, want %v", plan.Searched, want)
	}
	var dropped []float64
	for _, d := range plan.Dropped {
		dropped = append(dropped, d.Scale)
		small := strings.Contains(d.Why, "under 8 px")
		large := strings.Contains(d.Why, "larger than the 640×480 image")
		if small != (d.Scale < 0.188) || large != (d.Scale > 10.6) {
			t.Errorf("scale %g dropped because %q", d.Scale, d.Why)
		}
	}
	if want := []float64{0.01, 0.1, 11, 1000}; !slices.Equal(dropped, want) {
		t.Errorf("dropped %v, want %v", dropped, want)
	}
	sum := plan.Summary()
	for _, w := range []string{"searched 3 of 7 scales: 0.5, 1, 10", "0.01, 0.1 (template under 8 px on a side)", "11, 1000 (template larger than the 640×480 image)", "scales from 0.188 to 10.6"} {
		if !strings.Contains(sum, w) {
			t.Errorf("summary %q lacks %q", sum, w)
		}
	}
	// Both printed bounds are searched: the rounding is inward.
	edge, err := PlanScales(Options{Scales: []float64{plan.Min, plan.Max}}, ex, img, img)
	if err != nil || len(edge.Searched) != 2 {
		t.Errorf("the printed bounds: searched %v, %v", edge.Searched, err)
	}
	if all, _ := PlanScales(Options{}, ex, img, img); all.Summary() != "" || len(all.Searched) != 5 {
		t.Errorf("default scales: searched %v, summary %q", all.Searched, all.Summary())
	}
}

// Turned by 90°, a 60×20 template fits a 100×400 image up to
// min(100.5/20, 400.5/60) = 5.025 (5.02), unturned only to 100.5/60 = 1.675.
func TestPlanScalesRotations(t *testing.T) {
	ex := []project.Box{box(0, 0, 60, 20)}
	img := image.Pt(100, 400)
	plain, err := PlanScales(Options{Scales: []float64{1, 3}}, ex, img, img)
	if err != nil {
		t.Fatal(err)
	}
	turned, err := PlanScales(Options{Scales: []float64{1, 3}, Rotations: true}, ex, img, img)
	if err != nil {
		t.Fatal(err)
	}
	if plain.Max != 1.67 || turned.Max != 5.02 {
		t.Errorf("upper bounds %g and %g, want 1.67 and 5.02", plain.Max, turned.Max)
	}
	if !slices.Equal(plain.Searched, []float64{1}) || !slices.Equal(turned.Searched, []float64{1, 3}) {
		t.Errorf("searched %v without turns, %v with", plain.Searched, turned.Searched)
	}
}

// Scales that cannot make sense are refused with the range that can.
func TestPlanScalesRefused(t *testing.T) {
	ex := []project.Box{box(100, 100, 60, 40)}
	img := image.Pt(640, 480)
	for _, sc := range []string{"0.001:0.001:1", "0.01:0.1:3", "20,50"} {
		s, err := ParseScales(sc)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := PlanScales(Options{Scales: s}, ex, img, img); err == nil || !strings.Contains(err.Error(), "scales from 0.188 to 10.6") {
			t.Errorf("%s: err %v, want one giving the range", sc, err)
		}
	}
	// 4 px wide reaches 8 px at 1.875, where its 900 px height is 1688 px.
	if _, err := PlanScales(Options{Scales: []float64{1}}, []project.Box{box(0, 0, 4, 900)}, image.Pt(1280, 960), image.Pt(1280, 960)); err == nil || !strings.Contains(err.Error(), "no scale makes sense") {
		t.Errorf("4×900 in 1280×960: err %v", err)
	}
	// Steps a pixel apart add nothing: 60×40 at 1.00025 is still 60×40.
	s, _ := ParseScales("1:1.001:5")
	plan, err := PlanScales(Options{Scales: s}, ex, img, img)
	if err != nil || !slices.Equal(plan.Searched, []float64{1}) || len(plan.Dropped) != 4 || !strings.Contains(plan.Dropped[0].Why, "same template size") {
		t.Errorf("1:1.001:5: searched %v, dropped %v, %v", plan.Searched, plan.Dropped, err)
	}
	for _, sc := range []string{"nan:1:3", "1:inf:3", "0:1:3", "-1:1:3", "2:1:3", "1:2:101", "1:2:1000000", strings.Repeat("1,", 100) + "1"} {
		if _, err := ParseScales(sc); err == nil {
			t.Errorf("ParseScales(%.20q): no error", sc)
		}
	}
}

// The search itself keeps to the plan: issue 14 found 200 three-pixel
// "matches" at scale 0.001 (the template was forced up to 3×3 px) and
// templates far larger than the image built before being skipped.
func TestSearchKeepsToSensibleScales(t *testing.T) {
	img, _ := baseScene()
	ex := []project.Box{box(30, 40, 24, 20)}
	tiny, _ := ParseScales("0.001:0.001:1")
	if ms, err := Search(context.Background(), img, ex, Options{Scales: tiny}); err == nil {
		t.Errorf("scale 0.001: %d matches and no error", len(ms))
	}
	mixed, _ := ParseScales("0.01:1:3")
	ms, err := Search(context.Background(), img, ex, Options{Scales: mixed})
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range ms {
		if m.Box.Width() < MinTemplateSide || m.Box.Height() < MinTemplateSide || m.Scale != 1 {
			t.Errorf("match %+v: below %d px or not at scale 1", m, MinTemplateSide)
		}
	}
	checkFound(t, "0.01:1:3", ms, []project.Box{box(200, 60, 24, 20), box(310, 220, 24, 20)}, 1)
	opt, _ := Options{Scales: []float64{0.1, 1, 4, 20}, Rotations: true}.withDefaults()
	set, err := newTemplateSet(context.Background(), Planes(img, FeatureGray), ex, opt, img.Bounds().Size())
	if err != nil {
		t.Fatal(err)
	}
	for _, tp := range set.templates {
		if tp.scale != 1 && tp.scale != 4 || min(tp.w, tp.h) < MinTemplateSide || max(tp.w, tp.h) > 400 {
			t.Errorf("template %d×%d at scale %g built for a 400×300 image", tp.w, tp.h, tp.scale)
		}
	}
	if len(set.templates) != 8 {
		t.Errorf("%d templates, want 2 scales × 4 turns", len(set.templates))
	}
}

// countingCtx is a context that counts how often the work looks at it and
// reports itself cancelled from the (after+1)-th look on.
type countingCtx struct {
	context.Context
	looks atomic.Int64
	after int64
}

func newCountingCtx(after int64) *countingCtx {
	return &countingCtx{Context: context.Background(), after: after}
}

func (c *countingCtx) Err() error {
	if c.looks.Add(1) > c.after {
		return context.Canceled
	}
	return nil
}

// A long correlation looks at its context between output rows (direct
// sums) or inside each tile (FFT), so a cancel stops it within a row or a
// few FFT rows: here at least once per output row, and once cancelled it
// returns context.Canceled after only a few more looks (one per worker).
func TestNCCLooksAtTheContextOften(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 7))
	img := randomPlane(r, 400, 300)
	tpl := Crop(img, image.Rect(50, 50, 74, 70))
	rows := int64(300 - 20 + 1)
	for _, m := range []struct {
		name string
		m    nccMethod
		tile int
	}{{"direct", methodDirect, 0}, {"FFT", methodFFT, 64}} {
		ctx := newCountingCtx(1 << 60)
		if _, err := nccTiles(ctx, img, tpl, m.m, m.tile, m.tile); err != nil {
			t.Fatal(err)
		}
		all := ctx.looks.Load()
		if all < rows {
			t.Errorf("%s: looked at the context %d times for %d output rows", m.name, all, rows)
		}
		half := newCountingCtx(all / 2)
		if _, err := nccTiles(half, img, tpl, m.m, m.tile, m.tile); !errors.Is(err, context.Canceled) {
			t.Errorf("%s: cancelled half way: err %v", m.name, err)
		}
		if extra := half.looks.Load() - all/2; extra > int64(2*nccWorkers(1<<20)+2) {
			t.Errorf("%s: %d more looks after the cancel, want about one per worker", m.name, extra)
		}
	}
}

// Search and Matcher.Suggest pass the context down to the correlation: one
// scale, one template, and still a look per four rows of the map (the FFT
// path transforms four rows at a time). Before issue 14
// the context was looked at only between templates, so a cancel waited for
// a whole correlation (tens of seconds for large templates).
func TestSearchCancelledWhileCorrelating(t *testing.T) {
	img, _ := baseScene()
	ex := []project.Box{box(30, 40, 24, 20)}
	opt := Options{Scales: []float64{1}}
	ctx := newCountingCtx(1 << 60)
	if _, err := Exhaustive(ctx, img, ex, opt); err != nil {
		t.Fatal(err)
	}
	all := ctx.looks.Load()
	if rows := int64(300 - 20 + 1); all < rows/4 {
		t.Fatalf("Exhaustive looked at the context %d times for a map of %d rows", all, rows)
	}
	half := newCountingCtx(all / 2)
	if _, err := Exhaustive(half, img, ex, opt); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled half way: err %v", err)
	}
	if n := half.looks.Load(); n > all/2+int64(2*nccWorkers(1<<20)+4) {
		t.Errorf("%d looks after a cancel at look %d of %d: the search went on", n, all/2, all)
	}
	m, images := matcherScene()
	m.Options = opt
	ctx = newCountingCtx(1 << 60)
	if _, err := m.Suggest(ctx, images, nil, nil); err != nil {
		t.Fatal(err)
	}
	all = ctx.looks.Load()
	half = newCountingCtx(all / 2)
	if _, err := m.Suggest(half, images, nil, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("Matcher cancelled half way: err %v", err)
	}
}

// finish stops its greedy suppression once MaxResults matches are kept;
// what it keeps must be what suppress-everything-then-cut keeps
// (suggest.NMS, checked against torchvision in suggest/nms_reference_test.go),
// exemplars suppressing their neighbours as before.
func TestFinishEqualsFullNMS(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 9))
	for trial := range 20 {
		var ms []Match
		for range 300 {
			x, y := float64(r.IntN(200)), float64(r.IntN(200))
			ms = append(ms, Match{Box: box(int(x), int(y), 20, 16), Score: float64(r.IntN(50)) / 50})
		}
		exclude := []project.Box{box(50, 50, 20, 16), box(120, 30, 20, 16)}
		set := &templateSet{opt: Options{NMS: 0.3, MaxResults: 1 + trial*3}}
		got, err := set.finish(context.Background(), slices.Clone(ms), exclude)
		if err != nil {
			t.Fatal(err)
		}
		// The old way: order as finish does, suppress all, then cut.
		sorted := slices.Clone(ms)
		set.finish(context.Background(), sorted, nil) // sorts in place
		boxes := make([]project.Box, len(sorted))
		scores := make([]float64, len(sorted))
		for i, m := range sorted {
			boxes[i], scores[i] = m.Box, m.Score
		}
		var want []Match
		for _, i := range suggest.NMS(boxes, scores, 0.3) {
			if overlapsAny(sorted[i].Box, exclude, exemplarIoU) {
				continue
			}
			want = append(want, sorted[i])
			if len(want) == set.opt.MaxResults {
				break
			}
		}
		if !slices.Equal(got, want) {
			t.Fatalf("trial %d: finish kept %v, full NMS %v", trial, got, want)
		}
	}
}
