package eval

import (
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// benchScene is an invented scene of the stated size (fixed seed): half the
// predictions jitter around a truth of the same image, the rest are random;
// one truth in 50 is a crowd.
func benchScene(images, truthsN, predsN, classes int) ([]Truth, []Prediction) {
	return scene(1, images, truthsN, predsN, classes, 50)
}

// scene builds benchScene's kind of workload from a seed, with one truth in
// crowdEvery marked Crowd.
func scene(seed uint64, images, truthsN, predsN, classes, crowdEvery int) ([]Truth, []Prediction) {
	r := rand.New(rand.NewPCG(seed, 2))
	box := func() (x, y, w, h float64) {
		return r.Float64() * 600, r.Float64() * 400, 8 + r.Float64()*150, 8 + r.Float64()*150
	}
	truths := make([]Truth, truthsN)
	for i := range truths {
		x, y, w, h := box()
		truths[i] = Truth{ImageID: int64(i % images), ClassID: int64(r.IntN(classes)), Box: bx(x, y, x+w, y+h), Crowd: r.IntN(crowdEvery) == 0, Ref: int64(i)}
	}
	preds := make([]Prediction, predsN)
	for i := range preds {
		p := Prediction{Score: r.Float64(), Ref: int64(i)}
		if i%2 == 0 {
			t := truths[r.IntN(truthsN)]
			j := func() float64 { return (r.Float64() - 0.5) * 0.3 * t.Box.Width() }
			p.ImageID, p.ClassID = t.ImageID, t.ClassID
			p.Box = bx(t.Box.X0+j(), t.Box.Y0+j(), t.Box.X1+j(), t.Box.Y1+j())
			if p.Box.X1 <= p.Box.X0 || p.Box.Y1 <= p.Box.Y0 {
				p.Box = t.Box
			}
		} else {
			x, y, w, h := box()
			p.ImageID, p.ClassID, p.Box = int64(r.IntN(images)), int64(r.IntN(classes)), bx(x, y, x+w, y+h)
		}
		preds[i] = p
	}
	return truths, preds
}

// BenchmarkEvaluateCOCO: 5,000 images, 40,000 truths, 200,000 predictions
// over 10 classes, COCO AP@[.50:.95] with 101-point interpolation: the
// quantity testdata/coco_reference.py --runs computes (area range all,
// maxDets 100, the 10 IoU thresholds), to the same value
// (TestCOCOBenchmarkAgainstReference).
func BenchmarkEvaluateCOCO(b *testing.B) {
	truths, preds := benchScene(5000, 40000, 200000, 10)
	opt := Options{Protocol: COCO, Interpolation: Point101}
	if dir := os.Getenv("BENCH_DATA"); dir != "" {
		// The reference side (testdata/coco_reference.py) reads the same
		// workload.
		if err := writeCOCOWorkload(dir, truths, preds); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Evaluate(truths, preds, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// writeCOCOWorkload writes truths and predictions as dir/coco_workload.json
// for testdata/coco_reference.py: {"truths": [[image, class, x0, y0, x1, y1,
// crowd], ...], "predictions": [[image, class, x0, y0, x1, y1, score], ...]}.
// encoding/json writes the shortest decimal that reads back as the same
// float64, so both sides see identical numbers.
func writeCOCOWorkload(dir string, truths []Truth, preds []Prediction) error {
	w := struct {
		Truths      [][7]any `json:"truths"`
		Predictions [][7]any `json:"predictions"`
	}{make([][7]any, len(truths)), make([][7]any, len(preds))}
	for i, t := range truths {
		crowd := 0
		if t.Crowd {
			crowd = 1
		}
		if t.Difficult {
			return fmt.Errorf("truth %d: the reference has no difficult flag", i)
		}
		w.Truths[i] = [7]any{t.ImageID, t.ClassID, t.Box.X0, t.Box.Y0, t.Box.X1, t.Box.Y1, crowd}
	}
	for i, p := range preds {
		w.Predictions[i] = [7]any{p.ImageID, p.ClassID, p.Box.X0, p.Box.Y0, p.Box.X1, p.Box.Y1, p.Score}
	}
	raw, err := json.Marshal(w)
	if err != nil {
		return fmt.Errorf("encoding the COCO workload: %w", err)
	}
	path := filepath.Join(dir, "coco_workload.json")
	if err := os.WriteFile(path, raw, 0o644); err != nil {
		return fmt.Errorf("writing the COCO workload: %w", err)
	}
	return nil
}
