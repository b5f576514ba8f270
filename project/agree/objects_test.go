package agree

import (
	"math"
	"reflect"
	"testing"

	"boxwright/project"
)

// threeAnnotators: a car (class 1) near [0,0,10,10] that all three drew and
// a person (class 2) near [20,0,30,20] that annotator 2 missed. Annotator 1
// drew them in the other order.
func threeAnnotators() ([][]project.Box, [][]int64) {
	return [][]project.Box{
			{bx(0, 0, 10, 10), bx(20, 0, 30, 20)},
			{bx(20, 1, 30, 21), bx(1, 0, 11, 10)},
			{bx(0, 1, 10, 11)},
		}, [][]int64{
			{1, 2},
			{2, 1},
			{1},
		}
}

func members(objs []Object) []map[int]int {
	out := make([]map[int]int, len(objs))
	for i, o := range objs {
		out[i] = o.Members
	}
	return out
}

func sameBox(a, b project.Box) bool {
	return math.Abs(a.X0-b.X0) < 1e-12 && math.Abs(a.Y0-b.Y0) < 1e-12 &&
		math.Abs(a.X1-b.X1) < 1e-12 && math.Abs(a.Y1-b.Y1) < 1e-12
}

// Worked out by hand: annotator 1's boxes meet the groups' means with IoU
// 190/210 (person) and 90/110 (car); annotator 2's car meets the car group's
// mean [0.5,0,10.5,10] with 85.5/114.5 ≈ 0.747.
func TestGroupObjectsOneMissed(t *testing.T) {
	boxes, classes := threeAnnotators()
	for _, aware := range []bool{false, true} {
		got := members(GroupObjects(boxes, classes, 0.5, aware))
		want := []map[int]int{{0: 0, 1: 1, 2: 0}, {0: 1, 1: 0}}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("classAware=%v: objects %v, want %v", aware, got, want)
		}
	}
}

func TestGroupObjectsClassAware(t *testing.T) {
	same := bx(0, 0, 10, 10)
	boxes := [][]project.Box{{same}, {same}, {same}}
	classes := [][]int64{{1}, {2}, {2}}
	// Agnostic: one object whatever the classes.
	if got, want := members(GroupObjects(boxes, classes, 0.5, false)), []map[int]int{{0: 0, 1: 0, 2: 0}}; !reflect.DeepEqual(got, want) {
		t.Errorf("agnostic: %v, want %v", got, want)
	}
	// Aware: annotator 1's class 2 cannot join annotator 0's class 1 and
	// starts its own group, which annotator 2 then joins.
	if got, want := members(GroupObjects(boxes, classes, 0.5, true)), []map[int]int{{0: 0}, {1: 0, 2: 0}}; !reflect.DeepEqual(got, want) {
		t.Errorf("aware: %v, want %v", got, want)
	}
}

// Each annotator's step is an optimal assignment: with the scene of the
// "one box overlapping two" match test, annotator 1's boxes cross over.
func TestGroupObjectsOptimalStep(t *testing.T) {
	boxes := [][]project.Box{
		{bx(0, 0, 10, 10), bx(3, 0, 13, 10)},
		{bx(1, 0, 11, 10), bx(0, 2, 10, 12)},
	}
	got := members(GroupObjects(boxes, nil, 0.5, false))
	want := []map[int]int{{0: 0, 1: 1}, {0: 1, 1: 0}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("objects %v, want %v", got, want)
	}
}

func TestGroupObjectsDeterministic(t *testing.T) {
	r := newBenchRand(7)
	truth := randomBoxes(r, 20)
	var boxes [][]project.Box
	for range 5 {
		boxes = append(boxes, redraw(r, truth))
	}
	first := GroupObjects(boxes, nil, 0.5, false)
	for range 10 {
		if got := GroupObjects(boxes, nil, 0.5, false); !reflect.DeepEqual(got, first) {
			t.Fatal("GroupObjects differs between runs")
		}
	}
	seen := map[[2]int]bool{}
	for _, o := range first {
		for k, i := range o.Members {
			if seen[[2]int{k, i}] {
				t.Fatalf("box %d of annotator %d is in two objects", i, k)
			}
			seen[[2]int{k, i}] = true
		}
	}
	if len(seen) != 100 {
		t.Fatalf("%d boxes grouped, want 100", len(seen))
	}
}

func TestConsensus(t *testing.T) {
	boxes, classes := threeAnnotators()
	objs := GroupObjects(boxes, classes, 0.5, false)

	// Default minSupport with 3 annotators is 2: both objects stay. Mean
	// of the car's X0 = (0+1+0)/3, X1 = (10+11+10)/3 and likewise for Y;
	// the person's two boxes average to [20,0.5,30,20.5].
	got := Consensus(objs, boxes, classes, 3, 0, false)
	want := []ConsensusBox{
		{Box: bx(1.0/3, 1.0/3, 31.0/3, 31.0/3), Class: 1, Support: 3, Object: 0},
		{Box: bx(20, 0.5, 30, 20.5), Class: 2, Support: 2, Object: 1},
	}
	checkConsensus(t, "mean", got, want)

	// Per-coordinate median: of three values the middle one; of two their
	// mean.
	got = Consensus(objs, boxes, classes, 3, 0, true)
	want[0].Box = bx(0, 0, 10, 10)
	checkConsensus(t, "median", got, want)

	got = Consensus(objs, boxes, classes, 3, 3, true)
	checkConsensus(t, "minSupport 3", got, want[:1])
}

func TestConsensusDefaultMajority(t *testing.T) {
	b := bx(0, 0, 10, 10)
	boxes := [][]project.Box{{b, b}, {b, b}, {b}, {}}
	objs := []Object{{Members: map[int]int{0: 0, 1: 0, 2: 0}}, {Members: map[int]int{0: 1, 1: 1}}}
	// A strict majority of 4 annotators is 3; of 5 it is also 3; of 3 it is 2.
	for _, c := range []struct{ n, kept int }{{4, 1}, {5, 1}, {3, 2}, {2, 2}} {
		if got := Consensus(objs, boxes, nil, c.n, 0, false); len(got) != c.kept {
			t.Errorf("n=%d: kept %d objects, want %d", c.n, len(got), c.kept)
		}
	}
}

func TestConsensusClassVote(t *testing.T) {
	b := bx(0, 0, 10, 10)
	boxes := [][]project.Box{{b}, {b}, {b}}
	all := Object{Members: map[int]int{0: 0, 1: 0, 2: 0}}
	two := Object{Members: map[int]int{1: 0, 2: 0}}
	cases := []struct {
		name    string
		obj     Object
		classes [][]int64
		class   int64
		tie     bool
	}{
		{"majority", all, [][]int64{{2}, {2}, {1}}, 2, false},
		{"three-way tie", all, [][]int64{{3}, {1}, {2}}, 1, true},
		{"two-way tie", two, [][]int64{{9}, {5}, {2}}, 2, true},
		{"unanimous", all, [][]int64{{4}, {4}, {4}}, 4, false},
		{"no classes", all, nil, 0, false},
	}
	for _, c := range cases {
		got := Consensus([]Object{c.obj}, boxes, c.classes, 3, 1, false)
		if len(got) != 1 || got[0].Class != c.class || got[0].Tie != c.tie {
			t.Errorf("%s: %+v, want class %d tie %v", c.name, got, c.class, c.tie)
		}
	}
}

func checkConsensus(t *testing.T, name string, got, want []ConsensusBox) {
	t.Helper()
	ok := len(got) == len(want)
	for i := 0; ok && i < len(got); i++ {
		g, w := got[i], want[i]
		ok = sameBox(g.Box, w.Box) && g.Class == w.Class && g.Support == w.Support && g.Tie == w.Tie && g.Object == w.Object
	}
	if !ok {
		t.Errorf("%s: Consensus = %+v, want %+v", name, got, want)
	}
}
