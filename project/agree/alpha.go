package agree

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"
)

// Level is the measurement level for Krippendorff's alpha; it picks the
// difference function δ².
type Level int

// Measurement levels, from the weakest assumption to the strongest.
const (
	Nominal  Level = iota // values are names: equal or not
	Ordinal               // only the order of values counts
	Interval              // differences count: δ² = (c − k)²
	Ratio                 // ratios count: δ² = ((c − k)/(c + k))², values ≥ 0
)

// ParseLevel reads "nominal", "ordinal", "interval" or "ratio" (any case).
func ParseLevel(s string) (Level, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "nominal":
		return Nominal, nil
	case "ordinal":
		return Ordinal, nil
	case "interval":
		return Interval, nil
	case "ratio":
		return Ratio, nil
	}
	return 0, fmt.Errorf("unknown measurement level %q (want nominal, ordinal, interval or ratio)", s)
}

// String returns the level's lower-case name, as ParseLevel reads it.
func (l Level) String() string {
	switch l {
	case Nominal:
		return "nominal"
	case Ordinal:
		return "ordinal"
	case Interval:
		return "interval"
	case Ratio:
		return "ratio"
	}
	return fmt.Sprintf("Level(%d)", int(l))
}

// Alpha is Krippendorff's alpha with the data it rests on.
type Alpha struct {
	Alpha  float64 // NaN when undefined (no expected disagreement)
	Units  int     // pairable units: those with at least two values
	Values int     // values in pairable units
	Level  Level
	Notes  []string
}

// KrippendorffAlpha computes alpha from units[u][r], the value rater r gave
// unit u, with math.NaN() for missing. Rows may differ in length. Units
// with fewer than two values are not pairable and are ignored. Nominal,
// interval and ratio use the values themselves; ordinal uses the ranks of
// the distinct values in numeric order with the ordinal metric of
// Krippendorff (2011), "Computing Krippendorff's Alpha-Reliability". Alpha
// is NaN with a note when the expected disagreement is 0. Infinite values,
// negative values at the ratio level and unknown levels are errors.
func KrippendorffAlpha(units [][]float64, level Level) (Alpha, error) {
	if level < Nominal || level > Ratio {
		return Alpha{}, fmt.Errorf("krippendorff alpha: unknown level %v", level)
	}
	r := Alpha{Level: level}
	// The values of the pairable units, one after another: unit i is
	// vals[ends[i-1]:ends[i]].
	var vals []float64
	var ends []int
	for u, row := range units {
		from := len(vals)
		for j, v := range row {
			if math.IsNaN(v) {
				continue
			}
			if math.IsInf(v, 0) {
				return Alpha{}, fmt.Errorf("krippendorff alpha: unit %d, rater %d: value is infinite", u, j)
			}
			if level == Ratio && v < 0 {
				return Alpha{}, fmt.Errorf("krippendorff alpha: unit %d, rater %d: value %g is negative, which the ratio level does not allow", u, j, v)
			}
			vals = append(vals, v)
		}
		if len(vals)-from >= 2 {
			ends = append(ends, len(vals))
			r.Values += len(vals) - from
		} else {
			vals = vals[:from]
		}
	}
	r.Units = len(ends)
	if r.Units == 0 {
		r.Alpha = math.NaN()
		r.Notes = append(r.Notes, "alpha is undefined: no unit has two or more values")
		return r, nil
	}

	// Distinct values in numeric order index the coincidence matrix; at[i]
	// is the index of vals[i].
	distinct, at := distinctIndex(vals)
	V := len(distinct)

	// Coincidence matrix o_ck (o[c*V+k]): each unit adds its ordered pairs
	// of values from different raters, weighted 1/(m_u − 1).
	o := make([]float64, V*V)
	from := 0
	for _, to := range ends {
		unit := at[from:to]
		w := 1 / float64(len(unit)-1)
		for a := range unit {
			for b := range unit {
				if a != b {
					o[unit[a]*V+unit[b]] += w
				}
			}
		}
		from = to
	}
	nc := make([]float64, V)
	n := 0.0
	for c := range V {
		for k := range V {
			nc[c] += o[c*V+k]
		}
		n += nc[c]
	}

	// cum[i] = n_0 + … + n_{i−1}, for the ordinal metric.
	cum := make([]float64, V+1)
	for i := range nc {
		cum[i+1] = cum[i] + nc[i]
	}
	delta2 := func(c, k int) float64 {
		if c == k {
			return 0
		}
		x, y := distinct[c], distinct[k]
		switch level {
		case Nominal:
			return 1
		case Ordinal:
			lo, hi := min(c, k), max(c, k)
			d := cum[hi+1] - cum[lo] - (nc[c]+nc[k])/2
			return d * d
		case Interval:
			return (x - y) * (x - y)
		default: // Ratio
			if x+y == 0 {
				return 0
			}
			d := (x - y) / (x + y)
			return d * d
		}
	}
	var do, de float64
	for c := 0; c < V; c++ {
		for k := 0; k < V; k++ {
			d := delta2(c, k)
			do += o[c*V+k] * d
			de += nc[c] * nc[k] * d
		}
	}
	// α = 1 − D_o/D_e with D_o = Σ o δ²/n and D_e = Σ n_c n_k δ²/(n(n − 1)).
	if math.IsInf(do, 0) || math.IsInf(de, 0) {
		return Alpha{}, fmt.Errorf("krippendorff alpha: the values are too far apart: their squared differences pass the largest float64 (%.3g)", math.MaxFloat64)
	}
	if de == 0 {
		r.Alpha = math.NaN()
		r.Notes = append(r.Notes, "alpha is undefined: all pairable values are the same, so no disagreement is expected")
		return r, nil
	}
	r.Alpha = 1 - (n-1)*do/de
	return r, nil
}

// distinctIndex returns the distinct values of vals in ascending order
// and the index in them of each value. Small whole numbers (classes as
// ratings) are looked up in a table, others in a map.
func distinctIndex(vals []float64) ([]float64, []int) {
	var small [256]int // 1 + index of the value, 0: not seen
	other := map[float64]int{}
	var distinct []float64
	at := make([]int, len(vals))
	for i, v := range vals {
		var slot *int
		if v >= 0 && v < float64(len(small)) && v == math.Trunc(v) {
			slot = &small[int(v)]
		} else {
			k, ok := other[v]
			if !ok {
				distinct = append(distinct, v)
				k = len(distinct)
				other[v] = k
			}
			at[i] = k - 1
			continue
		}
		if *slot == 0 {
			distinct = append(distinct, v)
			*slot = len(distinct)
		}
		at[i] = *slot - 1
	}
	// Renumber in ascending order of value.
	byValue := make([]int, len(distinct))
	for i := range byValue {
		byValue[i] = i
	}
	slices.SortFunc(byValue, func(x, y int) int { return cmp.Compare(distinct[x], distinct[y]) })
	rank := make([]int, len(distinct))
	sorted := make([]float64, len(distinct))
	for r, i := range byValue {
		rank[i], sorted[r] = r, distinct[i]
	}
	for i, k := range at {
		at[i] = rank[k]
	}
	return sorted, at
}

// PercentAgreement is the raw agreement over pairable units (two or more
// non-NaN values): the number of ordered pairs of values from different
// raters within a unit that are equal, divided by the number of all such
// pairs, pooled over units. With two raters and no missing values it is the
// share of units on which both agree. NaN when no unit is pairable.
func PercentAgreement(units [][]float64) float64 {
	var agree, pairs float64
	for _, row := range units {
		var vals []float64
		for _, v := range row {
			if !math.IsNaN(v) {
				vals = append(vals, v)
			}
		}
		m := len(vals)
		if m < 2 {
			continue
		}
		pairs += float64(m * (m - 1))
		for a := range vals {
			for b := range vals {
				if a != b && vals[a] == vals[b] {
					agree++
				}
			}
		}
	}
	if pairs == 0 {
		return math.NaN()
	}
	return agree / pairs
}
