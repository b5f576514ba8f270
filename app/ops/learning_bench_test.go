package ops

import (
	"context"
	"image"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/project/eval"
	"boxwright/suggest/detector"
	"boxwright/suggest/exemplar"
)

// BenchmarkDemoLearning is the learning check of the detector, as a
// benchmark because it runs for minutes: the demo (seed 1), a model trained
// on Ines's labels of the first 30 images within BOXWRIGHT_TRAIN_MINUTES
// (default 5), then AP50 (VOC-style, all-point, project/eval as "boxwright
// eval" scores it) on the other 10 against Ines's labels. Beside it, the
// exemplar matcher's AP50 on the same 10 images, with one exemplar per
// class (Ines's first box of the class in the training images, rotations
// on). It reports both AP50s, the epochs and the training images per
// second.
func BenchmarkDemoLearning(b *testing.B) {
	minutes := 5.0
	if v, err := strconv.ParseFloat(os.Getenv("BOXWRIGHT_TRAIN_MINUTES"), 64); err == nil && v > 0 {
		minutes = v
	}
	dir := b.TempDir()
	ctx := context.Background()
	if err := MakeDemo(ctx, dir, demo.Config{Seed: 1}, nil); err != nil {
		b.Fatal(err)
	}
	st, err := backend.Open(filepath.Join(dir, DemoProjectName))
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	cands, classes, err := TrainingCandidates(ctx, st, "Ines")
	if err != nil {
		b.Fatal(err)
	}
	train, test := cands[:30], cands[30:]
	load := func(ctx context.Context, im project.Image) (image.Image, error) { return DecodeProjectImage(st, im) }
	var truths []eval.Truth
	var testImages []project.Image
	for _, c := range test {
		testImages = append(testImages, c.Image)
		for _, l := range c.Labels {
			truths = append(truths, eval.Truth{ImageID: c.Image.ID, ClassID: l.ClassID, Box: l.Box})
		}
	}
	ap50 := func(preds []eval.Prediction) eval.Result {
		r, err := eval.Evaluate(truths, preds, eval.Options{Protocol: eval.VOC, IoU: 0.5, Interpolation: eval.AllPoint})
		if err != nil {
			b.Fatal(err)
		}
		return r
	}
	for b.Loop() {
		ts, err := detector.Prepare(train, classes, detector.DataOptions{Validation: 0.15, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		start := time.Now()
		res, err := detector.Train(ctx, ts, detector.TrainOptions{Budget: time.Duration(minutes * float64(time.Minute)), Seed: 1,
			Augment: detector.DefaultAugment, Load: load,
			Epoch: func(e project.Epoch) {
				b.Logf("epoch %d loss %.4f val AP50 %.3f %.0f s", e.Epoch, e.Loss, e.ValAP50, e.Seconds)
			}})
		if err != nil {
			b.Fatal(err)
		}
		secs := time.Since(start).Seconds()
		var preds []eval.Prediction
		for _, im := range testImages {
			img, err := load(ctx, im)
			if err != nil {
				b.Fatal(err)
			}
			for _, d := range res.Model.DetectImage(img, 100, 0.01, 0.5) {
				preds = append(preds, eval.Prediction{ImageID: im.ID, ClassID: ts.ClassIDs[d.Class], Box: d.Box, Score: d.Score})
			}
		}
		r := ap50(preds)
		for _, c := range r.Classes {
			b.Logf("detector: class %s AP50 %.3f", className(classes, c.ClassID), c.AP)
		}
		ex := exemplarAP50(ctx, b, train, testImages, classes, load)
		rx := ap50(ex)
		for _, c := range rx.Classes {
			b.Logf("exemplar matcher: class %s AP50 %.3f", className(classes, c.ClassID), c.AP)
		}
		b.ReportMetric(r.MAP, "AP50")
		b.ReportMetric(rx.MAP, "exemplar_AP50")
		b.ReportMetric(float64(len(res.Epochs)), "epochs")
		b.ReportMetric(float64(len(ts.Train)*len(res.Epochs))/secs, "images/s")
		b.ReportMetric(float64(res.Model.InputSize), "input_px")
	}
}

// exemplarAP50 runs the exemplar matcher with one exemplar per class, the
// class's first box in the training candidates, over the test images.
func exemplarAP50(ctx context.Context, b *testing.B, train []detector.Candidate, test []project.Image, classes []project.Class,
	load func(context.Context, project.Image) (image.Image, error)) []eval.Prediction {
	var preds []eval.Prediction
	for _, cl := range classes {
		var from *detector.Candidate
		var box project.Box
		for i, c := range train {
			for _, l := range c.Labels {
				if l.ClassID == cl.ID && from == nil {
					from, box = &train[i], l.Box
				}
			}
		}
		if from == nil {
			continue
		}
		img, err := load(ctx, from.Image)
		if err != nil {
			b.Fatal(err)
		}
		m := &exemplar.Matcher{ClassID: cl.ID, Exemplars: []project.Box{box}, ExemplarImage: img, ExemplarImageID: from.Image.ID,
			Options: exemplar.Options{Rotations: true}, Load: load}
		ps, err := m.Suggest(ctx, test, classes, nil)
		if err != nil {
			b.Fatal(err)
		}
		for _, p := range ps {
			preds = append(preds, eval.Prediction{ImageID: p.ImageID, ClassID: p.ClassID, Box: p.Box, Score: p.Score})
		}
	}
	return preds
}

func className(classes []project.Class, id int64) string {
	for _, c := range classes {
		if c.ID == id {
			return c.Name
		}
	}
	return strconv.FormatInt(id, 10)
}
