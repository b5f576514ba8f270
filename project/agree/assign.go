package agree

import (
	"math"
	"sort"
)

// Assign finds a one-to-one assignment of rows to columns that maximises the
// total score over the chosen pairs, using only pairs with score >= min
// (equality counts); rows or columns may stay unassigned. Kuhn–Munkres
// (Hungarian) algorithm, O(n^3) on the padded square matrix (of each group
// of rows and columns linked by usable pairs); deterministic. Returns pairs
// sorted by row.
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
	// Rows and columns linked by no chain of usable pairs cannot affect each
	// other, so each connected part is solved on its own: on the sparse IoU
	// matrices of real images the parts are tiny and the cubic step cheap.
	// Nodes 0..rows-1 are rows, rows..rows+cols-1 columns.
	parent := make([]int, rows+cols)
	for i := range parent {
		parent[i] = i
	}
	find := func(x int) int {
		for parent[x] != x {
			parent[x] = parent[parent[x]]
			x = parent[x]
		}
		return x
	}
	edges := 0
	for i := 0; i < rows; i++ {
		for j := 0; j < cols; j++ {
			if w[i*cols+j] > 0 {
				edges++
				if a, b := find(i), find(rows+j); a != b {
					parent[max(a, b)] = min(a, b)
				}
			}
		}
	}
	if edges == 0 {
		return nil
	}
	// Lay the nodes out part by part, parts in order of their smallest node
	// (a root is its part's smallest node) and ascending within a part, so
	// each part's rows come before its columns.
	nodes := rows + cols
	label := make([]int, 3*nodes+1)
	partOf, start := label[nodes:2*nodes], label[2*nodes:]
	for x := range label[:nodes] {
		label[x] = -1
	}
	parts := 0
	for x := 0; x < nodes; x++ {
		r := find(x)
		if label[r] < 0 {
			label[r] = parts
			parts++
		}
		partOf[x] = label[r]
		start[label[r]+1]++
	}
	for p := 1; p <= parts; p++ {
		start[p] += start[p-1]
	}
	order := make([]int, nodes)
	next := append([]int(nil), start[:parts]...)
	for x := 0; x < nodes; x++ {
		order[next[partOf[x]]] = x
		next[partOf[x]]++
	}
	var out [][2]int
	var ri, ci []int
	for p := 0; p < parts; p++ {
		ri, ci = ri[:0], ci[:0]
		for _, x := range order[start[p]:start[p+1]] {
			if x < rows {
				ri = append(ri, x)
			} else {
				ci = append(ci, x-rows)
			}
		}
		switch {
		case len(ri) == 0 || len(ci) == 0:
			// a lone row or column: no usable pair
		case len(ri) == 1 && len(ci) == 1:
			out = append(out, [2]int{ri[0], ci[0]})
		default:
			out = append(out, assignDense(w, cols, ri, ci)...)
		}
	}
	sort.Slice(out, func(x, y int) bool { return out[x][0] < out[y][0] })
	return out
}

// assignDense solves the assignment restricted to rows ri and columns ci of
// the weight matrix w (cols wide).
func assignDense(w []float64, cols int, ri, ci []int) [][2]int {
	// Minimise cost = -weight on the n×n matrix padded with zeros; a pair
	// that lands on a zero entry is a row or column left unassigned.
	n := max(len(ri), len(ci))
	cost := make([]float64, n*n)
	for a, i := range ri {
		for b, j := range ci {
			cost[a*n+b] = -w[i*cols+j]
		}
	}
	var out [][2]int
	for a, b := range hungarian(cost, n) {
		if a < len(ri) && b < len(ci) && cost[a*n+b] < 0 {
			out = append(out, [2]int{ri[a], ci[b]})
		}
	}
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
