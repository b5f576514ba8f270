package detector

import (
	"context"
	"fmt"
	"image"

	"boxwright/project"
	"boxwright/suggest"
)

// Suggester runs a trained model over project images as a
// suggest.Suggester: its proposals carry the model's class names, and the
// project's class IDs where the project has them.
type Suggester struct {
	Model *Model
	// Source is the suggestions' source name (the stored model's name).
	Source string
	// Load reads an image, at its size (im.Width×im.Height) or smaller;
	// a failure is recorded in Failed and the run goes on.
	Load     func(ctx context.Context, im project.Image) (image.Image, error)
	MinScore float64
	// NMS is the IoU of per-class non-maximum suppression (0: none).
	NMS float64
	// TopK caps the boxes per image (0: 100).
	TopK int
	// Failed holds, by image ID, why an image could not be read in the
	// last run.
	Failed map[int64]string
}

var _ suggest.Suggester = (*Suggester)(nil)

// Name is the source name of the suggestions.
func (s *Suggester) Name() string { return s.Source }

// Suggest detects objects on each image.
func (s *Suggester) Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]suggest.Proposal, error) {
	ids := map[string]int64{}
	for _, c := range classes {
		ids[c.Name] = c.ID
	}
	topK := s.TopK
	if topK <= 0 {
		topK = 100
	}
	s.Failed = map[int64]string{}
	var out []suggest.Proposal
	for i, im := range images {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		img, err := s.Load(ctx, im)
		if err != nil {
			s.Failed[im.ID] = fmt.Sprintf("%s: %v", im.Path, err)
			continue
		}
		w, h := im.Width, im.Height
		if w <= 0 || h <= 0 {
			w, h = img.Bounds().Dx(), img.Bounds().Dy()
		}
		for _, d := range s.Model.DetectScaled(img, w, h, topK, s.MinScore, s.NMS) {
			name := s.Model.Classes[d.Class]
			out = append(out, suggest.Proposal{ImageID: im.ID, ClassID: ids[name], ClassName: name, Box: d.Box, Score: d.Score,
				Where: fmt.Sprintf("image %d (%s), model %s", im.ID, im.Path, s.Source)})
		}
		if progress != nil {
			progress(i+1, len(images))
		}
	}
	return out, nil
}
