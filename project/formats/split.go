package formats

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
)

// SplitItem is one image to place.
type SplitItem struct {
	// Key is the image's identity for grouping, the SHA-256 of its file
	// bytes: images with the same Key always go to the same split. An empty
	// Key means "identity unknown" and groups with nothing.
	Key string
	// Classes are the classes of its boxes, one entry per box.
	Classes []string
}

// SplitNames are the names of the splits, indexed by the values Split
// returns.
var SplitNames = [3]string{"train", "val", "test"}

// ParseRatios reads three split ratios separated by "/", either as
// percentages ("80/10/10", "70/30/0") or as fractions ("0.8/0.1/0.1"), and
// returns them as non-negative fractions summing to 1.
func ParseRatios(s string) ([3]float64, error) {
	var r [3]float64
	parts := strings.Split(strings.TrimSpace(s), "/")
	if len(parts) != 3 {
		return r, fmt.Errorf("split ratios %q: want three numbers train/val/test such as 80/10/10, got %d", s, len(parts))
	}
	sum := 0.0
	for i, p := range parts {
		p = strings.TrimSpace(p)
		if !plainDecimal(p) {
			return r, fmt.Errorf("split ratios %q: %s ratio %q is not a non-negative decimal number", s, SplitNames[i], p)
		}
		v, err := strconv.ParseFloat(p, 64)
		if err != nil || math.IsInf(v, 0) {
			return r, fmt.Errorf("split ratios %q: %s ratio %q is out of range", s, SplitNames[i], p)
		}
		r[i] = v
		sum += v
	}
	// Accept either scale; a small tolerance absorbs "0.33/0.33/0.34"-style
	// rounding in the written number, not a real mismatch.
	const tol = 1e-6
	switch {
	case math.Abs(sum-100) <= 100*tol, math.Abs(sum-1) <= tol:
	default:
		return [3]float64{}, fmt.Errorf("split ratios %q: the three numbers sum to %g; they must sum to 100 (percentages) or 1 (fractions)", s, sum)
	}
	for i := range r {
		r[i] /= sum
	}
	return r, nil
}

// plainDecimal reports whether s is digits with at most one decimal point
// and at least one digit; it keeps out signs, exponents, hex, "NaN" and
// "Inf", which strconv would otherwise accept.
func plainDecimal(s string) bool {
	digits, dots := 0, 0
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c >= '0' && c <= '9':
			digits++
		case c == '.':
			dots++
		default:
			return false
		}
	}
	return digits > 0 && dots <= 1
}

// splitGroup is the unit of assignment: all items sharing one Key.
type splitGroup struct {
	key     string
	items   []int
	classes []classCount // sorted by class index
}

type classCount struct {
	class int
	boxes float64
}

// Split assigns every item to exactly one split (0 train, 1 val, 2 test)
// and returns one index per item. The result depends only on the items and
// the seed.
//
// Method: iterative stratification (K. Sechidis, G. Tsoumakas and
// I. Vlahavas, "On the Stratification of Multi-label Data", ECML PKDD 2011,
// LNCS 6913, pp. 145–158), adapted to groups and box counts. Items with the
// same Key form one group, which is the unit. Each split wants ratio×N
// images and, for each class, ratio×(boxes of that class). Repeatedly the
// class held by the fewest unassigned groups is taken, and each unassigned
// group holding it (in seeded random order) goes to the split that still
// wants the most boxes of that class; ties go to the split that still wants
// the most images, then to a seeded random choice. Groups without boxes go
// by the images still wanted. Our addition to the paper: a group only goes
// to a split that still has room for all its images (unless none has), so
// image counts stay within about one group of the ratios. A split whose
// ratio is 0 receives nothing.
//
// Invalid ratios do not panic: negative or NaN entries count as 0, the rest
// is normalised, and if nothing is left every item goes to train.
func Split(items []SplitItem, ratios [3]float64, seed int64) []int {
	out := make([]int, len(items))
	if len(items) == 0 {
		return out
	}
	r, ok := normaliseRatios(ratios)
	if !ok {
		return out // all train
	}

	groups, nClasses := buildGroups(items)
	rng := rand.New(rand.NewPCG(uint64(seed), 0x426f7877726967)) // fixed stream: "Boxwrig"
	rng.Shuffle(len(groups), func(i, j int) { groups[i], groups[j] = groups[j], groups[i] })

	// Desired counts still open, per split: images, and boxes per class.
	var wantImages [3]float64
	var wantBoxes [3][]float64
	totalBoxes := make([]float64, nClasses)
	for _, g := range groups {
		for _, cc := range g.classes {
			totalBoxes[cc.class] += cc.boxes
		}
	}
	for s := range 3 {
		wantImages[s] = r[s] * float64(len(items))
		wantBoxes[s] = make([]float64, nClasses)
		for c := range nClasses {
			wantBoxes[s][c] = r[s] * totalBoxes[c]
		}
	}

	// For each class, the groups holding it, in shuffled order, and how
	// many of them are still unassigned.
	holders := make([][]int, nClasses)
	for gi, g := range groups {
		for _, cc := range g.classes {
			holders[cc.class] = append(holders[cc.class], gi)
		}
	}
	open := make([]int, nClasses)
	for c := range nClasses {
		open[c] = len(holders[c])
	}
	assigned := make([]int, len(groups))
	for i := range assigned {
		assigned[i] = -1
	}
	place := func(gi, s int) {
		g := groups[gi]
		assigned[gi] = s
		wantImages[s] -= float64(len(g.items))
		for _, cc := range g.classes {
			wantBoxes[s][cc.class] -= cc.boxes
			open[cc.class]--
		}
	}

	for {
		// The class with the fewest open groups; ties by class index,
		// which is alphabetical, so the order never depends on maps.
		c := -1
		for k := range nClasses {
			if open[k] > 0 && (c < 0 || open[k] < open[c]) {
				c = k
			}
		}
		if c < 0 {
			break
		}
		for _, gi := range holders[c] {
			if assigned[gi] < 0 {
				place(gi, chooseSplit(r, len(groups[gi].items), wantBoxes, c, wantImages, rng))
			}
		}
	}
	for gi := range groups {
		if assigned[gi] < 0 {
			place(gi, chooseSplit(r, len(groups[gi].items), wantBoxes, -1, wantImages, rng))
		}
	}

	for gi, g := range groups {
		for _, it := range g.items {
			out[it] = assigned[gi]
		}
	}
	return out
}

// normaliseRatios clamps bad entries to 0 and scales the rest to sum 1.
func normaliseRatios(ratios [3]float64) ([3]float64, bool) {
	var r [3]float64
	sum := 0.0
	for i, v := range ratios {
		if v > 0 && !math.IsInf(v, 1) {
			r[i] = v
			sum += v
		}
	}
	if sum <= 0 || math.IsInf(sum, 0) {
		return r, false
	}
	for i := range r {
		r[i] /= sum
	}
	return r, true
}

// buildGroups groups items by Key (sorted by key so the result does not
// depend on map order) and counts each group's boxes per class. Classes
// are indexed in sorted order.
func buildGroups(items []SplitItem) ([]splitGroup, int) {
	classIndex := map[string]int{}
	var names []string
	for _, it := range items {
		for _, c := range it.Classes {
			if _, ok := classIndex[c]; !ok {
				classIndex[c] = 0
				names = append(names, c)
			}
		}
	}
	slices.Sort(names)
	for i, n := range names {
		classIndex[n] = i
	}

	byKey := map[string]int{}
	var groups []splitGroup
	for i, it := range items {
		if it.Key == "" {
			groups = append(groups, splitGroup{items: []int{i}})
			continue
		}
		gi, ok := byKey[it.Key]
		if !ok {
			gi = len(groups)
			byKey[it.Key] = gi
			groups = append(groups, splitGroup{key: it.Key})
		}
		groups[gi].items = append(groups[gi].items, i)
	}
	// Stable sort keeps keyless items in input order among themselves.
	slices.SortStableFunc(groups, func(a, b splitGroup) int { return strings.Compare(a.key, b.key) })

	counts := make([]float64, len(names))
	var touched []int
	for gi := range groups {
		g := &groups[gi]
		for _, it := range g.items {
			for _, c := range items[it].Classes {
				k := classIndex[c]
				if counts[k] == 0 {
					touched = append(touched, k)
				}
				counts[k]++
			}
		}
		slices.Sort(touched)
		g.classes = make([]classCount, len(touched))
		for j, k := range touched {
			g.classes[j] = classCount{class: k, boxes: counts[k]}
			counts[k] = 0
		}
		touched = touched[:0]
	}
	return groups, len(names)
}

// chooseSplit picks the split for a group of size images while placing
// class c (-1: by images only).
func chooseSplit(r [3]float64, size int, wantBoxes [3][]float64, c int, wantImages [3]float64, rng *rand.Rand) int {
	const eps = 1e-9
	var cand [3]int
	n := 0
	for s := range 3 {
		if r[s] > 0 && wantImages[s] >= float64(size)-eps {
			cand[n] = s
			n++
		}
	}
	if n == 0 {
		// No split has room: the one that wants the most images overshoots
		// least.
		for s := range 3 {
			if r[s] > 0 {
				cand[n] = s
				n++
			}
		}
	}
	best := cand[:n]
	if c >= 0 {
		best = keepMax(best, func(s int) float64 { return wantBoxes[s][c] }, eps)
	}
	best = keepMax(best, func(s int) float64 { return wantImages[s] }, eps)
	if len(best) == 1 {
		return best[0]
	}
	return best[rng.IntN(len(best))]
}

// keepMax filters splits (in place) to those whose score is within eps of
// the largest.
func keepMax(splits []int, score func(int) float64, eps float64) []int {
	m := math.Inf(-1)
	for _, s := range splits {
		m = max(m, score(s))
	}
	out := splits[:0]
	for _, s := range splits {
		if score(s) >= m-eps {
			out = append(out, s)
		}
	}
	return out
}
