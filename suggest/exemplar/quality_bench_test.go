package exemplar

import (
	"context"
	"fmt"
	"image"
	"strings"
	"testing"

	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/project/agree"
)

// BenchmarkExemplarQualityDemo reports recall and precision at IoU 0.5 per
// class on the demo harbour (seed 7, six 1280×960 frames): one exemplar
// per class, the first ground-truth box of that class in frame 0, matched
// over all frames with rotations on. On frame 0 the exemplar itself is
// neither proposed nor counted as ground truth. Proposals pair one-to-one
// with ground truth by agree.MatchBoxes. It measures, it asserts nothing.
func BenchmarkExemplarQualityDemo(b *testing.B) {
	sc := demo.Generate(demo.Config{Seed: 7, Images: 6, Width: 1280, Height: 960})
	frames := make([]image.Image, len(sc.Frames))
	images := make([]project.Image, len(sc.Frames))
	for i := range sc.Frames {
		frames[i] = sc.Render(i)
		images[i] = project.Image{ID: int64(i + 1), Path: sc.Frames[i].Name, Width: 1280, Height: 960}
	}
	classes := make([]project.Class, len(demo.Classes))
	for i, name := range demo.Classes {
		classes[i] = project.Class{ID: int64(i + 1), Name: name}
	}
	load := func(_ context.Context, im project.Image) (image.Image, error) { return frames[im.ID-1], nil }
	type row struct {
		class             string
		exemplars, truth  int
		proposals, found  int
		recall, precision float64
	}
	var rows []row
	for b.Loop() {
		rows = rows[:0]
		for ci, name := range demo.Classes {
			var ex project.Box
			ok := false
			for _, o := range sc.Frames[0].Truth {
				if o.Class == name {
					ex, ok = o.Box, true
					break
				}
			}
			if !ok {
				rows = append(rows, row{class: name})
				continue
			}
			m := &Matcher{ClassID: int64(ci + 1), Exemplars: []project.Box{ex}, ExemplarImage: frames[0],
				ExemplarImageID: 1, Options: Options{Rotations: true}, Load: load}
			ps, err := m.Suggest(context.Background(), images, classes, nil)
			if err != nil {
				b.Fatal(err)
			}
			r := row{class: name, exemplars: 1, proposals: len(ps)}
			for fi, f := range sc.Frames {
				var truth, pred []project.Box
				for _, o := range f.Truth {
					if o.Class == name && !(fi == 0 && o.Box == ex) {
						truth = append(truth, o.Box)
					}
				}
				for _, p := range ps {
					if p.ImageID == int64(fi+1) {
						pred = append(pred, p.Box)
					}
				}
				r.truth += len(truth)
				r.found += len(agree.MatchBoxes(truth, pred, nil, nil, 0.5, false).Pairs)
			}
			if r.truth > 0 {
				r.recall = float64(r.found) / float64(r.truth)
			}
			if r.proposals > 0 {
				r.precision = float64(r.found) / float64(r.proposals)
			}
			rows = append(rows, r)
		}
	}
	var t strings.Builder
	fmt.Fprintf(&t, "\n%-10s %9s %6s %9s %6s %7s %9s\n", "class", "exemplars", "truth", "proposals", "found", "recall", "precision")
	for _, r := range rows {
		fmt.Fprintf(&t, "%-10s %9d %6d %9d %6d %7.3f %9.3f\n", r.class, r.exemplars, r.truth, r.proposals, r.found, r.recall, r.precision)
		b.ReportMetric(r.recall, "recall-"+r.class)
		b.ReportMetric(r.precision, "precision-"+r.class)
	}
	b.Log(t.String())
}
