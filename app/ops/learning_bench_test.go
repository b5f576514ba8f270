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
)

// BenchmarkDemoLearning is the learning check of the detector, as a
// benchmark because it runs for minutes: the demo (seed 1), a model trained
// on Ines's labels of the first 30 images within BOXWRIGHT_TRAIN_MINUTES
// (default 5), then AP50 (VOC-style, all-point, project/eval as "boxwright
// eval" scores it) on the other 10 against Ines's labels. It reports the
// AP50, the epochs and the training images per second.
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
	for i := 0; i < b.N; i++ {
		ts, err := detector.Prepare(train, classes, detector.DataOptions{Validation: 0.15, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		load := func(ctx context.Context, im project.Image) (image.Image, error) { return DecodeProjectImage(st, im) }
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
		var truths []eval.Truth
		var preds []eval.Prediction
		for _, c := range test {
			for _, l := range c.Labels {
				truths = append(truths, eval.Truth{ImageID: c.Image.ID, ClassID: l.ClassID, Box: l.Box})
			}
			img, err := load(ctx, c.Image)
			if err != nil {
				b.Fatal(err)
			}
			for _, d := range res.Model.DetectImage(img, 100, 0.01, 0.5) {
				preds = append(preds, eval.Prediction{ImageID: c.Image.ID, ClassID: ts.ClassIDs[d.Class], Box: d.Box, Score: d.Score})
			}
		}
		r, err := eval.Evaluate(truths, preds, eval.Options{Protocol: eval.VOC, IoU: 0.5, Interpolation: eval.AllPoint})
		if err != nil {
			b.Fatal(err)
		}
		for _, c := range r.Classes {
			b.Logf("class %d AP50 %.3f", c.ClassID, c.AP)
		}
		b.ReportMetric(r.MAP, "AP50")
		b.ReportMetric(float64(len(res.Epochs)), "epochs")
		b.ReportMetric(float64(len(ts.Train)*len(res.Epochs))/secs, "images/s")
		b.ReportMetric(float64(res.Model.InputSize), "input_px")
	}
}
