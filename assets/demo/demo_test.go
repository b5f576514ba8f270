package demo

import (
	"cmp"
	"context"
	"crypto/sha256"
	"errors"
	"image/jpeg"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"boxwright/project"
)

// The scenario is invented, so these tests check the properties the brief
// asks of it, not values from any outside source.

func pixelHash(t *testing.T, s *Scenario, i int) [32]byte {
	t.Helper()
	img := s.Render(i)
	if img == nil {
		t.Fatalf("Render(%d) = nil", i)
	}
	return sha256.Sum256(img.Pix)
}

func TestSameSeedSameScenario(t *testing.T) {
	a, b := Generate(Config{Seed: 7}), Generate(Config{Seed: 7})
	if !reflect.DeepEqual(a, b) {
		t.Fatal("two scenarios from the same seed differ")
	}
	if pixelHash(t, a, 3) != pixelHash(t, b, 3) {
		t.Fatal("frame 3 renders differently from the same seed")
	}
	if pixelHash(t, a, 3) != pixelHash(t, a, 3) {
		t.Fatal("rendering frame 3 twice gives different pixels")
	}
}

func TestDifferentSeedsDiffer(t *testing.T) {
	a, b := Generate(Config{Seed: 1}), Generate(Config{Seed: 2})
	if reflect.DeepEqual(a.Frames, b.Frames) {
		t.Error("seeds 1 and 2 give the same frames")
	}
	if reflect.DeepEqual(a.Suggestions, b.Suggestions) {
		t.Error("seeds 1 and 2 give the same suggestions")
	}
	if pixelHash(t, a, 0) == pixelHash(t, b, 0) {
		t.Error("seeds 1 and 2 render frame 0 alike")
	}
	// Frames of one scenario differ among themselves too.
	if reflect.DeepEqual(a.Frames[0].Truth, a.Frames[1].Truth) {
		t.Error("frames 0 and 1 have the same truth")
	}
}

func TestDefaults(t *testing.T) {
	s := Generate(Config{})
	if s.Config.Images != 40 || s.Config.Width != 1280 || s.Config.Height != 960 {
		t.Fatalf("defaults = %+v", s.Config)
	}
	if len(s.Frames) != 40 || len(s.Suggestions) != 40 || len(s.Annotators) != 2 {
		t.Fatalf("got %d frames, %d suggestion lists, %d annotators", len(s.Frames), len(s.Suggestions), len(s.Annotators))
	}
	if s.Source != SuggestionSource || s.Frames[6].Name != "harbour-007.jpg" {
		t.Errorf("source %q, frame 6 named %q", s.Source, s.Frames[6].Name)
	}
	if a, b := s.Annotators[Careful].Name, s.Annotators[Hasty].Name; a == "" || b == "" || a == b {
		t.Errorf("annotator names %q and %q", a, b)
	}
	img := s.Render(0)
	if img.Bounds().Dx() != 1280 || img.Bounds().Dy() != 960 {
		t.Errorf("rendered %v", img.Bounds())
	}
}

// checkBoxes reports any box that is invalid or leaves the image, and any
// unknown class or score out of range.
func checkBoxes(t *testing.T, s *Scenario) {
	t.Helper()
	w, h := float64(s.Config.Width), float64(s.Config.Height)
	check := func(what string, o Object) {
		b := o.Box
		if !b.Valid() || b.X0 < 0 || b.Y0 < 0 || b.X1 > w || b.Y1 > h {
			t.Errorf("%s: box %v invalid or outside %gx%g", what, b, w, h)
		}
		if !slices.Contains(Classes, o.Class) {
			t.Errorf("%s: unknown class %q", what, o.Class)
		}
	}
	for i, f := range s.Frames {
		for _, o := range f.Truth {
			check(f.Name+" truth", o)
		}
		for _, a := range s.Annotators {
			for _, o := range a.Labels[i] {
				check(f.Name+" "+a.Name, o)
			}
		}
		for _, o := range s.Suggestions[i] {
			check(f.Name+" suggestion", o.Object)
			if !(o.Score >= 0 && o.Score <= 1) {
				t.Errorf("%s: score %g", f.Name, o.Score)
			}
		}
	}
}

func TestBoxesValidAndInside(t *testing.T) {
	checkBoxes(t, Generate(Config{Seed: 3}))
}

func TestOddSizes(t *testing.T) {
	for _, cfg := range []Config{
		{Seed: 1, Images: 2, Width: 1, Height: 1},
		{Seed: 2, Images: 2, Width: 5, Height: 900},
		{Seed: 3, Images: 3, Width: 64, Height: 48},
		{Seed: -4, Images: 1, Width: -3, Height: 2000},
	} {
		s := Generate(cfg)
		checkBoxes(t, s)
		for i := range s.Frames {
			img := s.Render(i)
			if img.Bounds().Dx() != s.Config.Width || img.Bounds().Dy() != s.Config.Height {
				t.Errorf("%+v: frame %d rendered %v", cfg, i, img.Bounds())
			}
		}
	}
	s := Generate(Config{Images: 2, Width: 64, Height: 48})
	if s.Render(-1) != nil || s.Render(2) != nil || (&Scenario{}).Render(0) != nil || (*Scenario)(nil).Render(0) != nil {
		t.Error("Render of a frame that does not exist should be nil")
	}
}

func TestClassesPresent(t *testing.T) {
	s := Generate(Config{Seed: 11})
	count := map[string]int{}
	total := 0
	for _, f := range s.Frames {
		for _, o := range f.Truth {
			count[o.Class]++
			total++
		}
	}
	t.Logf("objects per class over %d frames: %v", len(s.Frames), count)
	for _, c := range Classes {
		if count[c] < 100 {
			t.Errorf("only %d %s objects in 40 frames", count[c], c)
		}
	}
	if perFrame := float64(total) / float64(len(s.Frames)); perFrame < 12 || perFrame > 60 {
		t.Errorf("%.1f objects per frame", perFrame)
	}
}

func TestSomeObjectsCutByTheEdge(t *testing.T) {
	s := Generate(Config{Seed: 5})
	w, h := float64(s.Config.Width), float64(s.Config.Height)
	cut, dropped := 0, 0
	for i, f := range s.Frames {
		for _, o := range f.Truth {
			if o.Box.X0 == 0 || o.Box.Y0 == 0 || o.Box.X1 == w || o.Box.Y1 == h {
				cut++
			}
		}
		if n := len(s.scenes[i].objects); n > len(f.Truth) {
			dropped += n - len(f.Truth)
		}
	}
	if cut < 20 {
		t.Errorf("only %d truth boxes touch the image edge", cut)
	}
	if dropped == 0 {
		t.Error("no sliver at the edge was left out of the truth")
	}
}

// match pairs each truth object with the unused label of highest IoU
// (at least 0.5), regardless of class; it returns, per truth object, the
// index of its label or -1.
func match(truth, labels []Object) []int {
	out := make([]int, len(truth))
	used := make([]bool, len(labels))
	for i, t := range truth {
		out[i] = -1
		best := 0.5
		for j, l := range labels {
			if iou := t.Box.IoU(l.Box); !used[j] && iou >= best {
				out[i], best = j, iou
			}
		}
		if out[i] >= 0 {
			used[out[i]] = true
		}
	}
	return out
}

func TestAnnotators(t *testing.T) {
	s := Generate(Config{Seed: 21})
	var (
		carefulIoU, hastyIoU       float64
		carefulN, hastyN           int
		kayakAsSail, sailAsKayak   int
		smallBuoys, smallBuoysSeen int
		otherMissed, others        int
		spurious                   int
	)
	for i, f := range s.Frames {
		careful := s.Annotators[Careful].Labels[i]
		if len(careful) != len(f.Truth) {
			t.Fatalf("%s: careful annotator has %d labels for %d objects", f.Name, len(careful), len(f.Truth))
		}
		for k, o := range f.Truth {
			c := careful[k]
			if c.Class != o.Class {
				t.Errorf("%s: careful annotator called a %s a %s", f.Name, o.Class, c.Class)
			}
			for _, d := range [4]float64{c.Box.X0 - o.Box.X0, c.Box.Y0 - o.Box.Y0, c.Box.X1 - o.Box.X1, c.Box.Y1 - o.Box.Y1} {
				if math.Abs(d) > 1.02 {
					t.Errorf("%s: careful edge %.2f px off (%v vs %v)", f.Name, d, c.Box, o.Box)
				}
			}
			carefulIoU += c.Box.IoU(o.Box)
			carefulN++
		}

		hasty := s.Annotators[Hasty].Labels[i]
		m := match(f.Truth, hasty)
		matched := 0
		for k, o := range f.Truth {
			small := o.Class == "buoy" && math.Max(o.Box.Width(), o.Box.Height()) < 14
			if small {
				smallBuoys++
			} else {
				others++
			}
			if m[k] < 0 {
				if !small {
					otherMissed++
				}
				continue
			}
			matched++
			l := hasty[m[k]]
			if small {
				smallBuoysSeen++
			}
			hastyIoU += l.Box.IoU(o.Box)
			hastyN++
			switch {
			case o.Class == "kayak" && l.Class == "sailboat":
				kayakAsSail++
			case o.Class == "sailboat" && l.Class == "kayak":
				sailAsKayak++
			}
		}
		spurious += len(hasty) - matched
	}
	carefulIoU /= float64(carefulN)
	hastyIoU /= float64(hastyN)
	t.Logf("mean IoU careful %.3f, hasty %.3f; kayak→sailboat %d, sailboat→kayak %d; small buoys %d/%d; others missed %d/%d; unmatched %d",
		carefulIoU, hastyIoU, kayakAsSail, sailAsKayak, smallBuoysSeen, smallBuoys, otherMissed, others, spurious)
	if carefulIoU <= 0.9 {
		t.Errorf("careful mean IoU %.3f, want > 0.9", carefulIoU)
	}
	if hastyIoU >= carefulIoU-0.03 {
		t.Errorf("hasty mean IoU %.3f is not clearly below careful %.3f", hastyIoU, carefulIoU)
	}
	if kayakAsSail == 0 || sailAsKayak == 0 {
		t.Errorf("confusions kayak→sailboat %d, sailboat→kayak %d; want some of each", kayakAsSail, sailAsKayak)
	}
	if r := float64(smallBuoysSeen) / float64(smallBuoys); smallBuoys < 30 || r < 0.45 || r > 0.75 {
		t.Errorf("hasty labelled %d of %d small buoys", smallBuoysSeen, smallBuoys)
	}
	if r := float64(otherMissed) / float64(others); r > 0.1 {
		t.Errorf("hasty missed %d of %d other objects", otherMissed, others)
	}
	if spurious < 3 || spurious > 30 {
		t.Errorf("%d hasty labels on nothing in 40 frames, want about 8 plus a few loose boxes", spurious)
	}
}

func TestSuggestions(t *testing.T) {
	s := Generate(Config{Seed: 31})
	var found, objects, alarms, lowAlarms int
	var trueScore, alarmScore float64
	for i, f := range s.Frames {
		sg := s.Suggestions[i]
		if !slices.IsSortedFunc(sg, func(a, b Scored) int { return cmp.Compare(b.Score, a.Score) }) {
			t.Errorf("%s: suggestions not best first", f.Name)
		}
		labels := make([]Object, len(sg))
		for k, o := range sg {
			labels[k] = o.Object
		}
		m := match(f.Truth, labels)
		hit := make([]bool, len(sg))
		for _, j := range m {
			objects++
			if j >= 0 {
				found++
				hit[j] = true
				trueScore += sg[j].Score
			}
		}
		for k, o := range sg {
			if !hit[k] {
				alarms++
				alarmScore += o.Score
				if o.Score < 0.6 {
					lowAlarms++
				}
			}
		}
	}
	recall := float64(found) / float64(objects)
	perImage := float64(alarms) / float64(len(s.Frames))
	trueScore /= float64(found)
	alarmScore /= float64(alarms)
	t.Logf("recall %.3f, %.2f false alarms per image, mean score true %.2f, false %.2f", recall, perImage, trueScore, alarmScore)
	if recall < 0.83 || recall > 0.95 {
		t.Errorf("suggestions find %.3f of the objects, want about 0.9", recall)
	}
	if perImage < 1.8 || perImage > 3.5 {
		t.Errorf("%.2f false alarms per image, want 2-3", perImage)
	}
	if float64(lowAlarms) < 0.85*float64(alarms) || alarmScore > 0.4 {
		t.Errorf("false alarms: %d of %d score under 0.6, mean %.2f", lowAlarms, alarms, alarmScore)
	}
	if trueScore < 0.6 || trueScore-alarmScore < 0.3 {
		t.Errorf("mean score of true detections %.2f against false alarms %.2f", trueScore, alarmScore)
	}
}

// Large objects get higher scores than small ones.
func TestScoresGrowWithSize(t *testing.T) {
	s := Generate(Config{Seed: 41})
	var small, large []float64
	for _, sg := range s.Suggestions {
		for _, o := range sg {
			if o.Score < 0.3 { // false alarms
				continue
			}
			if a := o.Box.Area(); a < 400 {
				small = append(small, o.Score)
			} else if a > 2500 {
				large = append(large, o.Score)
			}
		}
	}
	if mean(large)-mean(small) < 0.15 {
		t.Errorf("mean score large %.2f, small %.2f", mean(large), mean(small))
	}
}

func mean(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(max(1, len(v)))
}

func TestWriteImages(t *testing.T) {
	s := Generate(Config{Seed: 9, Images: 3, Width: 320, Height: 240})
	dir := filepath.Join(t.TempDir(), "demo")
	var calls []int
	paths, err := s.WriteImages(context.Background(), dir, func(done, total int) {
		if total != 3 {
			t.Errorf("progress total %d", total)
		}
		calls = append(calls, done)
	})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(calls, []int{1, 2, 3}) {
		t.Errorf("progress calls %v", calls)
	}
	if len(paths) != 3 {
		t.Fatalf("%d paths", len(paths))
	}
	for i, p := range paths {
		if filepath.Base(p) != s.Frames[i].Name || filepath.Dir(p) != dir {
			t.Errorf("path %d is %s", i, p)
		}
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		img, err := jpeg.Decode(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		if b := img.Bounds(); b.Dx() != 320 || b.Dy() != 240 {
			t.Errorf("%s is %v", p, b)
		}
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 3 {
		t.Errorf("%d files in %s, want 3", len(entries), dir)
	}
}

func TestWriteImagesCancelled(t *testing.T) {
	s := Generate(Config{Seed: 9, Images: 30, Width: 64, Height: 48})

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	dir := t.TempDir()
	if _, err := s.WriteImages(ctx, dir, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled before start: err = %v", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("%d files written after cancellation", len(entries))
	}

	ctx, cancel = context.WithCancel(context.Background())
	defer cancel()
	dir = t.TempDir()
	_, err := s.WriteImages(ctx, dir, func(done, total int) { cancel() })
	if !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled while writing: err = %v", err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) >= 30 {
		t.Errorf("all %d images written despite cancellation", len(entries))
	}
	for _, e := range entries {
		if filepath.Ext(e.Name()) != ".jpg" || e.Name()[0] == '.' {
			t.Errorf("left %s behind", e.Name())
		}
	}
}

func TestFitBox(t *testing.T) {
	for _, c := range [][4]float64{{-5, -5, -1, -1}, {10, 10, 10, 10}, {700, 3, 650, 2}, {0.001, 0, 0.002, 0.5}, {99.9, 0, 120, 50}} {
		b := project.Box{X0: c[0], Y0: c[1], X1: c[2], Y1: c[3]}
		got := fitBox(b, 100, 50)
		if !got.Valid() || got.X0 < 0 || got.Y0 < 0 || got.X1 > 100 || got.Y1 > 50 || got.Width() < 0.99 || got.Height() < 0.99 {
			t.Errorf("fitBox(%v) = %v", b, got)
		}
	}
}

func BenchmarkRender(b *testing.B) {
	s := Generate(Config{Seed: 1, Images: 1})
	for b.Loop() {
		s.Render(0)
	}
}

func BenchmarkGenerate(b *testing.B) {
	for b.Loop() {
		Generate(Config{Seed: 1})
	}
}

func TestWave(t *testing.T) {
	for x := -40.0; x < 40; x += 0.01 {
		if d := math.Abs(wave(x) - math.Sin(x)); d > 0.002 {
			t.Fatalf("wave(%g) = %g, sin = %g", x, wave(x), math.Sin(x))
		}
	}
}
