package agree

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

func TestAssignHandBuilt(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	cases := []struct {
		name  string
		score [][]float64
		min   float64
		want  [][2]int
	}{
		// The example of scipy.optimize.linear_sum_assignment's documentation
		// (SciPy 1.10): costs [[4,1,3],[2,0,5],[3,2,2]] have minimum 5 at
		// columns 1,0,2. As scores 10-cost the same pairs give the maximum 25.
		{"scipy doc example", [][]float64{{6, 9, 7}, {8, 10, 5}, {7, 8, 8}}, 0, [][2]int{{0, 1}, {1, 0}, {2, 2}}},
		// Worked out by hand: taking the best entry first (0.9) leaves only
		// 0.1 < min for row 1, total 0.9; crossing gives 0.8+0.8 = 1.6.
		{"greedy fails", [][]float64{{0.9, 0.8}, {0.8, 0.1}}, 0.5, [][2]int{{0, 1}, {1, 0}}},
		// By hand: (0,0)+(1,1) = 1.5 beats 1.4, 1.3 and 1.2.
		{"wide", [][]float64{{0.6, 0.7, 0}, {0.7, 0.9, 0.6}}, 0.5, [][2]int{{0, 0}, {1, 1}}},
		// By hand: the same 1.5; row 2 stays unassigned.
		{"tall", [][]float64{{0.6, 0.7}, {0.7, 0.9}, {0, 0.6}}, 0.5, [][2]int{{0, 0}, {1, 1}}},
		{"all below min", [][]float64{{0.3, 0.4}, {0.2, 0.1}}, 0.5, nil},
		// Scores equal to min count; 0.49 does not.
		{"ties at min", [][]float64{{0.5, 0.49}, {0.49, 0.5}}, 0.5, [][2]int{{0, 0}, {1, 1}}},
		{"only one at min", [][]float64{{0.49, 0.5}, {0.49, 0.49}}, 0.5, [][2]int{{0, 1}}},
		{"nil", nil, 0.5, nil},
		{"no columns", [][]float64{{}, {}}, 0.5, nil},
		// Zero and negative scores never raise the total.
		{"non-positive", [][]float64{{0, -1}, {-0.5, 0}}, -2, nil},
		{"non-finite ignored", [][]float64{{nan, 0.6}, {inf, 0.7}}, 0.5, [][2]int{{1, 1}}},
		{"ragged rows", [][]float64{{0.6}, {0.9, 0.8}}, 0.5, [][2]int{{0, 0}, {1, 1}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := Assign(c.score, c.min)
			if !reflect.DeepEqual(got, c.want) {
				t.Errorf("Assign = %v, want %v", got, c.want)
			}
		})
	}
}

// checkAssignment verifies that pairs are one-to-one, sorted by row, within
// the matrix and at least min, and returns their total score.
func checkAssignment(t *testing.T, s [][]float64, min float64, pairs [][2]int) float64 {
	t.Helper()
	rows, cols := map[int]bool{}, map[int]bool{}
	total := 0.0
	for k, p := range pairs {
		if k > 0 && pairs[k-1][0] >= p[0] {
			t.Fatalf("pairs not sorted by row: %v", pairs)
		}
		if rows[p[0]] || cols[p[1]] {
			t.Fatalf("pairs not one-to-one: %v", pairs)
		}
		rows[p[0]], cols[p[1]] = true, true
		if p[0] >= len(s) || p[1] >= len(s[p[0]]) || !(s[p[0]][p[1]] >= min) {
			t.Fatalf("pair %v outside the matrix or below min %g: %v", p, min, s)
		}
		total += s[p[0]][p[1]]
	}
	return total
}

// bruteBest is the best total over all partial one-to-one assignments, by
// exhaustive search: the definition itself, independent of the algorithm.
func bruteBest(s [][]float64, min float64, row int, usedCol []bool) float64 {
	if row == len(s) {
		return 0
	}
	best := bruteBest(s, min, row+1, usedCol) // row left unassigned
	for j, v := range s[row] {
		if usedCol[j] || !(v >= min) || v <= 0 {
			continue
		}
		usedCol[j] = true
		best = math.Max(best, v+bruteBest(s, min, row+1, usedCol))
		usedCol[j] = false
	}
	return best
}

// TestAssignExhaustive compares the total with exhaustive search on small
// matrices whose entries lie on a 0.1 grid, so that ties and entries equal
// to min are frequent.
func TestAssignExhaustive(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 3))
	for n := 0; n < 2000; n++ {
		rows, cols := r.IntN(7), r.IntN(7)
		s := make([][]float64, rows)
		for i := range s {
			s[i] = make([]float64, cols)
			for j := range s[i] {
				if r.IntN(3) > 0 {
					s[i][j] = float64(r.IntN(11)) / 10
				}
			}
		}
		min := float64(r.IntN(8)) / 10
		got := checkAssignment(t, s, min, Assign(s, min))
		want := bruteBest(s, min, 0, make([]bool, cols))
		if math.Abs(got-want) > 1e-9 {
			t.Fatalf("Assign(%v, %g) total %g, exhaustive best %g", s, min, got, want)
		}
	}
}

func TestAssignDeterministic(t *testing.T) {
	s := [][]float64{{0.5, 0.5, 0.5}, {0.5, 0.5, 0.5}, {0.5, 0.5, 0.5}}
	first := Assign(s, 0.5)
	for range 20 {
		if got := Assign(s, 0.5); !reflect.DeepEqual(got, first) {
			t.Fatalf("Assign gave %v then %v", first, got)
		}
	}
	if len(first) != 3 {
		t.Fatalf("all-tied 3×3 gave %v, want 3 pairs", first)
	}
}
