package agree

import (
	"errors"
	"math"
	"strconv"
	"strings"
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
	r, err := ReadRatings(strings.NewReader(csvText(rows)), "r.csv")
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
	r, err := ReadRatings(strings.NewReader(csvText(rows)), "r.csv")
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
	if _, err := ReadRatings(strings.NewReader("A\n1\n"), "r.csv"); err == nil || err.Error() != "r.csv, line 1: the header must name at least two raters, one column each" {
		t.Errorf("one rater: %v", err)
	}
	if _, err := ReadTable(strings.NewReader(",a,b\na,1,2\nb,3,x\n"), "t.csv"); err == nil || err.Error() != `t.csv, line 3, column 3: "x" is not a number` {
		t.Errorf("bad cell: %v", err)
	}
	m, err := ReadTable(strings.NewReader(",a,b\na,1,2\nb,3,4\n"), "t.csv")
	if err != nil || len(m.Values) != 2 || m.Values[1][0] != 3 || m.Names[1] != "b" || !m.Named {
		t.Errorf("named table: %+v %v", m, err)
	}
	if _, err := ReadWeights(strings.NewReader("0,2\n3\n"), "w.csv"); err == nil || err.Error() != "w.csv: line 2 has 1 cells, line 1 has 2: every row of the table of weights needs as many (cells are separated by a comma, as the first line shows)" {
		t.Errorf("ragged: %v", err)
	}
}

// csvText writes rows as comma-separated lines.
func csvText(rows [][]string) string {
	var b strings.Builder
	for _, r := range rows {
		b.WriteString(strings.Join(r, ",") + "\n")
	}
	return b.String()
}

// Counts far below 1 (a total of 6e-310) leave kappa as it is, for kappa
// depends only on the proportions (Cohen 1960, Educational and
// Psychological Measurement 20:37–46), but n(1 − pe)² underflows and the
// standard errors would be +Inf: they are undefined (NaN) with a note.
func TestKappaOfTinyCountsHasNoInfiniteError(t *testing.T) {
	tiny, err := CohenKappa([][]float64{{1e-310, 1e-310}, {1e-310, 3e-310}})
	if err != nil {
		t.Fatal(err)
	}
	plain, _ := CohenKappa([][]float64{{1, 1}, {1, 3}})
	if math.Abs(tiny.Kappa-plain.Kappa) > 1e-9 || !math.IsNaN(tiny.SE) || !math.IsNaN(tiny.SE0) || !math.IsNaN(tiny.Z) || !math.IsNaN(tiny.CI95[0]) || len(tiny.Notes) == 0 {
		t.Errorf("tiny counts: %+v, want kappa %v and undefined errors", tiny, plain.Kappa)
	}
	if _, err := CohenKappa([][]float64{{1e308, 1e308}, {1e308, 1e308}}); err == nil {
		t.Errorf("a total beyond the largest float64 was accepted")
	}
}

// Interval values whose squared differences overflow: an error, not a
// NaN alpha without a word.
func TestAlphaOfValuesTooFarApart(t *testing.T) {
	if a, err := KrippendorffAlpha([][]float64{{1e200, -1e200}, {0, 1e200}}, Interval); err == nil {
		t.Errorf("alpha %+v, want an error", a)
	}
}

// The ratings reader keeps each unit's line (blank lines skipped), reads
// an empty first header cell as a column of unit names, and sorts numeric
// categories as numbers with ties in text order, the same every time.
func TestReadRatingsLinesAndCategories(t *testing.T) {
	r, err := ReadRatings(strings.NewReader("\ufeff;A;B\r\n\r\nu1;10;2\r\nu2;1.0;\r\nu3;;1\r\n"), "r.csv")
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Raters) != 2 || r.Raters[0] != "A" || len(r.Units) != 3 || r.Units[1][0] != "1.0" || r.Units[1][1] != "" {
		t.Fatalf("read %+v", r)
	}
	if r.Lines[0] != 3 || r.Lines[2] != 5 {
		t.Errorf("lines %v, want 3 4 5", r.Lines)
	}
	for range 20 {
		if got := r.Categories(); strings.Join(got, " ") != "1 1.0 2 10" {
			t.Fatalf("categories %v, want 1 1.0 2 10", got)
		}
	}
	_, err = CompareRatings(r, RatingsOptions{Level: Interval, Categories: []string{"1", "1.0", "2", "x"}})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Line != 3 || ie.Rater != "A" {
		t.Errorf("unknown category on line 3: %v", err)
	}
}

// A line with fewer cells than raters (a file cut short) is read with
// missing ratings, and a note says which lines; full lines and lines with
// empty cells written out get no note.
func TestShortRatingLinesAreNoted(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"r1,r2,r3\na,b,a\na\nb,b,b\n", "line 3 holds fewer cells than the 3 raters; the missing cells are read as missing ratings"},
		{"r1,r2\na,b\na\nb\n", "2 lines (3, 4) hold fewer cells than the 2 raters"},
		{"r1,r2\na,b\na,\nb,b\n", ""},
	} {
		r, err := ReadRatings(strings.NewReader(c.in), "r.csv")
		if err != nil {
			t.Fatalf("%q: %v", c.in, err)
		}
		notes := strings.Join(r.Notes, "\n")
		if (c.want == "") != (notes == "") || !strings.Contains(notes, c.want) {
			t.Errorf("%q: notes %q, want %q", c.in, notes, c.want)
		}
	}
}
