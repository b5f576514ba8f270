package exemplar

import (
	"context"
	"fmt"
	"image"
	_ "image/jpeg"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"

	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/project/eval"
)

// TestMeasureDefaults measures the exemplar search on the demo that
// `boxwright demo` writes (seed 1, 40 frames of 1280×960, saved as JPEG and
// decoded again, as the window searches them), to choose the defaults
// beside DefaultThreshold. For each class it takes exemplars from Ines's
// labels (the careful annotator): the first box of the class, at least
// 2·MinTemplateSide on each side, in each of the first
// BOXWRIGHT_MEASURE_EXEMPLARS frames that have one (default 3). Each
// exemplar is searched in every frame at the window's search floor and
// default scales, once per feature, with no labels in the way (as on images
// nobody has labelled yet); the threshold then only filters, as the
// window's slider does. Hits are matched against Ines's labels of the class
// (the exemplar itself left out) by the PASCAL VOC rule: hits in descending
// score order, each taking the label of highest IoU, a true positive when
// IoU ≥ 0.5 and the label is not taken yet (Everingham et al., "The PASCAL
// Visual Object Classes (VOC) Challenge", IJCV 88(2), 2010, section 4.2;
// project/eval's VOC protocol implements it). Counts are pooled over the
// exemplars of a class. It prints the table and asserts nothing; it runs
// only when BOXWRIGHT_MEASURE_EXEMPLAR is set (minutes on two cores);
// BOXWRIGHT_MEASURE_FRAMES=N searches only the first N frames:
//
//	BOXWRIGHT_MEASURE_EXEMPLAR=1 go test -run TestMeasureDefaults -v -timeout 60m ./suggest/exemplar/
func TestMeasureDefaults(t *testing.T) {
	if os.Getenv("BOXWRIGHT_MEASURE_EXEMPLAR") == "" {
		t.Skip("set BOXWRIGHT_MEASURE_EXEMPLAR=1 to measure the exemplar search on the demo")
	}
	perClass := 3
	if v := os.Getenv("BOXWRIGHT_MEASURE_EXEMPLARS"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 {
			t.Fatalf("BOXWRIGHT_MEASURE_EXEMPLARS=%q: want a whole number of at least 1", v)
		}
		perClass = n
	}
	ctx := context.Background()
	sc := demo.Generate(demo.Config{Seed: 1})
	if v := os.Getenv("BOXWRIGHT_MEASURE_FRAMES"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 || n > len(sc.Frames) {
			t.Fatalf("BOXWRIGHT_MEASURE_FRAMES=%q: want a whole number from 1 to %d", v, len(sc.Frames))
		}
		sc.Frames = sc.Frames[:n]
	}
	paths, err := sc.WriteImages(ctx, t.TempDir(), nil)
	if err != nil {
		t.Fatal(err)
	}
	frames := make([]image.Image, len(paths))
	images := make([]project.Image, len(paths))
	for i, p := range paths {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		frames[i], _, err = image.Decode(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		b := frames[i].Bounds()
		images[i] = project.Image{ID: int64(i + 1), Path: p, Width: b.Dx(), Height: b.Dy()}
	}
	classes := make([]project.Class, len(demo.Classes))
	for i, name := range demo.Classes {
		classes[i] = project.Class{ID: int64(i + 1), Name: name}
	}
	ines := sc.Annotators[demo.Careful].Labels[:len(frames)]
	load := func(_ context.Context, im project.Image) (image.Image, error) { return frames[im.ID-1], nil }
	features := []Feature{FeatureGray, FeatureGradient, FeatureColor}
	var thresholds []float64
	for k := 40; k <= 95; k += 5 {
		thresholds = append(thresholds, float64(k)/100)
	}
	type cell struct{ tp, hits, truth int }
	var out strings.Builder
	fmt.Fprintf(&out, "\n%-10s %-8s %4s %6s %6s %6s %7s %9s %7s\n", "class", "feature", "thr", "hits", "TP", "truth", "recall", "precision", "per-img")
	for ci, name := range demo.Classes {
		classID := int64(ci + 1)
		type ex struct {
			frame int
			box   project.Box
		}
		var exs []ex
		for fi := 0; fi < len(ines) && len(exs) < perClass; fi++ {
			for _, o := range ines[fi] {
				if o.Class == name && o.Box.Width() >= 2*MinTemplateSide && o.Box.Height() >= 2*MinTemplateSide {
					exs = append(exs, ex{fi, o.Box})
					break
				}
			}
		}
		for _, feat := range features {
			cells := make([]cell, len(thresholds))
			capped := 0
			t0 := time.Now()
			for _, e := range exs {
				m := &Matcher{ClassID: classID, Exemplars: []project.Box{e.box}, ExemplarImage: frames[e.frame],
					ExemplarImageID: int64(e.frame + 1), Options: Options{Threshold: 0.4, Scales: DefaultScales(), Feature: feat}, Load: load}
				res, err := m.Search(ctx, images, classes, nil)
				if err != nil {
					t.Fatal(err)
				}
				for _, sc := range res.Scores {
					if len(sc) > res.MaxResults {
						capped++
					}
				}
				var truths []eval.Truth
				for fi, ls := range ines {
					for _, o := range ls {
						if o.Class == name && !(fi == e.frame && o.Box == e.box) {
							truths = append(truths, eval.Truth{ImageID: int64(fi + 1), ClassID: classID, Box: o.Box})
						}
					}
				}
				preds := make([]eval.Prediction, len(res.Proposals))
				for i, p := range res.Proposals {
					preds[i] = eval.Prediction{ImageID: p.ImageID, ClassID: classID, Box: p.Box, Score: p.Score}
				}
				for ti, thr := range thresholds {
					r, err := eval.Evaluate(truths, preds, eval.Options{Protocol: eval.VOC, IoU: 0.5, ScoreThreshold: thr})
					if err != nil {
						t.Fatal(err)
					}
					c := &cells[ti]
					c.truth += len(truths)
					for _, p := range preds {
						if p.Score >= thr {
							c.hits++
						}
					}
					for _, cr := range r.Classes {
						if cr.ClassID == classID {
							c.tp += int(math.Round(cr.Recall * float64(cr.Truths)))
						}
					}
				}
			}
			t.Logf("%s %s: %d exemplars in %v, %d image searches hit the cap of %d", name, feat, len(exs), time.Since(t0).Round(time.Second), capped, DefaultMaxResults)
			for ti, thr := range thresholds {
				c := cells[ti]
				hits := c.hits
				var rec, prec float64
				if c.truth > 0 {
					rec = float64(c.tp) / float64(c.truth)
				}
				if hits > 0 {
					prec = float64(c.tp) / float64(hits)
				}
				fmt.Fprintf(&out, "%-10s %-8s %4.2f %6d %6d %6d %7.3f %9.3f %7.1f\n", name, feat, thr, hits, c.tp, c.truth, rec, prec,
					float64(hits)/float64(len(exs)*len(frames)))
			}
		}
	}
	t.Log(out.String())
}
