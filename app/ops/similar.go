package ops

import (
	"context"
	"image"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/store/imagefile"
	"boxwright/suggest"
	"boxwright/suggest/exemplar"
)

// DecodeProjectImage decodes an image of the project as displayed.
func DecodeProjectImage(st backend.Project, im project.Image) (image.Image, error) {
	path, err := st.FetchImage(context.Background(), im)
	if err != nil {
		return nil, err
	}
	img, _, err := imagefile.Decode(path, imagefile.DefaultMaxPixels)
	return img, err
}

// DecodeProjectImageAtLeast decodes an image for a consumer that needs
// only minW×minH of its pixels as displayed (a detector's input): JPEGs
// at a DCT-domain scale (imagefile.DecodeAtLeast), so the image may be
// smaller than im.Width×im.Height.
func DecodeProjectImageAtLeast(st backend.Project, im project.Image, minW, minH int) (image.Image, error) {
	path, err := st.FetchImage(context.Background(), im)
	if err != nil {
		return nil, err
	}
	img, _, err := imagefile.DecodeAtLeast(path, imagefile.DefaultMaxPixels, minW, minH)
	return img, err
}

// StoreExemplarMatches replaces the exemplar's pending suggestions on the
// searched images by the matches.
func StoreExemplarMatches(ctx context.Context, st backend.Project, classID int64, byImage map[int64][]exemplar.Match) error {
	var ids []int64
	var gs []project.Suggestion
	for id, ms := range byImage {
		ids = append(ids, id)
		for _, m := range ms {
			gs = append(gs, project.Suggestion{ImageID: id, ClassID: classID, Box: m.Box, Score: ClampScore(m.Score), Source: exemplar.Source, State: project.SuggestionPending})
		}
	}
	_, err := st.ReplaceSuggestionsOn(ctx, exemplar.Source, ids, gs)
	return err
}

// ClampScore keeps a correlation in the 0..1 a suggestion score takes.
func ClampScore(v float64) float64 { return max(0, min(1, v)) }

var _ suggest.Suggester = (*exemplar.Matcher)(nil)
