package agree

import (
	"math"
	"testing"
)

var miss = math.NaN()

// wikipediaAlpha is the example of the Wikipedia article "Krippendorff's
// alpha": 3 coders, 15 units, missing values; units are rows here.
func wikipediaAlpha() [][]float64 {
	coders := [][]float64{
		{miss, miss, miss, miss, miss, 3, 4, 1, 2, 1, 1, 3, 3, miss, 3},
		{1, miss, 2, 1, 3, 3, 4, 3, miss, miss, miss, miss, miss, miss, miss},
		{miss, miss, 2, 1, 3, 4, 4, miss, 2, 1, 1, 3, 3, miss, 4},
	}
	return unitsFromCoders(coders)
}

func unitsFromCoders(m [][]float64) [][]float64 {
	out := make([][]float64, len(m[0]))
	for u := range out {
		out[u] = make([]float64, len(m))
		for r := range m {
			out[u][r] = m[r][u]
		}
	}
	return out
}

func TestKrippendorffAlphaWikipedia(t *testing.T) {
	units := wikipediaAlpha()
	// Wikipedia, "Krippendorff's alpha": nominal α = 0.691 (0.691358…),
	// interval α = 0.811 (0.810845…).
	for _, c := range []struct {
		level Level
		want  float64
		tol   float64
	}{{Nominal, 0.691358, 5e-7}, {Interval, 0.810845, 5e-7}} {
		a, err := KrippendorffAlpha(units, c.level)
		if err != nil {
			t.Fatal(err)
		}
		if !within(a.Alpha, c.want, c.tol) {
			t.Errorf("%v α = %.7f, want %.6f", c.level, a.Alpha, c.want)
		}
		// Counted from the table: units 1, 2 and 14 have fewer than two
		// values; the other 12 hold 26 values (the article's n).
		if a.Units != 12 || a.Values != 26 || a.Level != c.level {
			t.Errorf("%v: units %d values %d level %v, want 12 26 %v", c.level, a.Units, a.Values, a.Level, c.level)
		}
	}
}

func TestKrippendorffAlpha2011(t *testing.T) {
	// Krippendorff (2011), "Computing Krippendorff's Alpha-Reliability",
	// section C, 4 observers × 12 units with missing values: α nominal
	// 0.743, ordinal 0.815, interval 0.849, ratio 0.797. // from memory
	obs := [][]float64{
		{1, 2, 3, 3, 2, 1, 4, 1, 2, miss, miss, miss},
		{1, 2, 3, 3, 2, 2, 4, 1, 2, 5, miss, 3},
		{miss, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, miss},
		{1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, miss},
	}
	units := unitsFromCoders(obs)
	for _, c := range []struct {
		level Level
		want  float64
	}{{Nominal, 0.743}, {Ordinal, 0.815}, {Interval, 0.849}, {Ratio, 0.797}} {
		a, err := KrippendorffAlpha(units, c.level)
		if err != nil {
			t.Fatal(err)
		}
		if !within(a.Alpha, c.want, 5e-4) {
			t.Errorf("%v α = %.4f, want %.3f", c.level, a.Alpha, c.want)
		}
	}
}

func TestKrippendorffAlphaOrdinalUsesRanks(t *testing.T) {
	// The ordinal metric depends only on the order of values, so any
	// increasing relabelling leaves α unchanged. // common practice
	units := wikipediaAlpha()
	relabel := map[float64]float64{1: -10, 2: 0.5, 3: 7, 4: 1000}
	other := make([][]float64, len(units))
	for u, row := range units {
		other[u] = make([]float64, len(row))
		for r, v := range row {
			if math.IsNaN(v) {
				other[u][r] = v
			} else {
				other[u][r] = relabel[v]
			}
		}
	}
	a, _ := KrippendorffAlpha(units, Ordinal)
	b, _ := KrippendorffAlpha(other, Ordinal)
	if !within(a.Alpha, b.Alpha, 1e-12) {
		t.Errorf("ordinal α %g vs relabelled %g", a.Alpha, b.Alpha)
	}
}

func TestKrippendorffAlphaEdges(t *testing.T) {
	// All values equal: no expected disagreement, α undefined.
	a, err := KrippendorffAlpha([][]float64{{2, 2}, {2, 2, 2}, {2, miss}}, Interval)
	if err != nil || !math.IsNaN(a.Alpha) || len(a.Notes) == 0 || a.Units != 2 || a.Values != 5 {
		t.Errorf("constant: %+v, %v", a, err)
	}
	// Nothing pairable.
	a, err = KrippendorffAlpha([][]float64{{1, miss}, {miss, miss}, {}}, Nominal)
	if err != nil || !math.IsNaN(a.Alpha) || len(a.Notes) == 0 || a.Units != 0 {
		t.Errorf("unpairable: %+v, %v", a, err)
	}
	// Perfect agreement.
	a, err = KrippendorffAlpha([][]float64{{1, 1}, {2, 2, miss}, {3, 3}}, Ratio)
	if err != nil || a.Alpha != 1 {
		t.Errorf("perfect: %+v, %v", a, err)
	}
	if _, err := KrippendorffAlpha([][]float64{{1, math.Inf(1)}}, Nominal); err == nil {
		t.Error("infinite value accepted")
	}
	if _, err := KrippendorffAlpha([][]float64{{1, -1}}, Ratio); err == nil {
		t.Error("negative ratio value accepted")
	}
	if _, err := KrippendorffAlpha([][]float64{{1, 1}}, Level(9)); err == nil {
		t.Error("unknown level accepted")
	}
}

func TestParseLevel(t *testing.T) {
	for _, l := range []Level{Nominal, Ordinal, Interval, Ratio} {
		got, err := ParseLevel(" " + l.String() + " ")
		if err != nil || got != l {
			t.Errorf("ParseLevel(%q) = %v, %v", l.String(), got, err)
		}
	}
	if got, err := ParseLevel("INTERVAL"); err != nil || got != Interval {
		t.Errorf("upper case: %v, %v", got, err)
	}
	if _, err := ParseLevel("cardinal"); err == nil {
		t.Error("unknown level accepted")
	}
	if Level(7).String() != "Level(7)" {
		t.Errorf("String of unknown level = %q", Level(7).String())
	}
}

func TestPercentAgreement(t *testing.T) {
	// Two raters: share of units on which both agree (3 of 4).
	two := [][]float64{{1, 1}, {2, 2}, {1, 2}, {3, 3}, {miss, 1}}
	if got := PercentAgreement(two); !within(got, 0.75, 1e-15) {
		t.Errorf("two raters: %g, want 0.75", got)
	}
	// Three raters on one unit, 2 of 3 agree: ordered pairs 2 agreeing of 6;
	// with a two-rater unit that agrees, (2 + 2)/(6 + 2) = 0.5.
	three := [][]float64{{4, 4, 5}, {1, 1}}
	if got := PercentAgreement(three); !within(got, 0.5, 1e-15) {
		t.Errorf("three raters: %g, want 0.5", got)
	}
	if got := PercentAgreement([][]float64{{1}, {miss, 2}}); !math.IsNaN(got) {
		t.Errorf("nothing pairable: %g, want NaN", got)
	}
}
