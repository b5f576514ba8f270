package detector

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"runtime/metrics"
	"slices"
	"time"

	"golang.org/x/image/draw"

	"boxwright/project"
	"boxwright/project/eval"
	"boxwright/suggest/detector/nn"
)

// boxWeight is the share of the GIoU box loss beside the focal loss on
// the heat map, TTFNet's 5.
const boxWeight = 5.0

// TrainOptions tune a training run.
type TrainOptions struct {
	// Epochs stops after this many passes over the training images; Budget
	// after this much time (the epoch under way finishes first). At least
	// one must be set; both: whichever comes first.
	Epochs int
	Budget time.Duration
	Seed   uint64
	// Batch is the number of images per step (default 2: the budget buys
	// steps, and the loss falls with the number of steps more than with
	// their size).
	Batch int
	// LR is Adam's learning rate (default 4e-3, the better of 2e-3 and
	// 4e-3 on the demo in two-minute runs), lowered by a cosine over the
	// run.
	LR float64
	// InputSize is the long side of the network input; 0 chooses it from
	// the boxes (ChooseInputSize).
	InputSize int
	Augment   Augment
	// Load reads an example's image; a failure skips the image (named in
	// Result.Failed) and training goes on.
	Load func(ctx context.Context, im project.Image) (image.Image, error)
	// Epoch, when set, is called after each epoch.
	Epoch func(project.Epoch)
	// Gate, when set, is called before each batch; it blocks while the
	// user has paused training and returns an error to stop it.
	Gate func(ctx context.Context) error
	// From continues training from a stored model's weights (its classes
	// and input size must match the training set).
	From *Model
	// CacheLimit bounds the memory kept for downscaled images (0:
	// DefaultCacheLimit); images beyond it are read again when used.
	CacheLimit int
}

// DefaultCacheLimit keeps up to 1 GiB of downscaled images in memory:
// about 350 images at the largest input size, more at smaller ones.
const DefaultCacheLimit = 1 << 30

// Result is what a training run made.
type Result struct {
	Model  *Model
	Epochs []project.Epoch
	// Failed names the images that could not be read.
	Failed []string
	// CacheBytes is the memory taken by the downscaled images kept, and
	// Reloaded the number of images read again at each use because the
	// cache was full.
	CacheBytes, Reloaded int
	// PeakHeapBytes is the most memory the Go heap held, sampled after
	// each step: cache, network and the largest step's work.
	PeakHeapBytes uint64
}

// Model is a trained network with what it needs to run.
type Model struct {
	Net       *Net
	Classes   []string
	InputSize int
}

// cached is an example's image, downscaled once to the largest size the
// augmentation will ask for; img is nil when the cache was full, and the
// image is read again at each use.
type cached struct {
	ex    Example
	img   *image.RGBA
	w, h  int           // the downscaled size
	boxes []project.Box // in the downscaled image's pixels
}

// Train fits a network to the training set and reports validation AP50
// after each epoch. Cancelling ctx stops at the next image with an error
// and no model: a half-trained model is never handed out.
func Train(ctx context.Context, ts TrainingSet, opt TrainOptions) (Result, error) {
	var res Result
	if opt.Epochs <= 0 && opt.Budget <= 0 {
		return res, project.Explained(project.ErrInvalid, "train: give a number of epochs or a time budget")
	}
	if opt.Load == nil {
		return res, errors.New("train: no image loader")
	}
	batch := opt.Batch
	if batch <= 0 {
		batch = 2
	}
	lr := opt.LR
	if lr <= 0 {
		lr = 4e-3
	}
	long := opt.InputSize
	if long <= 0 {
		long = ChooseInputSize(append(append([]Example{}, ts.Train...), ts.Val...))
	}
	var net *Net
	if opt.From != nil {
		if opt.From.InputSize != long || !slices.Equal(opt.From.Classes, ts.Classes) {
			return res, project.Explained(project.ErrInvalid, "train: the model to continue predicts %v at %d px, this run %v at %d px", opt.From.Classes, opt.From.InputSize, ts.Classes, long)
		}
		net = opt.From.Net
	} else {
		net = NewNet(len(ts.Classes), opt.Seed)
	}
	limit := opt.CacheLimit
	if limit <= 0 {
		limit = DefaultCacheLimit
	}
	train, failed := loadCache(ctx, ts.Train, long, max(opt.Augment.Scale, 1), opt.Load, &limit)
	val, failedVal := loadCache(ctx, ts.Val, long, 1, opt.Load, &limit)
	res.Failed = append(failed, failedVal...)
	if err := ctx.Err(); err != nil {
		return res, err
	}
	if len(train) == 0 {
		return res, project.Explained(project.ErrInvalid, "train: none of the %d training images could be read", len(ts.Train))
	}
	for _, c := range append(append([]cached{}, train...), val...) {
		if c.img != nil {
			res.CacheBytes += len(c.img.Pix)
		} else {
			res.Reloaded++
		}
	}
	var heap heapPeak
	params := net.Params()
	adam := nn.NewAdam[float32](lr)
	r := rand.New(rand.NewPCG(opt.Seed, 0x747261696e))
	start := time.Now()
	order := epochPlan(train, long, opt.Augment.Crop)
	for epoch := 1; ; epoch++ {
		// Cosine decay to a tenth over the planned epochs or, with only a
		// budget, over the time.
		if f, ok := progressOf(opt, epoch, time.Since(start)); ok {
			adam.LR = lr * (0.1 + 0.9*0.5*(1+math.Cos(math.Pi*f)))
		}
		r.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		var sum float64
		var steps int
		for at := 0; at < len(order); at += batch {
			if err := ctx.Err(); err != nil {
				return Result{Failed: res.Failed}, err
			}
			if opt.Gate != nil {
				if err := opt.Gate(ctx); err != nil {
					return Result{Failed: res.Failed}, err
				}
			}
			var samples []Sample
			for _, i := range order[at:min(at+batch, len(order))] {
				c := train[i]
				img, err := c.image(ctx, opt.Load)
				if err != nil {
					if ctx.Err() != nil {
						return Result{Failed: res.Failed}, ctx.Err()
					}
					continue // it was read once; a second failure skips a step's share
				}
				samples = append(samples, AugmentImage(img, c.boxes, c.ex.Classes, long, opt.Augment, r))
			}
			if len(samples) == 0 {
				continue
			}
			loss := step(net, samples, len(ts.Classes))
			adam.Step(params)
			adam.ZeroGrad(params)
			sum += loss
			steps++
			heap.sample()
		}
		e := project.Epoch{Epoch: epoch, Loss: sum / float64(max(steps, 1)), ValAP50: math.NaN(), Seconds: time.Since(start).Seconds()}
		if len(val) > 0 {
			e.ValAP50 = validate(ctx, &Model{Net: net, Classes: ts.Classes, InputSize: long}, val, opt.Load)
			e.Seconds = time.Since(start).Seconds()
		}
		res.Epochs = append(res.Epochs, e)
		if opt.Epoch != nil {
			opt.Epoch(e)
		}
		if (opt.Epochs > 0 && epoch >= opt.Epochs) || (opt.Budget > 0 && time.Since(start) >= opt.Budget) {
			break
		}
	}
	res.Model = &Model{Net: net, Classes: ts.Classes, InputSize: long}
	res.PeakHeapBytes = heap.peak
	return res, nil
}

// epochPlan lists the training images of one epoch, each as many times as
// crops of the augmentation's size it takes to cover its frame once (at
// least once): an epoch then shows the network every image's area about
// once, whatever the crop, and validation, run after each epoch, stays a
// small share of the time.
func epochPlan(train []cached, long, crop int) []int {
	var order []int
	for i, c := range train {
		n := 1
		if crop > 0 {
			fw, fh, _ := Frame(c.w, c.h, long)
			side := roundUp(crop, pad)
			n = max(1, int(math.Round(float64(fw*fh)/float64(min(fw, side)*min(fh, side)))))
		}
		for range n {
			order = append(order, i)
		}
	}
	return order
}

// progressOf is how far through its plan a run is, 0 to 1: by epochs when
// they are set, else by the budget.
func progressOf(opt TrainOptions, epoch int, elapsed time.Duration) (float64, bool) {
	switch {
	case opt.Epochs > 0:
		return float64(epoch-1) / float64(opt.Epochs), true
	case opt.Budget > 0:
		return min(1, elapsed.Seconds()/opt.Budget.Seconds()), true
	}
	return 0, false
}

// loadCache reads and downscales the examples' images to long·jitter (the
// largest an augmentation asks for), one at a time so that memory stays
// predictable, keeping each while *budget bytes remain. Every image is read
// once here, so that one that cannot be read is named before training.
func loadCache(ctx context.Context, exs []Example, long int, jitter float64, load func(context.Context, project.Image) (image.Image, error), budget *int) ([]cached, []string) {
	var out []cached
	var failed []string
	for _, ex := range exs {
		if ctx.Err() != nil {
			return out, failed
		}
		img, err := load(ctx, ex.Image)
		if err != nil {
			failed = append(failed, fmt.Sprintf("%s: %v", ex.Image.Path, err))
			continue
		}
		b := img.Bounds()
		target := min(1, float64(long)*jitter/float64(max(b.Dx(), b.Dy())))
		c := cached{ex: ex, w: max(1, int(math.Round(float64(b.Dx())*target))), h: max(1, int(math.Round(float64(b.Dy())*target)))}
		sx, sy := float64(c.w)/float64(b.Dx()), float64(c.h)/float64(b.Dy())
		for _, bx := range ex.Boxes {
			c.boxes = append(c.boxes, project.Box{X0: bx.X0 * sx, Y0: bx.Y0 * sy, X1: bx.X1 * sx, Y1: bx.Y1 * sy})
		}
		if size := 4 * c.w * c.h; size <= *budget {
			*budget -= size
			c.img = c.downscale(img)
		}
		out = append(out, c)
	}
	return out, failed
}

func (c *cached) downscale(img image.Image) *image.RGBA {
	small := image.NewRGBA(image.Rect(0, 0, c.w, c.h))
	draw.ApproxBiLinear.Scale(small, small.Rect, img, img.Bounds(), draw.Src, nil)
	return small
}

// image returns the downscaled image, read again if it was not kept.
func (c *cached) image(ctx context.Context, load func(context.Context, project.Image) (image.Image, error)) (*image.RGBA, error) {
	if c.img != nil {
		return c.img, nil
	}
	img, err := load(ctx, c.ex.Image)
	if err != nil {
		return nil, err
	}
	return c.downscale(img), nil
}

// heapPeak follows the largest Go heap seen; reading the runtime's metric
// costs microseconds, next to a step's tenths of a second.
type heapPeak struct {
	peak  uint64
	probe []metrics.Sample
}

func (h *heapPeak) sample() {
	if h.probe == nil {
		h.probe = []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	}
	metrics.Read(h.probe)
	if v := h.probe[0].Value; v.Kind() == metrics.KindUint64 {
		h.peak = max(h.peak, v.Uint64())
	}
}

// batchOf stacks samples into one N×3×H×W tensor, padding smaller frames at
// the right and bottom with zeros (mid-grey after normalisation).
func batchOf(samples []Sample) *tensor {
	w, h := 0, 0
	for _, s := range samples {
		w, h = max(w, s.W), max(h, s.H)
	}
	x := nn.Zeros[float32](len(samples), 3, h, w)
	for n, s := range samples {
		for c := 0; c < 3; c++ {
			dst := x.Plane(n, c)
			src := s.Pixels[c*s.W*s.H : (c+1)*s.W*s.H]
			for y := 0; y < s.H; y++ {
				copy(dst[y*w:y*w+s.W], src[y*s.W:(y+1)*s.W])
			}
		}
		samples[n].W, samples[n].H = w, h // targets cover the padded frame
	}
	return x
}

// step runs one batch forward and backward and returns its loss; the
// gradients are left in the parameters.
func step(net *Net, samples []Sample, classes int) float64 {
	x := batchOf(samples)
	out := net.Forward(x, true)
	n, h, w := out.Heat.N, out.Heat.H, out.Heat.W
	heatT := nn.Zeros[float32](n, classes, h, w)
	ts := make([]Targets, n)
	for i, s := range samples {
		ts[i] = Encode(s, classes)
		copy(heatT.Image(i), ts[i].Heat)
	}
	fl, gHeat := focalLoss(out.Heat, heatT)
	bl, gBox := boxLoss(out.Box, ts)
	scale(gBox, boxWeight)
	net.Backward(Outputs{Heat: gHeat, Box: gBox})
	return fl + boxWeight*bl
}

func scale(t *tensor, f float32) {
	for i := range t.Data {
		t.Data[i] *= f
	}
}

// validate scores the model on the validation images: AP50 of VOC-style
// matching with all-point interpolation (project/eval), the mean over the
// classes with ground truth.
func validate(ctx context.Context, m *Model, val []cached, load func(context.Context, project.Image) (image.Image, error)) float64 {
	var truths []eval.Truth
	var preds []eval.Prediction
	for i, c := range val {
		if ctx.Err() != nil {
			return math.NaN()
		}
		id := int64(i + 1)
		for j, b := range c.boxes {
			truths = append(truths, eval.Truth{ImageID: id, ClassID: int64(c.ex.Classes[j]), Box: b})
		}
		img, err := c.image(ctx, load)
		if err != nil {
			continue // it was read once; its truths count as missed
		}
		for _, d := range m.DetectImage(img, 100, 0.01, 0.5) {
			preds = append(preds, eval.Prediction{ImageID: id, ClassID: int64(d.Class), Box: d.Box, Score: d.Score})
		}
	}
	if len(truths) == 0 {
		return math.NaN()
	}
	res, err := eval.Evaluate(truths, preds, eval.Options{Protocol: eval.VOC, IoU: 0.5, Interpolation: eval.AllPoint})
	if err != nil {
		return math.NaN()
	}
	return res.MAP
}

// DetectImage runs the model on one image and returns at most topK boxes
// in the image's pixels at or above minScore, after per-class NMS at nmsIoU
// (0: none).
func (m *Model) DetectImage(img image.Image, topK int, minScore, nmsIoU float64) []Detection {
	b := img.Bounds()
	return m.DetectScaled(img, b.Dx(), b.Dy(), topK, minScore, nmsIoU)
}

// DetectScaled is DetectImage on a smaller copy of an image of w×h pixels
// (a JPEG decoded at a DCT-domain scale): the boxes are in the image's
// own pixels.
func (m *Model) DetectScaled(img image.Image, w, h int, topK int, minScore, nmsIoU float64) []Detection {
	s, sc := PrepareImage(img, nil, nil, m.InputSize)
	sc *= float64(img.Bounds().Dx()) / float64(w)
	x := nn.New[float32](1, 3, s.H, s.W, s.Pixels)
	out := m.Net.Forward(x, false)
	heat := make([]float32, len(out.Heat.Data))
	for i, v := range out.Heat.Data {
		heat[i] = float32(1 / (1 + math.Exp(-float64(v))))
	}
	ds := Decode(heat, out.Box.Data, m.Net.Classes, out.Heat.H, out.Heat.W, topK, minScore)
	return ToImage(ds, sc, w, h, nmsIoU)
}
