package exemplar

import (
	"context"
	"errors"
	"fmt"
	"image"
	"slices"

	"boxwright/project"
	"boxwright/suggest"
)

// Source is the suggestion source name of the exemplar matcher.
const Source = "exemplar"

// existingIoU: a match overlapping a label already there by more is that
// label, not a new object.
const existingIoU = 0.3

// Matcher proposes boxes like the exemplars of one class, source "exemplar".
type Matcher struct {
	ClassID         int64
	Exemplars       []project.Box // boxes on ExemplarImage
	ExemplarImage   image.Image   // the image the exemplars are on (already oriented)
	ExemplarImageID int64
	Options         Options
	// Load decodes an image, oriented for display.
	Load func(ctx context.Context, im project.Image) (image.Image, error)
	// Existing returns the labels of this class already on an image; no
	// proposal overlapping one (IoU > 0.3) is made. Nil means none.
	Existing func(imageID int64) ([]project.Box, error)
}

// Name returns "exemplar".
func (m *Matcher) Name() string { return Source }

// LargestImage is the width and the height of the largest images among
// images, as the project records them (0 when it does not know them); the
// scales PlanScales keeps for a Matcher are those that fit these and the
// exemplar image.
func LargestImage(images []project.Image) image.Point {
	var p image.Point
	for _, im := range images {
		p.X, p.Y = max(p.X, im.Width), max(p.Y, im.Height)
	}
	return p
}

// Suggest searches each image for the exemplars and proposes the matches
// that do not overlap a label already there, at most MaxResults per image.
// The templates are cut from ExemplarImage once, at the scales PlanScales
// keeps for the exemplar image and the largest of images; on that image the
// exemplars themselves are left out.
func (m *Matcher) Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]suggest.Proposal, error) {
	res, err := m.Search(ctx, images, classes, progress)
	return res.Proposals, err
}

// Result is what Matcher.Search found.
type Result struct {
	// Proposals are the best MaxResults matches of each image that do not
	// overlap a label already there, best first within an image.
	Proposals []suggest.Proposal
	// Scores holds, per image searched, the score of every such match,
	// those beyond the cut too, best first: how many a threshold keeps
	// before the cut. On a busy image not every weak candidate is refined,
	// so beyond the cut the count is a lower bound.
	Scores map[int64][]float64
	// MaxResults is the cut the search ran with, per image.
	MaxResults int
}

// Found counts the matches scoring at least threshold, on all images,
// before the cut to MaxResults per image.
func (r Result) Found(threshold float64) int {
	n := 0
	for _, sc := range r.Scores {
		n += countAtLeast(sc, threshold)
	}
	return n
}

// countAtLeast counts the scores, sorted best first, at or above t.
func countAtLeast(desc []float64, t float64) int {
	n, _ := slices.BinarySearchFunc(desc, t, func(s, t float64) int {
		if s >= t {
			return -1
		}
		return 1
	})
	return n
}

// Search is Suggest that also says how many matches each image held before
// the cut to MaxResults.
func (m *Matcher) Search(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) (Result, error) {
	if m.ClassID == 0 {
		return Result{}, errors.New("exemplar matcher: no class")
	}
	opt, err := m.Options.withDefaults()
	if err != nil {
		return Result{}, err
	}
	if m.ExemplarImage == nil {
		return Result{}, fmt.Errorf("exemplar matcher: image %d: no pixels for the exemplars", m.ExemplarImageID)
	}
	exPlanes := Planes(m.ExemplarImage, opt.Feature)
	set, err := newTemplateSet(ctx, exPlanes, m.Exemplars, opt, LargestImage(images))
	if err != nil {
		return Result{}, fmt.Errorf("exemplar matcher: image %d: %w", m.ExemplarImageID, err)
	}
	var className string
	for _, c := range classes {
		if c.ID == m.ClassID {
			className = c.Name
		}
	}
	if progress == nil {
		progress = func(int, int) {}
	}
	res := Result{Scores: map[int64][]float64{}, MaxResults: opt.MaxResults}
	for i, im := range images {
		if err := ctx.Err(); err != nil {
			return Result{}, err
		}
		var (
			planes  []Plane
			exclude []project.Box
		)
		if im.ID == m.ExemplarImageID {
			planes, exclude = exPlanes, m.Exemplars
		} else {
			if m.Load == nil {
				return Result{}, fmt.Errorf("exemplar matcher: no loader for image %d (%s)", im.ID, im.Path)
			}
			img, err := m.Load(ctx, im)
			if err != nil {
				if ctx.Err() != nil {
					return Result{}, ctx.Err()
				}
				return Result{}, fmt.Errorf("exemplar matcher: loading image %d (%s): %w", im.ID, im.Path, err)
			}
			planes = Planes(img, opt.Feature)
		}
		matches, err := set.search(ctx, planes, exclude, -1)
		if err != nil {
			if ctx.Err() != nil {
				return Result{}, ctx.Err()
			}
			return Result{}, fmt.Errorf("exemplar matcher: image %d (%s): %w", im.ID, im.Path, err)
		}
		var existing []project.Box
		if m.Existing != nil {
			// Without them, places already labelled would be proposed again.
			if existing, err = m.Existing(im.ID); err != nil {
				return Result{}, fmt.Errorf("exemplar matcher: reading the labels on image %d (%s): %w", im.ID, im.Path, err)
			}
		}
		scores := []float64{}
		for _, mt := range matches {
			if overlapsAny(mt.Box, existing, existingIoU) {
				continue
			}
			scores = append(scores, mt.Score)
			if len(scores) > opt.MaxResults {
				continue
			}
			res.Proposals = append(res.Proposals, suggest.Proposal{
				ImageID:   im.ID,
				ClassID:   m.ClassID,
				ClassName: className,
				Box:       mt.Box,
				Score:     mt.Score,
				Where:     fmt.Sprintf("image %d, exemplar %d, scale %.3g, %d°", im.ID, mt.Exemplar+1, mt.Scale, mt.Rotation),
			})
		}
		res.Scores[im.ID] = append(res.Scores[im.ID], scores...)
		progress(i+1, len(images))
	}
	return res, nil
}
