package ops

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"slices"
	"strings"
	"time"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/suggest/detector"
)

// TrainJob says what a training run learns from and for how long.
type TrainJob struct {
	// Annotator whose labels are learned (for example "consensus").
	Annotator string
	// Classes to learn; empty: every class with enough boxes.
	Classes    []string
	Epochs     int
	Budget     time.Duration
	Validation float64
	Seed       uint64
	// QuarterTurns adds the four quarter turns to the augmentation, for
	// imagery whose orientation does not matter.
	QuarterTurns bool
	// Continue trains further from the current model when its classes
	// match, instead of from scratch.
	Continue bool
	// Epoch, when set, is called after each epoch.
	Epoch func(project.Epoch)
	// Gate, when set, is called before each batch: it blocks while
	// training is paused.
	Gate func(ctx context.Context) error
}

// TrainReport is what a training run did.
type TrainReport struct {
	Model       project.Model
	TrainImages int
	ValImages   int
	Skipped     []string // classes left out, with the reason
	Failed      []string // images that could not be read
	// CacheBytes is the memory of the images kept downscaled, Reloaded
	// the images read again at each use because the cache was full, and
	// PeakHeapBytes the most the program's heap held while training.
	CacheBytes    int
	Reloaded      int
	PeakHeapBytes uint64
	Continued     bool
}

// TrainingCandidates reads every image of the project with the named
// annotator's labels.
func TrainingCandidates(ctx context.Context, st backend.Project, annotator string) ([]detector.Candidate, []project.Class, error) {
	a, err := st.AnnotatorByName(ctx, annotator)
	if err != nil {
		return nil, nil, err
	}
	ims, err := st.ImagesFor(ctx, a.ID) // "done" is this annotator's
	if err != nil {
		return nil, nil, err
	}
	classes, err := st.Classes(ctx)
	if err != nil {
		return nil, nil, err
	}
	ls, err := st.Labels(ctx, project.LabelFilter{AnnotatorID: a.ID})
	if err != nil {
		return nil, nil, err
	}
	by := map[int64][]project.Label{}
	for _, l := range ls {
		by[l.ImageID] = append(by[l.ImageID], l)
	}
	var out []detector.Candidate
	for _, im := range ims {
		done := im.Status == project.StatusDone || im.Status == project.StatusReviewed
		out = append(out, detector.Candidate{Image: im, Labels: by[im.ID], Done: done})
	}
	return out, classes, nil
}

// Train trains a detector on the project's labels and stores it as the
// current model. Nothing is stored when it fails or is cancelled.
func Train(ctx context.Context, st backend.Project, j TrainJob) (TrainReport, error) {
	var rep TrainReport
	cands, classes, err := TrainingCandidates(ctx, st, j.Annotator)
	if err != nil {
		return rep, err
	}
	ts, err := detector.Prepare(cands, classes, detector.DataOptions{Classes: j.Classes, Validation: j.Validation, Seed: j.Seed})
	if err != nil {
		return rep, err
	}
	rep.TrainImages, rep.ValImages, rep.Skipped = len(ts.Train), len(ts.Val), ts.Skipped
	aug := detector.DefaultAugment
	aug.QuarterTurns = j.QuarterTurns
	opt := detector.TrainOptions{Epochs: j.Epochs, Budget: j.Budget, Seed: j.Seed, Augment: aug, Epoch: j.Epoch, Gate: j.Gate,
		Load: func(ctx context.Context, im project.Image) (image.Image, error) { return DecodeProjectImage(st, im) }}
	var from project.Model
	if j.Continue {
		cur, err := st.CurrentModel(ctx)
		if err == nil {
			m, derr := detector.DecodeModel(cur)
			if derr != nil {
				return rep, derr
			}
			if slices.Equal(m.Classes, ts.Classes) {
				opt.From, opt.InputSize, from, rep.Continued = m, m.InputSize, cur, true
			}
		}
	}
	res, err := detector.Train(ctx, ts, opt)
	rep.Failed = res.Failed
	rep.CacheBytes, rep.Reloaded, rep.PeakHeapBytes = res.CacheBytes, res.Reloaded, res.PeakHeapBytes
	if err != nil {
		return rep, err
	}
	blob, err := detector.EncodeModel(res.Model)
	if err != nil {
		return rep, err
	}
	last := math.NaN()
	if n := len(res.Epochs); n > 0 {
		last = res.Epochs[n-1].ValAP50
	}
	m := project.Model{Architecture: detector.Architecture, Classes: ts.Classes, InputSize: res.Model.InputSize, Seed: j.Seed,
		TrainedOn: fmt.Sprintf("labels of %s: %d training and %d validation images, classes %s", j.Annotator, len(ts.Train), len(ts.Val), strings.Join(ts.Classes, ", ")),
		Epochs:    res.Epochs, ValAP50: last, Weights: blob, Current: true}
	if rep.Continued {
		m.ID, m.Name, m.Current = from.ID, from.Name, from.Current
		m.Epochs = append(append([]project.Epoch{}, from.Epochs...), shiftEpochs(res.Epochs, from.Epochs)...)
		if err := st.UpdateModel(ctx, m); err != nil {
			return rep, err
		}
		rep.Model = m
		return rep, nil
	}
	stored, err := st.AddModel(ctx, m)
	if err != nil {
		return rep, err
	}
	rep.Model = stored
	return rep, nil
}

// shiftEpochs numbers and times a continued run's epochs after the
// earlier ones.
func shiftEpochs(es, before []project.Epoch) []project.Epoch {
	if len(before) == 0 {
		return es
	}
	last := before[len(before)-1]
	out := make([]project.Epoch, len(es))
	for i, e := range es {
		e.Epoch += last.Epoch
		e.Seconds += last.Seconds
		out[i] = e
	}
	return out
}

// DetectJob says where a model looks for objects.
type DetectJob struct {
	// Model by name; empty: the current one.
	Model string
	// Images to run on; nil: every image without labels and not skipped
	// (Unlabelled) or every image (All).
	Images   []project.Image
	All      bool
	MinScore float64
	// NMS is the IoU of per-class non-maximum suppression (0: none).
	NMS float64
	// Source of the suggestions; empty: the model's name.
	Source string
	// Save stores the detections as pending suggestions, replacing the
	// source's pending ones on those images.
	Save     bool
	Progress func(done, total int)
}

// DetectReport is what a detection run found.
type DetectReport struct {
	Model      string
	Source     string
	Images     int
	Detections []project.Suggestion
	Failed     []string
	Saved      project.SuggestionImportReport
}

// LoadModel reads a stored model (the current one when name is empty) and
// checks that the project still has its classes.
func LoadModel(ctx context.Context, st backend.Project, name string) (project.Model, *detector.Model, []int64, error) {
	var pm project.Model
	var err error
	if name == "" {
		pm, err = st.CurrentModel(ctx)
		if err != nil {
			if errors.Is(err, project.ErrNotFound) {
				return pm, nil, nil, project.Explained(project.ErrNotFound, "the project has no current model: train one first (boxwright train)")
			}
			return pm, nil, nil, err
		}
	} else if pm, err = st.Model(ctx, name); err != nil {
		return pm, nil, nil, err
	}
	m, err := detector.DecodeModel(pm)
	if err != nil {
		return pm, nil, nil, err
	}
	ids := make([]int64, len(pm.Classes))
	var missing []string
	for i, c := range pm.Classes {
		cl, err := st.ClassByName(ctx, c)
		if err != nil {
			missing = append(missing, c)
			continue
		}
		ids[i] = cl.ID
	}
	if len(missing) > 0 {
		return pm, nil, nil, project.Explained(project.ErrInvalid, "model %q predicts classes the project no longer has (%s): retrain it on the current classes",
			pm.Name, strings.Join(missing, ", "))
	}
	return pm, m, ids, nil
}

// Detect runs a stored model on images and, with Save, stores what it
// finds as pending suggestions of its source.
func Detect(ctx context.Context, st backend.Project, j DetectJob) (DetectReport, error) {
	var rep DetectReport
	pm, m, _, err := LoadModel(ctx, st, j.Model)
	if err != nil {
		return rep, err
	}
	rep.Model, rep.Source = pm.Name, j.Source
	if rep.Source == "" {
		rep.Source = pm.Name
	}
	ims := j.Images
	if ims == nil {
		if ims, err = UnlabelledImages(ctx, st, j.All); err != nil {
			return rep, err
		}
	}
	classes, err := st.Classes(ctx)
	if err != nil {
		return rep, err
	}
	sg := &detector.Suggester{Model: m, Source: rep.Source, MinScore: j.MinScore, NMS: j.NMS,
		Load: func(ctx context.Context, im project.Image) (image.Image, error) {
			// The network sees the image at its input size: a JPEG is
			// decoded at the smallest DCT scale that keeps that much.
			w, h, _ := detector.Frame(im.Width, im.Height, m.InputSize)
			return DecodeProjectImageAtLeast(st, im, min(w, im.Width), min(h, im.Height))
		}}
	ps, err := sg.Suggest(ctx, ims, classes, j.Progress)
	var onImages []int64
	for _, im := range ims {
		if why, bad := sg.Failed[im.ID]; bad {
			rep.Failed = append(rep.Failed, why)
		} else {
			onImages = append(onImages, im.ID)
		}
	}
	if err != nil {
		return rep, err
	}
	for _, p := range ps {
		rep.Detections = append(rep.Detections, project.Suggestion{ImageID: p.ImageID, ClassID: p.ClassID, Box: p.Box,
			Score: ClampScore(p.Score), Source: rep.Source, State: project.SuggestionPending})
	}
	rep.Images = len(onImages)
	if j.Save && len(onImages) > 0 {
		if rep.Saved, err = st.ReplaceSuggestionsOn(ctx, rep.Source, onImages, rep.Detections); err != nil {
			return rep, err
		}
	}
	return rep, nil
}

// TrainMemory says in words what a training run held in memory.
func TrainMemory(rep TrainReport) string {
	s := fmt.Sprintf("images cached %.0f MB, peak heap %.0f MB", float64(rep.CacheBytes)/1e6, float64(rep.PeakHeapBytes)/1e6)
	if rep.Reloaded > 0 {
		s += fmt.Sprintf("; %s read again at each use (the cache was full)", Plural(rep.Reloaded, "image"))
	}
	return s
}
