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

// demoLearning is the learning check of the detector: the demo (seed 1),
// a model trained on Ines's labels of the first 30 images (15 % of them
// held out for validation) for the given epochs or time, then AP50
// (VOC-style, all-point, project/eval as "boxwright eval" scores it) on the
// other 10 images against Ines's labels. With exemplars it also scores the
// exemplar matcher on the same 10 images, one exemplar per class (Ines's
// first box of the class in the training images, rotations on).
type demoLearning struct {
	Result    detector.Result
	Detector  eval.Result
	Exemplar  eval.Result
	TrainSize int
	Seconds   float64
	classes   []project.Class
}

func learnOnDemo(tb testing.TB, epochs int, budget time.Duration, exemplars bool) demoLearning {
	tb.Helper()
	dir := tb.TempDir()
	ctx := context.Background()
	if err := MakeDemo(ctx, dir, demo.Config{Seed: 1}, nil); err != nil {
		tb.Fatal(err)
	}
	st, err := backend.Open(filepath.Join(dir, DemoProjectName))
	if err != nil {
		tb.Fatal(err)
	}
	defer st.Close()
	cands, classes, err := TrainingCandidates(ctx, st, "Ines")
	if err != nil {
		tb.Fatal(err)
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
			tb.Fatal(err)
		}
		return r
	}
	ts, err := detector.Prepare(train, classes, detector.DataOptions{Validation: 0.15, Seed: 1})
	if err != nil {
		tb.Fatal(err)
	}
	out := demoLearning{TrainSize: len(ts.Train), classes: classes}
	start := time.Now()
	out.Result, err = detector.Train(ctx, ts, detector.TrainOptions{Epochs: epochs, Budget: budget, Seed: 1,
		Augment: detector.DefaultAugment, Load: load,
		Epoch: func(e project.Epoch) {
			tb.Logf("epoch %d loss %.4f val AP50 %.3f %.0f s", e.Epoch, e.Loss, e.ValAP50, e.Seconds)
		}})
	if err != nil {
		tb.Fatal(err)
	}
	out.Seconds = time.Since(start).Seconds()
	var preds []eval.Prediction
	for _, im := range testImages {
		img, err := load(ctx, im)
		if err != nil {
			tb.Fatal(err)
		}
		for _, d := range out.Result.Model.DetectImage(img, 100, 0.01, 0.5) {
			preds = append(preds, eval.Prediction{ImageID: im.ID, ClassID: ts.ClassIDs[d.Class], Box: d.Box, Score: d.Score})
		}
	}
	out.Detector = ap50(preds)
	out.log(tb, "detector", out.Detector)
	if exemplars {
		out.Exemplar = ap50(exemplarPredictions(ctx, tb, train, testImages, classes, load))
		out.log(tb, "exemplar matcher", out.Exemplar)
	}
	return out
}

func (d demoLearning) log(tb testing.TB, who string, r eval.Result) {
	tb.Helper()
	for _, c := range r.Classes {
		tb.Logf("%s: class %s AP50 %.3f", who, className(d.classes, c.ClassID), c.AP)
	}
	tb.Logf("%s: AP50 %.3f", who, r.MAP)
}

// BenchmarkDemoLearning is the full learning check, as a benchmark because
// it runs for minutes: BOXWRIGHT_TRAIN_MINUTES (default 5) of training. It
// reports both AP50s, the epochs and the training images per second.
// Run it with -v: the learning curve is in the log.
func BenchmarkDemoLearning(b *testing.B) {
	minutes := 5.0
	if v, err := strconv.ParseFloat(os.Getenv("BOXWRIGHT_TRAIN_MINUTES"), 64); err == nil && v > 0 {
		minutes = v
	}
	for b.Loop() {
		d := learnOnDemo(b, 0, time.Duration(minutes*float64(time.Minute)), true)
		b.ReportMetric(d.Detector.MAP, "AP50")
		b.ReportMetric(d.Exemplar.MAP, "exemplar_AP50")
		b.ReportMetric(float64(len(d.Result.Epochs)), "epochs")
		b.ReportMetric(float64(d.TrainSize*len(d.Result.Epochs))/d.Seconds, "images/s")
		b.ReportMetric(float64(d.Result.Model.InputSize), "input_px")
	}
}

// exemplarPredictions runs the exemplar matcher with one exemplar per
// class, the class's first box in the training candidates, over the test
// images.
func exemplarPredictions(ctx context.Context, tb testing.TB, train []detector.Candidate, test []project.Image, classes []project.Class,
	load func(context.Context, project.Image) (image.Image, error)) []eval.Prediction {
	tb.Helper()
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
			tb.Fatal(err)
		}
		m := &exemplar.Matcher{ClassID: cl.ID, Exemplars: []project.Box{box}, ExemplarImage: img, ExemplarImageID: from.Image.ID,
			Options: exemplar.Options{Rotations: true}, Load: load}
		ps, err := m.Suggest(ctx, test, classes, nil)
		if err != nil {
			tb.Fatal(err)
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
