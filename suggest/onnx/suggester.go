package onnx

import (
	"context"
	"fmt"
	"image"
	"sync"

	"boxwright/project"
	"boxwright/suggest"
)

// Runner runs a Model over project images as a suggest.Suggester: images
// are read and prepared by Workers goroutines while the model runs on the
// ones before, and each proposal carries the model's class name and the
// project's class ID where the project has that class.
type Runner struct {
	Model *Model
	// Load reads an image (pixels as displayed), at its size
	// (im.Width×im.Height) or smaller (MinSize says how small it may be);
	// a failure is recorded in Failed and the run goes on.
	Load func(ctx context.Context, im project.Image) (image.Image, error)
	// Workers read and prepare images ahead of the model (0: 2).
	Workers int
	// Failed holds, by image ID, why an image was skipped in the last run.
	Failed map[int64]string
	// OnImage, when set, is called in image order with each image read and
	// its proposals, as soon as they are known (to store them as the run
	// goes); an error stops the run.
	OnImage func(im project.Image, ps []suggest.Proposal) error

	mu sync.Mutex
}

var _ suggest.Suggester = (*Runner)(nil)

// Name is the source name of the suggestions (Model.Source).
func (r *Runner) Name() string { return r.Model.Source() }

type prepared struct {
	x   []float32
	lb  Letterbox
	err error
}

// Suggest detects objects on each image, in order.
func (r *Runner) Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]suggest.Proposal, error) {
	ids := map[string]int64{}
	for _, c := range classes {
		ids[c.Name] = c.ID
	}
	r.mu.Lock()
	r.Failed = map[int64]string{}
	r.mu.Unlock()
	workers := r.Workers
	if workers <= 0 {
		workers = 2
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	// One slot per image, filled by the workers in any order and read by
	// the model in order; the semaphore keeps the workers at most a few
	// images ahead, so that memory stays bounded.
	slots := make([]chan prepared, len(images))
	for i := range slots {
		slots[i] = make(chan prepared, 1)
	}
	ahead := make(chan struct{}, 2*workers)
	next := make(chan int)
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				img, err := r.Load(ctx, images[i])
				if err != nil {
					slots[i] <- prepared{err: err}
					continue
				}
				w, h := images[i].Width, images[i].Height
				if w <= 0 || h <= 0 {
					w, h = img.Bounds().Dx(), img.Bounds().Dy()
				}
				x, lb := r.Model.PrepareScaled(img, w, h)
				slots[i] <- prepared{x: x, lb: lb}
			}
		}()
	}
	go func() {
		defer close(next)
		for i := range images {
			select {
			case ahead <- struct{}{}:
			case <-ctx.Done():
				return
			}
			select {
			case next <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	defer wg.Wait()

	// The model runs back to back; decoding its outputs, the letterbox
	// and the suppression happen beside the next run, in order.
	type inferred struct {
		i    int
		outs []RawOutput
		lb   Letterbox
		err  error // the image could not be read
	}
	finish := make(chan inferred, 2)
	var out []suggest.Proposal
	finished := make(chan error, 1)
	go func() {
		var ferr error
		for f := range finish {
			if ferr != nil {
				continue
			}
			im := images[f.i]
			if f.err != nil {
				r.mu.Lock()
				r.Failed[im.ID] = fmt.Sprintf("%s: %v", im.Path, f.err)
				r.mu.Unlock()
			} else {
				cs, err := r.Model.Candidates(f.outs, f.lb)
				if err != nil {
					ferr = fmt.Errorf("image %d (%s): %w", im.ID, im.Path, err)
					continue
				}
				first := len(out)
				for _, d := range Finish(cs, f.lb, r.Model.Desc.NMSIoU, r.Model.Desc.MaxCandidates, r.Model.Desc.MaxDetections) {
					name := r.Model.Classes[d.Class]
					out = append(out, suggest.Proposal{ImageID: im.ID, ClassID: ids[name], ClassName: name, Box: d.Box, Score: d.Score,
						Where: fmt.Sprintf("image %d (%s), model %s", im.ID, im.Path, r.Model.Path)})
				}
				if r.OnImage != nil {
					if err := r.OnImage(im, out[first:]); err != nil {
						ferr = err
						continue
					}
				}
			}
			if progress != nil {
				progress(f.i+1, len(images))
			}
		}
		finished <- ferr
	}()
	stop := func(err error) ([]suggest.Proposal, error) {
		close(finish)
		if ferr := <-finished; err == nil {
			err = ferr
		}
		if err != nil {
			return nil, err
		}
		return out, nil
	}
	for i, im := range images {
		var p prepared
		select {
		case p = <-slots[i]:
			<-ahead
		case <-ctx.Done():
			return stop(ctx.Err())
		}
		if err := ctx.Err(); err != nil {
			return stop(err)
		}
		if p.err != nil {
			finish <- inferred{i: i, err: p.err}
			continue
		}
		outs, err := r.Model.Infer(p.x)
		if err != nil {
			return stop(fmt.Errorf("image %d (%s): %w", im.ID, im.Path, err))
		}
		finish <- inferred{i: i, outs: outs, lb: p.lb}
	}
	return stop(nil)
}
