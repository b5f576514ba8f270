package agree

import (
	"bytes"
	"errors"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// Seeds for the readers: the layouts the kappa command documents, and the
// faults the hostile test of issue 14 found.
var tableSeeds = []string{
	"20,5\n10,15\n",
	",a,b,c\na,0,4,1\nb,0,8,0\nc,0,1,5\n",
	"20;5\n10;15\n",
	"20\t5\n10\t15\n",
	"\ufeff;yes;no\r\nyes;20;5\r\nno;10;15\r\n",
	"yes,20,5\nno,10,15\n",
	"yes,no\n20,5\n10,15\n",
	"A\\B,yes,no\nyes,20,5\nno,10,15\n",
	"\n\"ye\"\"s\",20,5\n\n\"n,o\" , 10 , 15 \n",
	"20,5,\n10,15,\n",
	"1e308,1e308\n1e308,1e308\n",
	"1e-310,1e-310\n1e-310,3e-310\n",
	"NaN,1\n1,Inf\n",
	"1,x\n3,4\n",
	",a,b\na,1,2\nc,3,4\n",
	"7\n",
	"0,0\n0,0\n",
	"\"a\nb\",1\n",
	"\xff\xfe2\x000\x00",
}

var weightSeeds = []string{
	"0,1\n1,0\n",
	"0,3,6\n3,0,3\n6,3,0\n",
	",a,b\na,0,1\nb,1,0\n",
	"1,1\n1,0\n",
	"0;0,5\n0,5;0\n",
	"0,-1\n1,0\n",
}

var ratingSeeds = []string{
	"a,b\nyes,yes\nyes,no\nno,no\n",
	"c1,c2,c3\n,1,\n,,\n2,2,2\n1,1,1\n3,3,3\n",
	";a;b;\nu1;yes;yes;\nu2;no;yes;\nu3;no;no\n",
	"a\tb\n1\t\n\t2\n",
	"a,b\n1,2\n2,NaN\n3,3\n",
	"a,b\n1e200,-1e200\n0,1e200\n",
	"a,b\nlow,medium\nhigh,high\n",
	"1,2\n1,2\n2,2\n",
	"a,b,a\n1,2,3\n",
	"\ufeffA,B\r\n1,1.0\r\n\r\n10,2\r\n",
}

// checkInputError wants err to be an *InputError that names the file.
func checkInputError(t *testing.T, err error) {
	t.Helper()
	var ie *InputError
	if !errors.As(err, &ie) || ie.File != "f.csv" || !strings.HasPrefix(err.Error(), "f.csv") {
		t.Fatalf("error %q (%T) is not an *InputError naming f.csv", err, err)
	}
}

// finiteOrNaN fails on an infinite figure: a result is a number or
// undefined, never ±Inf.
func finiteOrNaN(t *testing.T, what string, xs ...float64) {
	t.Helper()
	for _, x := range xs {
		if math.IsInf(x, 0) {
			t.Fatalf("%s: %v is infinite", what, xs)
		}
	}
}

func checkKappa(t *testing.T, k Kappa) {
	t.Helper()
	finiteOrNaN(t, "kappa", k.N, k.Po, k.Pe, k.Kappa, k.SE, k.SE0, k.Z, k.CI95[0], k.CI95[1])
	if math.IsNaN(k.N) || math.IsNaN(k.Po) || math.IsNaN(k.Pe) || !(k.N > 0) {
		t.Fatalf("n, po or pe undefined: %+v", k)
	}
}

// quoted writes a cell in double quotes, so that nothing in it can be
// taken for a separator.
func quoted(s string) string { return `"` + strings.ReplaceAll(s, `"`, `""`) + `"` }

// writeMatrix writes m back as ReadTable reads it: names in a header after
// an empty corner and at the start of each row.
func writeMatrix(m Matrix) string {
	var b strings.Builder
	if m.Named {
		for _, n := range m.Names {
			b.WriteString("," + quoted(n))
		}
		b.WriteString("\n")
	}
	for i, row := range m.Values {
		var cells []string
		if m.Named {
			cells = append(cells, quoted(m.Names[i]))
		}
		for _, v := range row {
			cells = append(cells, strconv.FormatFloat(v, 'g', -1, 64))
		}
		b.WriteString(strings.Join(cells, ",") + "\n")
	}
	return b.String()
}

// checkMatrix checks what every square table read must be, and that it
// reads back the same when written out again.
func checkMatrix(t *testing.T, m Matrix, read func(string) (Matrix, error)) {
	t.Helper()
	k := len(m.Values)
	if k == 0 || k > MaxCells || len(m.Names) != k {
		t.Fatalf("%d rows, %d names", k, len(m.Names))
	}
	seen := map[string]bool{}
	for i, row := range m.Values {
		if len(row) != k {
			t.Fatalf("row %d has %d values for %d rows", i, len(row), k)
		}
		for _, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
				t.Fatalf("row %d holds %v", i, v)
			}
		}
		n := m.Names[i]
		if n == "" || seen[n] || strings.TrimSpace(n) != n {
			t.Fatalf("name %q (empty, twice or untrimmed) in %q", n, m.Names)
		}
		seen[n] = true
	}
	if k >= MaxCells {
		return // a name column would not fit on a line
	}
	back, err := read(writeMatrix(m))
	if err != nil {
		t.Fatalf("written back as\n%s\nit reads as %v", writeMatrix(m), err)
	}
	if !slices.Equal(back.Names, m.Names) || back.Named != m.Named || !slices.EqualFunc(back.Values, m.Values, slices.Equal) {
		t.Fatalf("read back %+v, want %+v", back, m)
	}
}

// FuzzReadTable: no input panics; every error is an *InputError naming
// the file; every table read is square, finite, not negative, with a
// finite positive total and distinct names, reads back the same when
// written out, and gives a kappa whose figures are numbers or undefined,
// never infinite.
func FuzzReadTable(f *testing.F) {
	for _, s := range tableSeeds {
		f.Add([]byte(s))
	}
	read := func(s string) (Matrix, error) { return ReadTable(strings.NewReader(s), "f.csv") }
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := ReadTable(bytes.NewReader(data), "f.csv")
		if err != nil {
			checkInputError(t, err)
			return
		}
		checkMatrix(t, m, read)
		total := 0.0
		for _, row := range m.Values {
			for _, v := range row {
				total += v
			}
		}
		if !(total > 0) || math.IsInf(total, 0) {
			t.Fatalf("total %v", total)
		}
		k, err := TableKappa(m.Values, nil)
		if err != nil {
			t.Fatalf("a table the reader accepts: %v", err)
		}
		checkKappa(t, k)
		w, _ := DisagreementWeights("quadratic", len(m.Values))
		if k, err = TableKappa(m.Values, w); err != nil {
			t.Fatalf("quadratic weights: %v", err)
		}
		checkKappa(t, k)
	})
}

// FuzzReadWeights: no input panics; every error is an *InputError naming
// the file; every table of weights read is square, finite, not negative,
// 0 on the diagonal, reads back the same, and is accepted by WeightedKappa.
func FuzzReadWeights(f *testing.F) {
	for _, s := range append(weightSeeds, tableSeeds...) {
		f.Add([]byte(s))
	}
	read := func(s string) (Matrix, error) { return ReadWeights(strings.NewReader(s), "f.csv") }
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := ReadWeights(bytes.NewReader(data), "f.csv")
		if err != nil {
			checkInputError(t, err)
			return
		}
		checkMatrix(t, m, read)
		for i := range m.Values {
			if m.Values[i][i] != 0 {
				t.Fatalf("diagonal %d holds %v", i, m.Values[i][i])
			}
		}
		ones := make([][]float64, len(m.Values))
		for i := range ones {
			ones[i] = make([]float64, len(m.Values))
			for j := range ones[i] {
				ones[i][j] = float64(1 + i + 2*j)
			}
		}
		k, err := WeightedKappa(ones, m.Values)
		if err != nil {
			t.Fatalf("weights the reader accepts: %v", err)
		}
		checkKappa(t, k)
	})
}

// FuzzReadRatings: no input panics; every error is an *InputError naming
// the file; what is read has two or more distinct named raters, one
// trimmed cell per rater in each unit, lines in increasing order, and
// reads back the same when written out; comparing it at every level
// panics never and gives figures that are numbers or undefined.
func FuzzReadRatings(f *testing.F) {
	for _, s := range ratingSeeds {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := ReadRatings(bytes.NewReader(data), "f.csv")
		if err != nil {
			checkInputError(t, err)
			return
		}
		if len(r.Raters) < 2 || len(r.Raters) > MaxCells || len(r.Units) == 0 || len(r.Lines) != len(r.Units) {
			t.Fatalf("%d raters, %d units, %d lines", len(r.Raters), len(r.Units), len(r.Lines))
		}
		seen := map[string]bool{}
		for _, n := range r.Raters {
			if n == "" || seen[n] || strings.TrimSpace(n) != n {
				t.Fatalf("rater %q (empty, twice or untrimmed) in %q", n, r.Raters)
			}
			seen[n] = true
		}
		for i, u := range r.Units {
			if len(u) != len(r.Raters) || (i > 0 && r.Lines[i] <= r.Lines[i-1]) {
				t.Fatalf("unit %d: %q on line %d", i, u, r.Lines[i])
			}
			for _, c := range u {
				if strings.TrimSpace(c) != c {
					t.Fatalf("untrimmed cell %q", c)
				}
			}
		}
		var b strings.Builder
		for _, row := range append([][]string{r.Raters}, r.Units...) {
			cells := make([]string, len(row))
			for j, c := range row {
				cells[j] = quoted(c)
			}
			b.WriteString(strings.Join(cells, ",") + "\n")
		}
		back, err := ReadRatings(strings.NewReader(b.String()), "f.csv")
		if err != nil || !slices.Equal(back.Raters, r.Raters) || !slices.EqualFunc(back.Units, r.Units, slices.Equal) {
			t.Fatalf("written back as\n%s\nit reads as %+v, %v", b.String(), back, err)
		}
		for _, opt := range []RatingsOptions{{Level: Nominal}, {Level: Ordinal}, {Level: Interval}, {Level: Ratio}, {Level: Nominal, Weights: "linear"}} {
			rep, err := CompareRatings(r, opt)
			if err != nil {
				continue // a rating the level cannot use; the message is checked in the unit tests
			}
			finiteOrNaN(t, "percent agreement", rep.Percent)
			if rep.Alpha != nil {
				finiteOrNaN(t, "alpha", rep.Alpha.Alpha)
			}
			if rep.Fleiss != nil {
				finiteOrNaN(t, "fleiss", rep.Fleiss.Kappa, rep.Fleiss.SE0)
			}
			if rep.Cohen != nil {
				checkKappa(t, *rep.Cohen)
			}
		}
	})
}
