package exemplar

import (
	"context"
	"errors"
	"fmt"
	"image"

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
// that do not overlap a label already there. The templates are cut from
// ExemplarImage once, at the scales PlanScales keeps for the exemplar image
// and the largest of images; on that image the exemplars themselves are
// left out.
func (m *Matcher) Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]suggest.Proposal, error) {
	if m.ClassID == 0 {
		return nil, errors.New("exemplar matcher: no class")
	}
	opt, err := m.Options.withDefaults()
	if err != nil {
		return nil, err
	}
	if m.ExemplarImage == nil {
		return nil, fmt.Errorf("exemplar matcher: image %d: no pixels for the exemplars", m.ExemplarImageID)
	}
	exPlanes := Planes(m.ExemplarImage, opt.Feature)
	set, err := newTemplateSet(ctx, exPlanes, m.Exemplars, opt, LargestImage(images))
	if err != nil {
		return nil, fmt.Errorf("exemplar matcher: image %d: %w", m.ExemplarImageID, err)
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
	var out []suggest.Proposal
	for i, im := range images {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		var (
			planes  []Plane
			exclude []project.Box
		)
		if im.ID == m.ExemplarImageID {
			planes, exclude = exPlanes, m.Exemplars
		} else {
			if m.Load == nil {
				return nil, fmt.Errorf("exemplar matcher: no loader for image %d (%s)", im.ID, im.Path)
			}
			img, err := m.Load(ctx, im)
			if err != nil {
				if ctx.Err() != nil {
					return nil, ctx.Err()
				}
				return nil, fmt.Errorf("exemplar matcher: loading image %d (%s): %w", im.ID, im.Path, err)
			}
			planes = Planes(img, opt.Feature)
		}
		matches, err := set.search(ctx, planes, exclude, -1)
		if err != nil {
			if ctx.Err() != nil {
				return nil, ctx.Err()
			}
			return nil, fmt.Errorf("exemplar matcher: image %d (%s): %w", im.ID, im.Path, err)
		}
		var existing []project.Box
		if m.Existing != nil {
			// Without them, places already labelled would be proposed again.
			if existing, err = m.Existing(im.ID); err != nil {
				return nil, fmt.Errorf("exemplar matcher: reading the labels on image %d (%s): %w", im.ID, im.Path, err)
			}
		}
		for _, mt := range matches {
			if overlapsAny(mt.Box, existing, existingIoU) {
				continue
			}
			out = append(out, suggest.Proposal{
				ImageID:   im.ID,
				ClassID:   m.ClassID,
				ClassName: className,
				Box:       mt.Box,
				Score:     mt.Score,
				Where:     fmt.Sprintf("image %d, exemplar %d, scale %.3g, %d°", im.ID, mt.Exemplar+1, mt.Scale, mt.Rotation),
			})
		}
		progress(i+1, len(images))
	}
	return out, nil
}
