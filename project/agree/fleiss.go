package agree

import (
	"fmt"
	"math"
)

// Fleiss is Fleiss' kappa for many raters.
type Fleiss struct {
	Subjects, Raters int
	Po, Pe           float64
	Kappa            float64   // NaN when undefined (pe = 1)
	PerCategory      []float64 // kappa of each category against the rest (Fleiss 1971, eq. for κ_j); NaN for a category nobody or everybody used
	SE0              float64   // standard error under the null (Fleiss, Nee & Landis 1979), NaN if not computable
	Notes            []string
}

// FleissKappa computes Fleiss' (1971) kappa from counts[subject][category],
// the number of raters who put the subject in the category. Every subject
// must have the same number of raters (at least 2) and counts must be
// non-negative whole numbers; errors name the subject.
func FleissKappa(counts [][]float64) (Fleiss, error) {
	if len(counts) == 0 {
		return Fleiss{}, fmt.Errorf("fleiss kappa: no subjects")
	}
	k := len(counts[0])
	if k == 0 {
		return Fleiss{}, fmt.Errorf("fleiss kappa: no categories")
	}
	raters := -1.0
	for s, row := range counts {
		if len(row) != k {
			return Fleiss{}, fmt.Errorf("fleiss kappa: subject %d has %d categories, subject 0 has %d", s, len(row), k)
		}
		sum := 0.0
		for c, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 || v != math.Trunc(v) {
				return Fleiss{}, fmt.Errorf("fleiss kappa: subject %d, category %d: count %g is not a non-negative whole number", s, c, v)
			}
			sum += v
		}
		if raters < 0 {
			raters = sum
			if raters < 2 {
				return Fleiss{}, fmt.Errorf("fleiss kappa: subject %d has %g raters, need at least 2", s, sum)
			}
		} else if sum != raters {
			return Fleiss{}, fmt.Errorf("fleiss kappa: subject %d has %g raters, subject 0 has %g (every subject needs the same number)", s, sum, raters)
		}
	}
	N, n := float64(len(counts)), raters
	r := Fleiss{Subjects: len(counts), Raters: int(raters), PerCategory: make([]float64, k)}

	// Fleiss (1971): p_j share of all assignments in category j, P_i the
	// agreement among the raters of subject i.
	pj := make([]float64, k)
	var pbar float64
	for _, row := range counts {
		sq := 0.0
		for c, v := range row {
			pj[c] += v
			sq += v * v
		}
		pbar += (sq - n) / (n * (n - 1))
	}
	pbar /= N
	var pe, sumPQ, sumPQQP float64
	for c := range pj {
		pj[c] /= N * n
		q := 1 - pj[c]
		pe += pj[c] * pj[c]
		sumPQ += pj[c] * q
		sumPQQP += pj[c] * q * (q - pj[c])
	}
	r.Po, r.Pe = pbar, pe

	nan := math.NaN()
	if 1-pe <= 1e-15 {
		r.Kappa, r.SE0 = nan, nan
		r.Notes = append(r.Notes, "kappa is undefined: every rating is in one category")
	} else {
		r.Kappa = (pbar - pe) / (1 - pe)
		// Fleiss, Nee & Landis (1979), Psychological Bulletin 86(5):974–977.
		v0 := 2 / (N * n * (n - 1)) * (sumPQ*sumPQ - sumPQQP) / (sumPQ * sumPQ)
		r.SE0 = math.Sqrt(math.Max(v0, 0))
	}
	undef := 0
	for c := range pj {
		pq := pj[c] * (1 - pj[c])
		if pq == 0 {
			r.PerCategory[c] = nan
			undef++
			continue
		}
		dis := 0.0
		for _, row := range counts {
			dis += row[c] * (n - row[c])
		}
		r.PerCategory[c] = 1 - dis/(N*n*(n-1)*pq)
	}
	if undef > 0 {
		r.Notes = append(r.Notes, fmt.Sprintf("%d categories were used by no rater or by every rater; their kappa is undefined", undef))
	}
	return r, nil
}
