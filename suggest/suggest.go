// Package suggest proposes boxes for people to review. It holds the
// Suggester interface and its prediction-file source (FileSource), the
// filtering of raw proposals by score and non-maximum suppression, and the
// statistics of review decisions (counts per source and class, reliability,
// a suggested score threshold). The exemplar matcher, another Suggester,
// lives in the sub-package exemplar; a trained detector will come later.
package suggest

import (
	"context"

	"boxwright/project"
)

// Proposal is one suggested box before it is stored.
type Proposal struct {
	ImageID int64
	ClassID int64
	// ClassName is the class's name; when ClassID is 0 it is a name the
	// project does not know yet, and the caller maps, creates or drops it.
	ClassName string
	Box       project.Box
	Score     float64
	Where     string // position in the source, for messages
}

// Suggester proposes boxes for images.
type Suggester interface {
	// Name is the source name stored with every suggestion, e.g. "detector-v7".
	Name() string
	// Suggest returns proposals for the given images (with the project's
	// classes); it stops with ctx.Err() when cancelled and reports
	// progress(done, total images) now and then.
	Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]Proposal, error)
}
