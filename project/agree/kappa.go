package agree

import (
	"fmt"
	"math"
	"strings"
)

// z975 is the 97.5 % quantile of the standard normal distribution, for
// two-sided 95 % confidence intervals.
const z975 = 1.959963984540054

// Kappa is Cohen's kappa (weighted or not) with its inference.
type Kappa struct {
	N      float64    // total count
	Po, Pe float64    // observed and chance agreement (weighted: 1 − weighted disagreement, weights scaled to a maximum of 1)
	Kappa  float64    // NaN when undefined (pe = 1)
	SE     float64    // asymptotic standard error, Fleiss, Cohen & Everitt (1969); NaN when undefined
	CI95   [2]float64 // Kappa ± 1.959964 SE
	SE0    float64    // standard error under the null hypothesis kappa = 0
	Z      float64    // Kappa / SE0
	Notes  []string   // why a figure is undefined, etc.
}

// CohenKappa computes unweighted kappa of a k×k count table (rows rater A,
// columns rater B). Errors: not square, negative/non-finite counts, total 0.
func CohenKappa(table [][]float64) (Kappa, error) {
	p, n, err := kappaProportions(table)
	if err != nil {
		return Kappa{}, fmt.Errorf("cohen kappa: %w", err)
	}
	k := len(p)
	// Unweighted kappa is weighted kappa with agreement weights 1 on the
	// diagonal and 0 elsewhere; the general formulas reduce to FCE (1969).
	w := make([][]float64, k)
	for i := range w {
		w[i] = make([]float64, k)
		w[i][i] = 1
	}
	return kappaFromAgreement(p, n, w), nil
}

// DisagreementWeights returns k×k disagreement weights: "linear" |i−j|,
// "quadratic" (i−j)²; "none" (or "") gives nil, meaning unweighted kappa.
func DisagreementWeights(kind string, k int) ([][]float64, error) {
	kind = strings.ToLower(strings.TrimSpace(kind))
	if kind == "none" || kind == "" {
		return nil, nil
	}
	if k < 1 {
		return nil, fmt.Errorf("disagreement weights: need at least one category, got %d", k)
	}
	var f func(d float64) float64
	switch kind {
	case "linear":
		f = math.Abs
	case "quadratic":
		f = func(d float64) float64 { return d * d }
	default:
		return nil, fmt.Errorf("disagreement weights: unknown kind %q (want none, linear or quadratic)", kind)
	}
	w := make([][]float64, k)
	for i := range w {
		w[i] = make([]float64, k)
		for j := range w[i] {
			w[i][j] = f(float64(i - j))
		}
	}
	return w, nil
}

// WeightedKappa computes kappa with disagreement weights as in Cohen (1968):
// 0 on the diagonal, larger means worse; the result does not depend on
// scaling the weights. It checks that weights are square, of the table's
// size, finite, non-negative and zero on the diagonal, naming the offending
// row and column. SE and SE0 follow Fleiss, Cohen & Everitt (1969) for
// weighted kappa. Nil weights give unweighted kappa.
func WeightedKappa(table, weights [][]float64) (Kappa, error) {
	if weights == nil {
		return CohenKappa(table)
	}
	p, n, err := kappaProportions(table)
	if err != nil {
		return Kappa{}, fmt.Errorf("weighted kappa: %w", err)
	}
	k := len(p)
	if len(weights) != k {
		return Kappa{}, fmt.Errorf("weighted kappa: weights have %d rows, table has %d", len(weights), k)
	}
	vmax := 0.0
	for i, row := range weights {
		if len(row) != k {
			return Kappa{}, fmt.Errorf("weighted kappa: weights row %d has %d columns, want %d", i, len(row), k)
		}
		for j, v := range row {
			switch {
			case math.IsNaN(v) || math.IsInf(v, 0):
				return Kappa{}, fmt.Errorf("weighted kappa: weight at row %d, column %d is not finite", i, j)
			case v < 0:
				return Kappa{}, fmt.Errorf("weighted kappa: weight at row %d, column %d is negative (%g)", i, j, v)
			case i == j && v != 0:
				return Kappa{}, fmt.Errorf("weighted kappa: weight at row %d, column %d is on the diagonal and must be 0, got %g", i, j, v)
			}
			vmax = math.Max(vmax, v)
		}
	}
	// Agreement weights w = 1 − v/max(v) turn Cohen's disagreement form into
	// the agreement form the FCE variance formulas are written in; dividing
	// by the maximum is what makes the result scale-free.
	w := make([][]float64, k)
	for i := range w {
		w[i] = make([]float64, k)
		for j := range w[i] {
			if vmax > 0 {
				w[i][j] = 1 - weights[i][j]/vmax
			} else {
				w[i][j] = 1
			}
		}
	}
	r := kappaFromAgreement(p, n, w)
	if vmax == 0 {
		r.Notes = append(r.Notes, "all disagreement weights are 0, so no disagreement can be measured")
	}
	return r, nil
}

// kappaProportions validates a count table and returns it divided by its total.
func kappaProportions(table [][]float64) ([][]float64, float64, error) {
	k := len(table)
	if k == 0 {
		return nil, 0, fmt.Errorf("empty table")
	}
	total := 0.0
	for i, row := range table {
		if len(row) != k {
			return nil, 0, fmt.Errorf("table is not square: row %d has %d columns, want %d", i, len(row), k)
		}
		for j, c := range row {
			if math.IsNaN(c) || math.IsInf(c, 0) {
				return nil, 0, fmt.Errorf("count at row %d, column %d is not finite", i, j)
			}
			if c < 0 {
				return nil, 0, fmt.Errorf("count at row %d, column %d is negative (%g)", i, j, c)
			}
			total += c
		}
	}
	if total == 0 {
		return nil, 0, fmt.Errorf("table total is 0")
	}
	if math.IsInf(total, 0) {
		return nil, 0, fmt.Errorf("table total is larger than the largest float64")
	}
	p := make([][]float64, k)
	for i, row := range table {
		p[i] = make([]float64, k)
		for j, c := range row {
			p[i][j] = c / total
		}
	}
	return p, total, nil
}

// kappaFromAgreement computes kappa and its standard errors from a table of
// proportions p with agreement weights w (1 = full agreement), after
// Fleiss, Cohen & Everitt (1969), Psychological Bulletin 72(5):323–327.
func kappaFromAgreement(p [][]float64, n float64, w [][]float64) Kappa {
	k := len(p)
	row := make([]float64, k)
	col := make([]float64, k)
	for i := range p {
		for j := range p[i] {
			row[i] += p[i][j]
			col[j] += p[i][j]
		}
	}
	var po, pe float64
	for i := range p {
		for j := range p[i] {
			po += w[i][j] * p[i][j]
			pe += w[i][j] * row[i] * col[j]
		}
	}
	r := Kappa{N: n, Po: po, Pe: pe}
	nan := math.NaN()
	if 1-pe <= 1e-15 {
		r.Kappa, r.SE, r.SE0, r.Z = nan, nan, nan, nan
		r.CI95 = [2]float64{nan, nan}
		r.Notes = append(r.Notes, "kappa is undefined: chance agreement is 1 (both raters use a single category, or only fully agreeing categories)")
		return r
	}
	kap := (po - pe) / (1 - pe)
	r.Kappa = kap

	// Weighted mean agreement of each row with rater B's margins, and of
	// each column with rater A's margins.
	wr := make([]float64, k)
	wc := make([]float64, k)
	for i := range w {
		for j := range w[i] {
			wr[i] += col[j] * w[i][j]
			wc[j] += row[i] * w[i][j]
		}
	}
	var s, s0 float64
	for i := range p {
		for j := range p[i] {
			d := w[i][j] - (wr[i]+wc[j])*(1-kap)
			s += p[i][j] * d * d
			d0 := w[i][j] - (wr[i] + wc[j])
			s0 += row[i] * col[j] * d0 * d0
		}
	}
	den := n * (1 - pe) * (1 - pe)
	t := kap - pe*(1-kap)
	r.SE = math.Sqrt(cancel(s, t*t) / den)
	r.SE0 = math.Sqrt(cancel(s0, pe*pe) / den)
	if den == 0 || math.IsInf(r.SE, 0) || math.IsInf(r.SE0, 0) {
		// Counts so small (far below 1) that n (1 − pe)² underflows.
		r.SE, r.SE0 = nan, nan
		r.Notes = append(r.Notes, fmt.Sprintf("the standard errors are too large to compute for a total of %g", n))
	}
	r.CI95 = [2]float64{kap - z975*r.SE, kap + z975*r.SE}
	switch {
	case math.IsNaN(r.SE0):
		r.Z = nan
	case r.SE0 > 0:
		r.Z = kap / r.SE0
	default:
		r.Z = nan
		r.Notes = append(r.Notes, "z is undefined: the standard error under the null is 0")
	}
	return r
}

// cancel returns a − b for a variance, as 0 when the difference is rounding
// noise: a true zero (perfect agreement, or a rater who used one category)
// otherwise comes out as ±1e-16, whose square root 1e-8 looks like a real
// standard error, or as a negative number whose square root is NaN.
func cancel(a, b float64) float64 {
	d := a - b
	if d <= 1e-13*math.Max(math.Abs(a), math.Abs(b)) {
		return 0
	}
	return d
}
