package ops

import (
	"testing"

	"boxwright/project"
)

// A suggestion is covered by an own box of the same class on the same
// image whose IoU reaches the limit; the best such box is named. IoU of
// the boxes below, by hand from the definition (intersection over union):
// [0,0,10,10] and [1,0,11,10] overlap 90 of 110 → 0.818…; [0,0,10,10] and
// [5,0,15,10] overlap 50 of 150 → 0.333….
func TestCoveredSuggestions(t *testing.T) {
	own := []project.Label{
		{ID: 1, ImageID: 7, ClassID: 2, Box: project.Box{X0: 1, Y0: 0, X1: 11, Y1: 10}},
		{ID: 2, ImageID: 7, ClassID: 2, Box: project.Box{X0: 5, Y0: 0, X1: 15, Y1: 10}},
		{ID: 3, ImageID: 7, ClassID: 3, Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}}, // other class
		{ID: 4, ImageID: 8, ClassID: 2, Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}}, // other image
	}
	gs := []project.Suggestion{
		{ID: 10, ImageID: 7, ClassID: 2, Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}},
		{ID: 11, ImageID: 7, ClassID: 2, Box: project.Box{X0: 40, Y0: 40, X1: 50, Y1: 50}},
		{ID: 12, ImageID: 9, ClassID: 2, Box: project.Box{X0: 0, Y0: 0, X1: 10, Y1: 10}},
	}
	got := CoveredSuggestions(gs, own, DefaultDuplicateIoU)
	if len(got) != 1 || got[10].LabelID != 1 || got[10].IoU < 0.818 || got[10].IoU > 0.819 {
		t.Fatalf("covered %+v, want only suggestion 10 by label 1 at 0.818", got)
	}
	if got := CoveredSuggestions(gs, own, 0.9); len(got) != 0 {
		t.Errorf("at IoU 0.9: %+v, want none", got)
	}
	if got := CoveredSuggestions(gs, own, 0.3); got[10].LabelID != 1 {
		t.Errorf("at IoU 0.3 the best cover is label 1, got %+v", got[10])
	}
}
