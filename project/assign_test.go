package project

import (
	"errors"
	"testing"
)

// Each image goes to k different annotators and the load differs by at
// most one image between annotators (the balance of a cyclic design,
// common practice).
func TestAssignImagesBalanced(t *testing.T) {
	ims := make([]int64, 10)
	for i := range ims {
		ims[i] = int64(100 + i)
	}
	anns := []int64{1, 2, 3, 4}
	for k := 1; k <= 4; k++ {
		got, err := AssignImages(ims, anns, k)
		if err != nil {
			t.Fatal(err)
		}
		load := map[int64]int{}
		for _, im := range ims {
			to := got[im]
			if len(to) != k {
				t.Fatalf("k=%d: image %d to %v", k, im, to)
			}
			seen := map[int64]bool{}
			for _, a := range to {
				if seen[a] {
					t.Fatalf("k=%d: image %d twice to %d", k, im, a)
				}
				seen[a] = true
				load[a]++
			}
		}
		lo, hi := 1<<30, 0
		for _, a := range anns {
			lo, hi = min(lo, load[a]), max(hi, load[a])
		}
		if hi-lo > 1 || lo+hi == 0 {
			t.Errorf("k=%d: loads %v", k, load)
		}
	}
	if _, err := AssignImages(ims, anns, 5); !errors.Is(err, ErrInvalid) {
		t.Errorf("k above the number of annotators: %v", err)
	}
	if _, err := AssignImages(ims, []int64{1, 1}, 1); !errors.Is(err, ErrInvalid) {
		t.Errorf("an annotator twice: %v", err)
	}
}
