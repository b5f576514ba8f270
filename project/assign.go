package project

// AssignImages hands each image to k of the annotators, in turn, so that
// everyone gets the same number of images give or take one and, for
// k > 1, each annotator is paired with the others about equally often
// (a cyclic design: image i goes to annotators i·k, i·k+1, … i·k+k−1,
// counted modulo their number). k = 1 gives disjoint batches; k equal to
// the number of annotators gives every image to everyone, as a full
// agreement study needs.
func AssignImages(images, annotators []int64, k int) (map[int64][]int64, error) {
	n := len(annotators)
	if k < 1 || k > n {
		return nil, Explained(ErrInvalid, "each image to %d of %d annotators: give a number from 1 to %d", k, n, n)
	}
	seen := map[int64]bool{}
	for _, a := range annotators {
		if seen[a] {
			return nil, Explained(ErrInvalid, "annotator %d is named twice", a)
		}
		seen[a] = true
	}
	out := make(map[int64][]int64, len(images))
	for i, im := range images {
		if _, dup := out[im]; dup {
			return nil, Explained(ErrInvalid, "image %d is named twice", im)
		}
		to := make([]int64, k)
		for j := range k {
			to[j] = annotators[(i*k+j)%n]
		}
		out[im] = to
	}
	return out, nil
}
