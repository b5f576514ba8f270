package agree

import (
	"math"
	"math/rand/v2"
	"reflect"
	"sort"
	"testing"

	"boxwright/project"
)

func bx(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }

// sameMatch compares two matches, IoUs to 1e-12.
func sameMatch(t *testing.T, got, want ImageMatch) {
	t.Helper()
	ok := len(got.Pairs) == len(want.Pairs) &&
		reflect.DeepEqual(got.OnlyA, want.OnlyA) && reflect.DeepEqual(got.OnlyB, want.OnlyB)
	for k := 0; ok && k < len(got.Pairs); k++ {
		g, w := got.Pairs[k], want.Pairs[k]
		ok = g.A == w.A && g.B == w.B && math.Abs(g.IoU-w.IoU) < 1e-12
	}
	if !ok {
		t.Errorf("MatchBoxes = %+v, want %+v", got, want)
	}
}

// The IoUs below are worked out by hand from the areas of intersection and
// union.
func TestMatchBoxes(t *testing.T) {
	cases := []struct {
		name       string
		a, b       []project.Box
		ac, bc     []int64
		threshold  float64
		classAware bool
		want       ImageMatch
	}{
		// [2,2,8,8] inside [0,0,10,10]: IoU 36/100 = 0.36.
		{"nested below threshold", []project.Box{bx(0, 0, 10, 10)}, []project.Box{bx(2, 2, 8, 8)}, nil, nil, 0.5, false,
			ImageMatch{OnlyA: []int{0}, OnlyB: []int{0}}},
		{"nested above threshold", []project.Box{bx(0, 0, 10, 10)}, []project.Box{bx(2, 2, 8, 8)}, nil, nil, 0.3, false,
			ImageMatch{Pairs: []Pair{{0, 0, 0.36}}}},
		// A0=[0,0,10,10] meets B0=[1,0,11,10] with 90/110 = 9/11 and
		// B1=[0,2,10,12] with 80/120 = 2/3; A1=[3,0,13,10] meets B0 with
		// 80/120 = 2/3 and B1 with 56/144 < 0.5. Taking the best pair first
		// (A0-B0) would leave A1 alone: total 9/11. The optimum crosses:
		// A0-B1 + A1-B0 = 4/3.
		{"one box overlapping two", []project.Box{bx(0, 0, 10, 10), bx(3, 0, 13, 10)},
			[]project.Box{bx(1, 0, 11, 10), bx(0, 2, 10, 12)}, nil, nil, 0.5, false,
			ImageMatch{Pairs: []Pair{{0, 1, 2.0 / 3}, {1, 0, 2.0 / 3}}}},
		// [0,0,2,1] and [0,0,1,1]: intersection 1, union 2+1-1 = 2, IoU
		// exactly 0.5, which meets a threshold of 0.5.
		{"tie at threshold", []project.Box{bx(0, 0, 2, 1)}, []project.Box{bx(0, 0, 1, 1)}, nil, nil, 0.5, false,
			ImageMatch{Pairs: []Pair{{0, 0, 0.5}}}},
		{"just over the tie", []project.Box{bx(0, 0, 2, 1)}, []project.Box{bx(0, 0, 1, 1)}, nil, nil, 0.5000001, false,
			ImageMatch{OnlyA: []int{0}, OnlyB: []int{0}}},
		{"A empty", nil, []project.Box{bx(0, 0, 1, 1), bx(2, 2, 3, 3)}, nil, nil, 0.5, false,
			ImageMatch{OnlyB: []int{0, 1}}},
		{"B empty", []project.Box{bx(0, 0, 1, 1)}, nil, nil, nil, 0.5, false,
			ImageMatch{OnlyA: []int{0}}},
		{"both empty", nil, nil, nil, nil, 0.5, false, ImageMatch{}},
		// Touching boxes share no area: IoU 0 never pairs, even at threshold 0.
		{"touching at threshold 0", []project.Box{bx(0, 0, 1, 1)}, []project.Box{bx(1, 0, 2, 1)}, nil, nil, 0, false,
			ImageMatch{OnlyA: []int{0}, OnlyB: []int{0}}},
		// A zero-area box has IoU 0 with everything, itself included.
		{"degenerate box", []project.Box{bx(5, 5, 5, 5)}, []project.Box{bx(5, 5, 5, 5)}, nil, nil, 0, false,
			ImageMatch{OnlyA: []int{0}, OnlyB: []int{0}}},
		// A0 (class 1) meets B0=[0,0,10,9] (class 2) with 0.9 and
		// B1=[0,0,10,7] (class 1) with 0.7.
		{"class agnostic", []project.Box{bx(0, 0, 10, 10)}, []project.Box{bx(0, 0, 10, 9), bx(0, 0, 10, 7)},
			[]int64{1}, []int64{2, 1}, 0.5, false,
			ImageMatch{Pairs: []Pair{{0, 0, 0.9}}, OnlyB: []int{1}}},
		{"class aware", []project.Box{bx(0, 0, 10, 10)}, []project.Box{bx(0, 0, 10, 9), bx(0, 0, 10, 7)},
			[]int64{1}, []int64{2, 1}, 0.5, true,
			ImageMatch{Pairs: []Pair{{0, 1, 0.7}}, OnlyB: []int{0}}},
		{"class aware, no classes", []project.Box{bx(0, 0, 10, 10)}, []project.Box{bx(0, 0, 10, 9)},
			nil, nil, 0.5, true,
			ImageMatch{OnlyA: []int{0}, OnlyB: []int{0}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sameMatch(t, MatchBoxes(c.a, c.b, c.ac, c.bc, c.threshold, c.classAware), c.want)
		})
	}
}

// TestMatchBoxesAccountsForEveryBox checks on a busier scene that every box
// is either in one pair or listed as unmatched, never both.
func TestMatchBoxesAccountsForEveryBox(t *testing.T) {
	a, b := benchScene(newBenchRand(1), 20)
	m := MatchBoxes(a, b, nil, nil, 0.5, false)
	seenA, seenB := map[int]int{}, map[int]int{}
	for _, p := range m.Pairs {
		seenA[p.A]++
		seenB[p.B]++
		if p.IoU < 0.5 || p.IoU != a[p.A].IoU(b[p.B]) {
			t.Errorf("pair %+v: IoU %g", p, a[p.A].IoU(b[p.B]))
		}
	}
	for _, i := range m.OnlyA {
		seenA[i]++
	}
	for _, j := range m.OnlyB {
		seenB[j]++
	}
	for i := range a {
		if seenA[i] != 1 {
			t.Errorf("A's box %d appears %d times", i, seenA[i])
		}
	}
	for j := range b {
		if seenB[j] != 1 {
			t.Errorf("B's box %d appears %d times", j, seenB[j])
		}
	}
	if len(m.Pairs) < 10 {
		t.Errorf("only %d pairs in a scene of jittered copies", len(m.Pairs))
	}
}

// overlapIoU is Box.IoU, bit for bit, on boxes that overlap, touch, nest,
// miss each other or are empty, and with NaN and signed-zero coordinates.
func TestOverlapIoUIsBoxIoU(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	odd := []float64{0, math.Copysign(0, -1), math.NaN(), math.Inf(1), math.Inf(-1), 1, 2}
	coord := func() float64 {
		if rng.IntN(8) == 0 {
			return odd[rng.IntN(len(odd))]
		}
		return float64(rng.IntN(20)) + rng.Float64()*float64(rng.IntN(2))
	}
	for i := 0; i < 200000; i++ {
		a := project.Box{X0: coord(), Y0: coord(), X1: coord(), Y1: coord()}
		b := project.Box{X0: coord(), Y0: coord(), X1: coord(), Y1: coord()}
		want, got := 0.0, overlapIoU(a, b)
		if !(a.X1 <= b.X0 || b.X1 <= a.X0 || a.Y1 <= b.Y0 || b.Y1 <= a.Y0) {
			want = a.IoU(b)
		}
		if math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("overlapIoU(%v, %v) = %v, Box.IoU gives %v", a, b, got, want)
		}
	}
}

// sortedCopy sorts as sort.Float64s does, by radix for positive values
// and by comparison otherwise, and leaves its input alone.
func TestSortedCopy(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for _, n := range []int{0, 1, 5, 1023, 1024, 5000, 70000} {
		for _, kind := range []string{"iou", "ties", "tiny and huge", "with zero", "with NaN"} {
			v := make([]float64, n)
			for i := range v {
				switch kind {
				case "iou", "with zero", "with NaN":
					v[i] = rng.Float64() + math.SmallestNonzeroFloat64
				case "ties":
					v[i] = float64(1+rng.IntN(5)) / 8
				case "tiny and huge":
					v[i] = math.Ldexp(1+rng.Float64(), rng.IntN(2000)-1000)
				}
			}
			if n > 0 && kind == "with zero" {
				v[rng.IntN(n)] = 0
			}
			if n > 0 && kind == "with NaN" {
				v[rng.IntN(n)] = math.NaN()
			}
			in := append([]float64(nil), v...)
			want := append([]float64(nil), v...)
			sort.Float64s(want)
			got := sortedCopy(v)
			for i := range want {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("%s, %d values: at %d got %v, want %v", kind, n, i, got[i], want[i])
				}
			}
			for i := range in {
				if math.Float64bits(v[i]) != math.Float64bits(in[i]) {
					t.Fatalf("%s: the input changed", kind)
				}
			}
		}
	}
}
