package agree

import (
	"cmp"
	"math"
	"slices"
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
	var a assigner
	return a.assign(w, rows, cols)
}

// assigner is assignWeights' working memory, kept between calls so that
// matching image after image allocates nothing; what assign returns is
// valid until its next call.
type assigner struct {
	parent, label, order, next, ri, ci []int
	colSeen                            []bool
	out                                [][2]int
	cost                               []float64
	h                                  hungarianMemory
}

// ints returns s with length n and every element zero, reusing its array
// when it is large enough.
func ints(s []int, n int) []int {
	if cap(s) < n {
		return make([]int, n)
	}
	s = s[:n]
	clear(s)
	return s
}

func (as *assigner) assign(w []float64, rows, cols int) [][2]int {
	// Rows and columns linked by no chain of usable pairs cannot affect each
	// other, so each connected part is solved on its own: on the sparse IoU
	// matrices of real images the parts are tiny and the cubic step cheap.
	//
	// First the common case: no row and no column with more than one
	// usable pair. Every part is then a lone node or one pair, and the
	// pairs are the usable entries, by row.
	colSeen := bools(as.colSeen, cols)
	as.colSeen = colSeen
	simple := true
	out := as.out[:0]
	for i := 0; i < rows && simple; i++ {
		inRow := 0
		for j, x := range w[i*cols : (i+1)*cols] {
			if x > 0 {
				inRow++
				simple = simple && inRow == 1 && !colSeen[j]
				colSeen[j] = true
				out = append(out, [2]int{i, j})
			}
		}
	}
	as.out = out
	if simple {
		if len(out) == 0 {
			return nil
		}
		return out
	}
	// Nodes 0..rows-1 are rows, rows..rows+cols-1 columns.
	parent := ints(as.parent, rows+cols)
	as.parent = parent
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
	for i := 0; i < rows; i++ {
		for j := 0; j < cols; j++ {
			if w[i*cols+j] > 0 {
				if a, b := find(i), find(rows+j); a != b {
					parent[max(a, b)] = min(a, b)
				}
			}
		}
	}
	// Lay the nodes out part by part, parts in order of their smallest node
	// (a root is its part's smallest node) and ascending within a part, so
	// each part's rows come before its columns.
	nodes := rows + cols
	label := ints(as.label, 3*nodes+1)
	as.label = label
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
	order := ints(as.order, nodes)
	as.order = order
	next := append(as.next[:0], start[:parts]...)
	as.next = next
	for x := 0; x < nodes; x++ {
		order[next[partOf[x]]] = x
		next[partOf[x]]++
	}
	out = out[:0]
	ri, ci := as.ri, as.ci
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
			out = as.assignDense(out, w, cols, ri, ci)
		}
	}
	as.out, as.ri, as.ci = out, ri, ci
	if len(out) == 0 {
		return nil
	}
	// Each row is in at most one pair, so the order by row is the only one.
	slices.SortFunc(out, func(x, y [2]int) int { return cmp.Compare(x[0], y[0]) })
	return out
}

// assignDense solves the assignment restricted to rows ri and columns ci of
// the weight matrix w (cols wide), appending its pairs to out.
func (as *assigner) assignDense(out [][2]int, w []float64, cols int, ri, ci []int) [][2]int {
	// Minimise cost = -weight on the n×n matrix padded with zeros; a pair
	// that lands on a zero entry is a row or column left unassigned.
	n := max(len(ri), len(ci))
	if cap(as.cost) < n*n {
		as.cost = make([]float64, n*n)
	}
	cost := as.cost[:n*n]
	clear(cost)
	for a, i := range ri {
		for b, j := range ci {
			cost[a*n+b] = -w[i*cols+j]
		}
	}
	for a, b := range as.h.hungarian(cost, n) {
		if a < len(ri) && b < len(ci) && cost[a*n+b] < 0 {
			out = append(out, [2]int{ri[a], ci[b]})
		}
	}
	return out
}

// hungarianMemory is hungarian's working memory, kept between calls.
type hungarianMemory struct {
	u, v, minv    []float64
	p, way, colOf []int
	used          []bool
}

func floats(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	s = s[:n]
	clear(s)
	return s
}

// hungarian returns, for each row of the n×n cost matrix, the column of a
// minimum-cost perfect assignment. It is the shortest augmenting path form
// with row and column potentials, adding one row at a time. The answer is
// valid until the next call.
func (m *hungarianMemory) hungarian(cost []float64, n int) []int {
	inf := math.Inf(1)
	// Index 0 is a sentinel column; rows and columns are 1-based below.
	m.u, m.v, m.minv = floats(m.u, n+1), floats(m.v, n+1), floats(m.minv, n+1)
	m.p, m.way = ints(m.p, n+1), ints(m.way, n+1) // p[j] = row assigned to column j
	if cap(m.used) < n+1 {
		m.used = make([]bool, n+1)
	}
	u, v, minv, p, way, used := m.u, m.v, m.minv, m.p, m.way, m.used[:n+1]
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
	m.colOf = ints(m.colOf, n)
	colOf := m.colOf
	for j := 1; j <= n; j++ {
		colOf[p[j]-1] = j - 1
	}
	return colOf
}
