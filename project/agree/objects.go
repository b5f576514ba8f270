package agree

import (
	"sort"

	"boxwright/project"
)

// Object groups the boxes of several annotators that show the same thing:
// Members[annotator] = index of that annotator's box, at most one per
// annotator.
type Object struct {
	Members map[int]int
}

// annotators returns the object's annotators in ascending order, so that
// sums over members are the same on every run.
func (o Object) annotators() []int {
	ks := make([]int, 0, len(o.Members))
	for k := range o.Members {
		ks = append(ks, k)
	}
	sort.Ints(ks)
	return ks
}

// group is an object being built, with the running sums its mean box and
// class vote need.
type group struct {
	members map[int]int
	sum     [4]float64
	votes   map[int64]int
}

func (g *group) add(annotator, i int, b project.Box, class int64, hasClass bool) {
	g.members[annotator] = i
	g.sum[0] += b.X0
	g.sum[1] += b.Y0
	g.sum[2] += b.X1
	g.sum[3] += b.Y1
	if hasClass {
		if g.votes == nil {
			g.votes = map[int64]int{}
		}
		g.votes[class]++
	}
}

func (g *group) mean() project.Box {
	n := float64(len(g.members))
	return project.Box{X0: g.sum[0] / n, Y0: g.sum[1] / n, X1: g.sum[2] / n, Y1: g.sum[3] / n}
}

// GroupObjects groups boxes across annotators (boxes[annotator][i],
// classes[annotator][i]): annotators are taken in order; each one's boxes are
// matched (Assign, IoU against the group's current mean box, >= threshold;
// class-aware optional: same class as the group's majority class) to the
// existing groups, unmatched boxes start new groups. Deterministic.
//
// The grouping is greedy across annotators: each annotator's step is an
// optimal assignment against the groups as they stand, but an earlier step
// is never revisited, so the result can depend on the order of annotators.
// Groups are returned in the order they were started. Boxes that do not
// overlap a group never join it; classes may be nil when classAware is false,
// and with classAware a box without a class entry starts its own group. A tie
// in the majority class goes to the smallest class ID, as in Consensus.
func GroupObjects(boxes [][]project.Box, classes [][]int64, threshold float64, classAware bool) []Object {
	var groups []*group
	for k, bs := range boxes {
		var cs []int64
		if k < len(classes) {
			cs = classes[k]
		}
		// Means and majority classes are taken before the step, so that
		// this annotator's boxes are all compared with the same groups.
		means := make([]project.Box, len(groups))
		major := make([]int64, len(groups))
		hasMajor := make([]bool, len(groups))
		for g, gr := range groups {
			means[g] = gr.mean()
			major[g], _, hasMajor[g] = vote(gr.votes)
		}
		w := make([]float64, len(bs)*len(groups))
		for i, b := range bs {
			for g := range groups {
				if classAware && !(i < len(cs) && hasMajor[g] && cs[i] == major[g]) {
					continue
				}
				if iou := overlapIoU(b, means[g]); usable(iou, threshold) {
					w[i*len(groups)+g] = iou
				}
			}
		}
		joined := make([]bool, len(bs))
		for _, p := range assignWeights(w, len(bs), len(groups)) {
			i := p[0]
			c, ok := classAt(cs, i)
			groups[p[1]].add(k, i, bs[i], c, ok)
			joined[i] = true
		}
		for i, b := range bs {
			if !joined[i] {
				g := &group{members: map[int]int{}}
				c, ok := classAt(cs, i)
				g.add(k, i, b, c, ok)
				groups = append(groups, g)
			}
		}
	}
	out := make([]Object, len(groups))
	for g, gr := range groups {
		out[g] = Object{Members: gr.members}
	}
	return out
}

func classAt(cs []int64, i int) (int64, bool) {
	if i < len(cs) {
		return cs[i], true
	}
	return 0, false
}

// vote returns the most frequent class, whether others had as many votes
// (the smallest tied class ID wins) and whether there was any vote at all.
func vote(votes map[int64]int) (class int64, tie, ok bool) {
	best := 0
	for c, n := range votes {
		switch {
		case n > best:
			class, best, tie = c, n, false
		case n == best:
			tie = true
			if c < class {
				class = c
			}
		}
	}
	return class, tie, best > 0
}

// ConsensusBox is one object that enough annotators saw.
type ConsensusBox struct {
	Box     project.Box
	Class   int64
	Support int  // annotators who drew it
	Tie     bool // the class vote was tied (the smallest class ID among the tied wins; flag for review)
	Object  int  // index into the objects
}

// Consensus keeps objects with at least minSupport members (minSupport <= 0
// means a strict majority of n annotators: n/2+1), box = mean (or with
// median=true the per-coordinate median) of members' boxes, class = majority
// vote.
//
// The median of an even number of values is the mean of the middle two.
// Members whose box index is out of range are ignored; members without a
// class entry do not vote, and an object with no votes gets class 0. Results
// follow the order of the objects.
func Consensus(objects []Object, boxes [][]project.Box, classes [][]int64, n, minSupport int, median bool) []ConsensusBox {
	if minSupport <= 0 {
		minSupport = MajoritySupport(n)
	}
	var out []ConsensusBox
	var coord [4][]float64
	for oi, o := range objects {
		for c := range coord {
			coord[c] = coord[c][:0]
		}
		votes := map[int64]int{}
		for _, k := range o.annotators() {
			i := o.Members[k]
			if k < 0 || k >= len(boxes) || i < 0 || i >= len(boxes[k]) {
				continue
			}
			b := boxes[k][i]
			for c, v := range [4]float64{b.X0, b.Y0, b.X1, b.Y1} {
				coord[c] = append(coord[c], v)
			}
			if k < len(classes) {
				if cl, ok := classAt(classes[k], i); ok {
					votes[cl]++
				}
			}
		}
		support := len(coord[0])
		if support == 0 || support < minSupport {
			continue
		}
		var box [4]float64
		for c := range coord {
			if median {
				box[c] = medianOf(coord[c])
			} else {
				box[c] = meanOf(coord[c])
			}
		}
		class, tie, _ := vote(votes)
		out = append(out, ConsensusBox{
			Box:     project.Box{X0: box[0], Y0: box[1], X1: box[2], Y1: box[3]},
			Class:   class,
			Support: support,
			Tie:     tie,
			Object:  oi,
		})
	}
	return out
}

func meanOf(xs []float64) float64 {
	s := 0.0
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}

// medianOf sorts xs in place.
func medianOf(xs []float64) float64 {
	sort.Float64s(xs)
	m := len(xs) / 2
	if len(xs)%2 == 1 {
		return xs[m]
	}
	return (xs[m-1] + xs[m]) / 2
}
