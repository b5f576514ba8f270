package agree

import (
	"math"
	"sort"
)

// Assign finds a one-to-one assignment of rows to columns that maximises the
// total score over the chosen pairs, using only pairs with score >= min
// (equality counts); rows or columns may stay unassigned. Kuhn–Munkres
// (Hungarian) algorithm, O(n^3) on the padded square matrix; deterministic.
// Returns pairs sorted by row.
//
// A pair with score <= 0 never raises the total, so it is never returned;
// non-finite scores are never used. Rows may differ in length: missing
// entries are treated as unusable.
func Assign(score [][]float64, min float64) [][2]int {
	rows, cols := len(score), 0
	for _, r := range score {
		cols = max(cols, len(r))
	}
	w := make([]float64, rows*cols)
	for i, r := range score {
		for j, s := range r {
			if usable(s, min) {
				w[i*cols+j] = s
			}
		}
	}
	return assignWeights(w, rows, cols)
}

// usable reports whether a score may be chosen: at least min, positive and
// finite. Zero in the weight matrix then means "not a pair".
func usable(s, min float64) bool {
	return s >= min && s > 0 && !math.IsInf(s, 1)
}

// assignWeights solves the assignment for a row-major rows×cols matrix of
// weights where 0 means "not a pair" and every other entry is positive.
func assignWeights(w []float64, rows, cols int) [][2]int {
	// Rows and columns with no usable pair cannot take part; dropping them
	// keeps the cubic step small on the sparse IoU matrices of real images.
	var ri, ci []int
	colUsed := make([]bool, cols)
	for i := 0; i < rows; i++ {
		has := false
		for j := 0; j < cols; j++ {
			if w[i*cols+j] > 0 {
				has = true
				colUsed[j] = true
			}
		}
		if has {
			ri = append(ri, i)
		}
	}
	for j, u := range colUsed {
		if u {
			ci = append(ci, j)
		}
	}
	n := max(len(ri), len(ci))
	if n == 0 {
		return nil
	}
	// Minimise cost = -weight on the n×n matrix padded with zeros; a pair
	// that lands on a zero entry is a row or column left unassigned.
	cost := make([]float64, n*n)
	for a, i := range ri {
		for b, j := range ci {
			cost[a*n+b] = -w[i*cols+j]
		}
	}
	colOf := hungarian(cost, n)
	var out [][2]int
	for a, b := range colOf {
		if a < len(ri) && b < len(ci) && cost[a*n+b] < 0 {
			out = append(out, [2]int{ri[a], ci[b]})
		}
	}
	sort.Slice(out, func(x, y int) bool { return out[x][0] < out[y][0] })
	return out
}

// hungarian returns, for each row of the n×n cost matrix, the column of a
// minimum-cost perfect assignment. It is the shortest augmenting path form
// with row and column potentials, adding one row at a time.
func hungarian(cost []float64, n int) []int {
	inf := math.Inf(1)
	// Index 0 is a sentinel column; rows and columns are 1-based below.
	u := make([]float64, n+1)
	v := make([]float64, n+1)
	p := make([]int, n+1) // p[j] = row assigned to column j
	way := make([]int, n+1)
	minv := make([]float64, n+1)
	used := make([]bool, n+1)
	for i := 1; i <= n; i++ {
		p[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = inf
			used[j] = false
		}
		for {
			used[j0] = true
			i0 := p[j0]
			delta, j1 := inf, 0
			row := cost[(i0-1)*n:]
			for j := 1; j <= n; j++ {
				if used[j] {
					continue
				}
				cur := row[j-1] - u[i0] - v[j]
				if cur < minv[j] {
					minv[j] = cur
					way[j] = j0
				}
				if minv[j] < delta {
					delta = minv[j]
					j1 = j
				}
			}
			for j := 0; j <= n; j++ {
				if used[j] {
					u[p[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if p[j0] == 0 {
				break
			}
		}
		for j0 != 0 {
			j1 := way[j0]
			p[j0] = p[j1]
			j0 = j1
		}
	}
	colOf := make([]int, n)
	for j := 1; j <= n; j++ {
		colOf[p[j]-1] = j - 1
	}
	return colOf
}
