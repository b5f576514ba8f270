package agree

import (
	"math"
	"slices"
	"testing"
)

// The worst-first order follows from its rule (derived): more
// disagreements first, then lower F1, then lower mean IoU, NaN lowest,
// ties in the order given.
func TestWorstFirst(t *testing.T) {
	nan := math.NaN()
	ds := []Dispute{
		{Errors: 1, F1: 0.9, MeanIoU: 0.8}, // 0
		{Errors: 3, F1: 0.5, MeanIoU: 0.7}, // 1
		{Errors: 1, F1: 0.9, MeanIoU: 0.6}, // 2
		{Errors: 1, F1: nan, MeanIoU: nan}, // 3
		{Errors: 1, F1: 0.7, MeanIoU: 0.9}, // 4
		{Errors: 1, F1: 0.9, MeanIoU: 0.6}, // 5: ties with 2
	}
	idx := []int{0, 1, 2, 3, 4, 5}
	slices.SortStableFunc(idx, func(a, b int) int { return WorstFirst(ds[a], ds[b]) })
	if want := []int{1, 3, 4, 2, 5, 0}; !slices.Equal(idx, want) {
		t.Errorf("order %v, want %v", idx, want)
	}
}
