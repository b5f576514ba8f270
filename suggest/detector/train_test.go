package detector

import (
	"context"
	"errors"
	"image"
	"image/color"
	"math/rand/v2"
	"testing"

	"boxwright/project"
	"boxwright/suggest/detector/nn"
)

// squares draws an invented scene: grey water with red and blue squares
// (classes 0 and 1) of 10–16 px at random places.
func squares(seed uint64, n int) (image.Image, []project.Box, []int) {
	r := rand.New(rand.NewPCG(seed, 9))
	img := image.NewRGBA(image.Rect(0, 0, 128, 96))
	for i := range img.Pix {
		img.Pix[i] = uint8(100 + r.IntN(20))
	}
	var boxes []project.Box
	var classes []int
	for len(boxes) < n {
		side := 10 + r.IntN(7)
		x, y := r.IntN(128-side), r.IntN(96-side)
		b := project.Box{X0: float64(x), Y0: float64(y), X1: float64(x + side), Y1: float64(y + side)}
		clash := false
		for _, o := range boxes {
			if !b.Intersect(o.Translate(0, 0)).Empty() || b.IoU(o) > 0 {
				clash = true
			}
		}
		if clash {
			continue
		}
		k := r.IntN(2)
		c := color.RGBA{220, 40, 40, 255}
		if k == 1 {
			c = color.RGBA{40, 60, 220, 255}
		}
		for yy := y; yy < y+side; yy++ {
			for xx := x; xx < x+side; xx++ {
				img.Set(xx, yy, c)
			}
		}
		boxes, classes = append(boxes, b), append(classes, k)
	}
	return img, boxes, classes
}

func squaresSet(n int) (TrainingSet, map[int64]image.Image) {
	ts := TrainingSet{Classes: []string{"red", "blue"}, ClassIDs: []int64{1, 2}}
	imgs := map[int64]image.Image{}
	for i := 1; i <= n; i++ {
		img, boxes, classes := squares(uint64(i), 4)
		ex := Example{Image: project.Image{ID: int64(i), Path: "scene.png", Width: 128, Height: 96}, Boxes: boxes, Classes: classes}
		imgs[int64(i)] = img
		if i <= n-2 {
			ts.Train = append(ts.Train, ex)
		} else {
			ts.Val = append(ts.Val, ex)
		}
	}
	return ts, imgs
}

func loader(imgs map[int64]image.Image) func(context.Context, project.Image) (image.Image, error) {
	return func(_ context.Context, im project.Image) (image.Image, error) {
		if img, ok := imgs[im.ID]; ok {
			return img, nil
		}
		return nil, errors.New("no such image")
	}
}

// The network learns invented coloured squares within a few dozen epochs
// (a smoke test of the whole loop: targets, losses, gradients, optimiser,
// decoding, validation): the loss falls and the validation AP50, scored by
// project/eval, rises well above chance. Same seed and one thread give
// the same loss curve twice.
func TestTrainLearnsSquares(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a network")
	}
	nn.SetThreads(1)
	defer nn.SetThreads(0)
	ts, imgs := squaresSet(10)
	opt := TrainOptions{Epochs: 30, Seed: 3, InputSize: 128, Batch: 2, LR: 5e-3, Load: loader(imgs), Augment: Augment{FlipH: true, FlipV: true}}
	res, err := Train(context.Background(), ts, opt)
	if err != nil {
		t.Fatal(err)
	}
	first, last := res.Epochs[0], res.Epochs[len(res.Epochs)-1]
	t.Logf("loss %.3f → %.3f, val AP50 %.3f → %.3f", first.Loss, last.Loss, first.ValAP50, last.ValAP50)
	if !(last.Loss < first.Loss/2) {
		t.Errorf("loss %.3f → %.3f: did not halve", first.Loss, last.Loss)
	}
	if !(last.ValAP50 >= 0.5) {
		t.Errorf("validation AP50 %.3f, want at least 0.5 on plain squares", last.ValAP50)
	}
	short := opt
	short.Epochs = 2
	once, err := Train(context.Background(), ts, short)
	if err != nil {
		t.Fatal(err)
	}
	again, err := Train(context.Background(), ts, short)
	if err != nil {
		t.Fatal(err)
	}
	for i := range once.Epochs {
		// The learning rate's schedule follows Epochs, so only the first
		// epoch of the longer run is the same.
		if once.Epochs[i].Loss != again.Epochs[i].Loss || (i == 0 && once.Epochs[0].Loss != res.Epochs[0].Loss) {
			t.Fatalf("epoch %d: loss %v, %v and %v with the same seed", i+1, res.Epochs[i].Loss, once.Epochs[i].Loss, again.Epochs[i].Loss)
		}
	}
	// With no room to cache, every image is read again at each use, and
	// the run is the same.
	tight := short
	tight.CacheLimit = 1
	reread, err := Train(context.Background(), ts, tight)
	if err != nil {
		t.Fatal(err)
	}
	if reread.Reloaded != len(ts.Train)+len(ts.Val) || reread.CacheBytes != 0 || once.Reloaded != 0 || once.CacheBytes == 0 {
		t.Errorf("cache: %d reloaded, %d bytes; default limit %d reloaded, %d bytes", reread.Reloaded, reread.CacheBytes, once.Reloaded, once.CacheBytes)
	}
	if reread.Epochs[1].Loss != once.Epochs[1].Loss || reread.PeakHeapBytes == 0 {
		t.Errorf("without a cache: loss %v, cached %v; peak heap %d", reread.Epochs[1].Loss, once.Epochs[1].Loss, reread.PeakHeapBytes)
	}
	// A stored model reads back to the same detections.
	blob, err := EncodeModel(res.Model)
	if err != nil {
		t.Fatal(err)
	}
	m, err := DecodeModel(project.Model{Name: "m", Architecture: Architecture, Classes: ts.Classes, InputSize: 128, Weights: blob})
	if err != nil {
		t.Fatal(err)
	}
	a := res.Model.DetectImage(imgs[10], 20, 0.2, 0.5)
	b := m.DetectImage(imgs[10], 20, 0.2, 0.5)
	if len(a) == 0 || len(a) != len(b) || a[0] != b[0] {
		t.Errorf("after a round trip: %v and %v", a, b)
	}
	blob[len(blob)/2] ^= 0xff
	if _, err := DecodeModel(project.Model{Name: "m", Architecture: Architecture, Classes: ts.Classes, InputSize: 128, Weights: blob}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("damaged weights: %v", err)
	}
	if _, err := DecodeModel(project.Model{Name: "m", Architecture: "other/9", Classes: ts.Classes, InputSize: 128, Weights: blob}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("other architecture: %v", err)
	}
}

// Cancelling stops training with the context's error and no model;
// unreadable images are skipped and named.
func TestTrainCancelAndFailedImages(t *testing.T) {
	ts, imgs := squaresSet(4)
	delete(imgs, 1)
	ctx, cancel := context.WithCancel(context.Background())
	res, err := Train(ctx, ts, TrainOptions{Epochs: 50, InputSize: 128, Load: loader(imgs), Epoch: func(project.Epoch) { cancel() }})
	if !errors.Is(err, context.Canceled) || res.Model != nil {
		t.Errorf("cancelled: %v, model %v", err, res.Model)
	}
	if len(res.Failed) != 1 {
		t.Errorf("failed images %v, want the one missing", res.Failed)
	}
	if _, err := Train(context.Background(), ts, TrainOptions{InputSize: 128, Load: loader(imgs)}); !errors.Is(err, project.ErrInvalid) {
		t.Errorf("no epochs or budget: %v", err)
	}
}
