package agree

import (
	"errors"
	"math"
	"strconv"
	"testing"
)

// The Wikipedia example of "Krippendorff's alpha" (3 coders, 15 units,
// missing values) read as CSV rows, as the kappa command reads a file:
// nominal α = 0.691358…, interval α = 0.810845….
func TestCompareRatingsWikipedia(t *testing.T) {
	rows := [][]string{{"A", "B", "C"}}
	for _, u := range wikipediaAlpha() {
		row := make([]string, 3)
		for j, v := range u {
			if !math.IsNaN(v) {
				row[j] = strconv.Itoa(int(v))
			}
		}
		rows = append(rows, row)
	}
	r, err := ParseRatings(rows)
	if err != nil {
		t.Fatal(err)
	}
	if got := r.Categories(); len(got) != 4 || got[0] != "1" || got[3] != "4" {
		t.Errorf("categories %v, want 1 2 3 4", got)
	}
	for _, c := range []struct {
		level Level
		want  float64
	}{{Nominal, 0.691358}, {Interval, 0.810845}} {
		rep, err := CompareRatings(r, RatingsOptions{Level: c.level})
		if err != nil {
			t.Fatal(err)
		}
		if rep.Alpha == nil || math.Abs(rep.Alpha.Alpha-c.want) > 5e-7 {
			t.Errorf("%v: alpha %+v, want %v", c.level, rep.Alpha, c.want)
		}
		if rep.Cohen != nil || rep.Fleiss != nil || len(rep.Notes) == 0 {
			t.Errorf("three raters with missing ratings: Cohen %v, Fleiss %v, notes %v", rep.Cohen, rep.Fleiss, rep.Notes)
		}
	}
}

// Two raters: the contingency table built from the ratings is the table
// itself. The table is Cohen's (1960) 3×3 example of proportions over 200
// units (as in TestCohenKappaCohen1960), written out unit by unit: kappa
// 0.4915 unweighted; the quadratic-weighted kappa must equal the table's.
func TestCompareRatingsBuildsTheTable(t *testing.T) {
	table := [][]float64{{88, 14, 18}, {10, 40, 10}, {2, 6, 12}}
	rows := [][]string{{"A", "B"}}
	for i := range table {
		for j := range table[i] {
			for range int(table[i][j]) {
				rows = append(rows, []string{strconv.Itoa(i + 1), strconv.Itoa(j + 1)})
			}
		}
	}
	r, err := ParseRatings(rows)
	if err != nil {
		t.Fatal(err)
	}
	plain, err := CompareRatings(r, RatingsOptions{})
	if err != nil || plain.Cohen == nil || math.Abs(plain.Cohen.Kappa-0.4915) > 5e-5 {
		t.Fatalf("unweighted kappa %+v (%v), want 0.4915", plain.Cohen, err)
	}
	rep, err := CompareRatings(r, RatingsOptions{Weights: "quadratic"})
	if err != nil {
		t.Fatal(err)
	}
	w, _ := DisagreementWeights("quadratic", 3)
	want, _ := TableKappa(table, w)
	if rep.Cohen == nil || math.Abs(rep.Cohen.Kappa-want.Kappa) > 1e-12 || rep.Weights != "quadratic" || rep.Fleiss == nil {
		t.Errorf("from ratings %+v, from the table %v", rep.Cohen, want.Kappa)
	}
}

func TestRatingsAndMatrixErrorsSayWhere(t *testing.T) {
	_, err := CompareRatings(Ratings{Raters: []string{"A", "B"}, Units: [][]string{{"x", "y"}}}, RatingsOptions{Categories: []string{"x"}})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Line != 2 || ie.Rater != "B" || err.Error() != `line 2, rater "B": "y" is not one of the categories x` {
		t.Errorf("unknown category: %v", err)
	}
	if _, err := CompareRatings(Ratings{Raters: []string{"A", "B"}, Units: [][]string{{"x", "x"}}}, RatingsOptions{Categories: []string{"x", "x"}}); !errors.Is(err, ErrDuplicateCategory) {
		t.Errorf("duplicate category: %v", err)
	}
	if _, err := ParseRatings([][]string{{"A"}}); err == nil || err.Error() != "line 1: the header must name at least two raters" {
		t.Errorf("one rater: %v", err)
	}
	if _, _, err := ParseMatrix([][]string{{"", "a", "b"}, {"a", "1", "2"}, {"b", "3", "x"}}, "table of counts"); err == nil || err.Error() != `line 3, column 3: "x" is not a number (table of counts)` {
		t.Errorf("bad cell: %v", err)
	}
	m, names, err := ParseMatrix([][]string{{"", "a", "b"}, {"a", "1", "2"}, {"b", "3", "4"}}, "table of counts")
	if err != nil || len(m) != 2 || m[1][0] != 3 || names[1] != "b" {
		t.Errorf("named table: %v %v %v", m, names, err)
	}
	if _, _, err := ParseMatrix([][]string{{"1", "2"}, {"3"}}, "weights"); err == nil || err.Error() != "the weights must be square: 2 rows but row 2 has 1 values" {
		t.Errorf("ragged: %v", err)
	}
}
