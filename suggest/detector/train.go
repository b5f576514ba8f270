package detector

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"slices"
	"time"

	"golang.org/x/image/draw"

	"boxwright/project"
	"boxwright/project/eval"
	"boxwright/suggest/detector/nn"
)

// Loss weights of "Objects as Points": focal loss on the heat map, 1 for
// the offset and 0.1 for the size.
const sizeWeight, offsetWeight = 0.1, 1.0

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
	// LR is Adam's learning rate (default 2e-3), lowered by a cosine over
	// the run when Epochs is known.
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
}

// Result is what a training run made.
type Result struct {
	Model  *Model
	Epochs []project.Epoch
	// Failed names the images that could not be read.
	Failed []string
	// CacheBytes is the memory taken by the downscaled training images.
	CacheBytes int
}

// Model is a trained network with what it needs to run.
type Model struct {
	Net       *Net
	Classes   []string
	InputSize int
}

// cached is an example's image, downscaled once to the largest size the
// augmentation will ask for.
type cached struct {
	ex    Example
	img   *image.RGBA
	boxes []project.Box // in the cached image's pixels
}

// Train fits a network to the training set and reports validation AP50
// after each epoch. Cancelling ctx stops at the next image with an error
// and no model: a half-trained model is never handed out.
func Train(ctx context.Context, ts TrainingSet, opt TrainOptions) (Result, error) {
	var res Result
	if opt.Epochs <= 0 && opt.Budget <= 0 {
		return res, fmt.Errorf("train: give a number of epochs or a time budget: %w", project.ErrInvalid)
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
		lr = 2e-3
	}
	long := opt.InputSize
	if long <= 0 {
		long = ChooseInputSize(append(append([]Example{}, ts.Train...), ts.Val...))
	}
	var net *Net
	if opt.From != nil {
		if opt.From.InputSize != long || !slices.Equal(opt.From.Classes, ts.Classes) {
			return res, fmt.Errorf("train: the model to continue predicts %v at %d px, this run %v at %d px: %w", opt.From.Classes, opt.From.InputSize, ts.Classes, long, project.ErrInvalid)
		}
		net = opt.From.Net
	} else {
		net = NewNet(len(ts.Classes), opt.Seed)
	}
	train, failed := loadCache(ctx, ts.Train, long, opt)
	val, failedVal := loadCache(ctx, ts.Val, long, TrainOptions{Load: opt.Load})
	res.Failed = append(failed, failedVal...)
	if err := ctx.Err(); err != nil {
		return res, err
	}
	if len(train) == 0 {
		return res, fmt.Errorf("train: none of the %d training images could be read: %w", len(ts.Train), project.ErrInvalid)
	}
	for _, c := range append(append([]cached{}, train...), val...) {
		res.CacheBytes += len(c.img.Pix)
	}
	params := net.Params()
	adam := nn.NewAdam[float32](lr)
	r := rand.New(rand.NewPCG(opt.Seed, 0x747261696e))
	start := time.Now()
	order := make([]int, len(train))
	for i := range order {
		order[i] = i
	}
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
				samples = append(samples, AugmentImage(c.img, c.boxes, c.ex.Classes, long, opt.Augment, r))
			}
			loss := step(net, samples, len(ts.Classes))
			adam.Step(params)
			adam.ZeroGrad(params)
			sum += loss
			steps++
		}
		e := project.Epoch{Epoch: epoch, Loss: sum / float64(max(steps, 1)), ValAP50: math.NaN(), Seconds: time.Since(start).Seconds()}
		if len(val) > 0 {
			e.ValAP50 = validate(ctx, &Model{Net: net, Classes: ts.Classes, InputSize: long}, val)
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
	return res, nil
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

// loadCache reads and downscales the examples' images to long·Scale (the
// largest an augmentation asks for), in parallel with nothing: decoding is
// a small part of an epoch and memory stays predictable.
func loadCache(ctx context.Context, exs []Example, long int, opt TrainOptions) ([]cached, []string) {
	var out []cached
	var failed []string
	jitter := max(opt.Augment.Scale, 1)
	for _, ex := range exs {
		if ctx.Err() != nil {
			return out, failed
		}
		img, err := opt.Load(ctx, ex.Image)
		if err != nil {
			failed = append(failed, fmt.Sprintf("%s: %v", ex.Image.Path, err))
			continue
		}
		b := img.Bounds()
		target := min(1, float64(long)*jitter/float64(max(b.Dx(), b.Dy())))
		w, h := max(1, int(math.Round(float64(b.Dx())*target))), max(1, int(math.Round(float64(b.Dy())*target)))
		small := image.NewRGBA(image.Rect(0, 0, w, h))
		draw.ApproxBiLinear.Scale(small, small.Rect, img, b, draw.Src, nil)
		sx, sy := float64(w)/float64(b.Dx()), float64(h)/float64(b.Dy())
		c := cached{ex: ex, img: small}
		for _, bx := range ex.Boxes {
			c.boxes = append(c.boxes, project.Box{X0: bx.X0 * sx, Y0: bx.Y0 * sy, X1: bx.X1 * sx, Y1: bx.Y1 * sy})
		}
		out = append(out, c)
	}
	return out, failed
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
	sizeT, offT := nn.Zeros[float32](n, 2, h, w), nn.Zeros[float32](n, 2, h, w)
	mask := nn.Zeros[float32](n, 1, h, w)
	for i, s := range samples {
		t := Encode(s, classes)
		copy(heatT.Image(i), t.Heat)
		copy(sizeT.Image(i), t.Size)
		copy(offT.Image(i), t.Offset)
		copy(mask.Image(i), t.Mask)
	}
	fl, gHeat := focalLoss(out.Heat, heatT)
	sl, gSize := maskedL1(out.Size, sizeT, mask)
	ol, gOff := maskedL1(out.Offset, offT, mask)
	scale(gSize, sizeWeight)
	scale(gOff, offsetWeight)
	net.Backward(Outputs{Heat: gHeat, Size: gSize, Offset: gOff})
	return fl + sizeWeight*sl + offsetWeight*ol
}

func scale(t *tensor, f float32) {
	for i := range t.Data {
		t.Data[i] *= f
	}
}

// validate scores the model on the validation images: AP50 of VOC-style
// matching with all-point interpolation (project/eval), the mean over the
// classes with ground truth.
func validate(ctx context.Context, m *Model, val []cached) float64 {
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
		for _, d := range m.DetectImage(c.img, 100, 0.01, 0.5) {
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
	s, sc := PrepareImage(img, nil, nil, m.InputSize)
	x := nn.New[float32](1, 3, s.H, s.W, s.Pixels)
	out := m.Net.Forward(x, false)
	h, w := out.Heat.H, out.Heat.W
	heat := make([]float32, len(out.Heat.Data))
	for i, v := range out.Heat.Data {
		heat[i] = float32(1 / (1 + math.Exp(-float64(v))))
	}
	ds := Decode(heat, out.Size.Data, out.Offset.Data, m.Net.Classes, h, w, topK, minScore)
	b := img.Bounds()
	return ToImage(ds, sc, b.Dx(), b.Dy(), nmsIoU)
}
