package cli

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
)

func writeFile(t *testing.T, name, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func kappaJSONOut(t *testing.T, args ...string) map[string]any {
	t.Helper()
	out := mustCLI(t, append([]string{"kappa", "--json"}, args...)...)
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	return m
}

func nearJSON(t *testing.T, what string, got any, want, tol float64) {
	t.Helper()
	g, ok := got.(float64)
	if !ok || math.Abs(g-want) > tol {
		t.Errorf("%s = %v, want %v ± %g", what, got, want, tol)
	}
}

func TestKappaCommandTables(t *testing.T) {
	// The 2×2 example of the Wikipedia article on Cohen's kappa: po 0.70,
	// pe 0.50, κ 0.40; asymptotic SE 0.126996 as statsmodels 0.13.5 gives.
	m := kappaJSONOut(t, "--table", writeFile(t, "t.csv", "20,5\n10,15\n"))
	nearJSON(t, "po", m["po"], 0.70, 1e-12)
	nearJSON(t, "pe", m["pe"], 0.50, 1e-12)
	nearJSON(t, "kappa", m["kappa"], 0.40, 1e-12)
	nearJSON(t, "se", m["se"], 0.126996, 5e-7)
	if m["band"] != "fair" || !strings.Contains(m["band_source"].(string), "Landis & Koch") {
		t.Errorf("band %v, %v", m["band"], m["band_source"])
	}
	if _, ok := m["percent_agreement"]; ok {
		t.Errorf("a table has no units for percent agreement")
	}
	// The 3×3 table of a SAS PROC FREQ printout reproduced in statsmodels'
	// tests: κ 0.4842, ASE 0.1380, CI [0.2137, 0.7547], ASE(H0) 0.1484,
	// z 3.2626; with linear weights κw 0.4701, ASE 0.1457. With a header
	// row and a column of names.
	tbl := writeFile(t, "sas.csv", ",a,b,c\na,0,4,1\nb,0,8,0\nc,0,1,5\n")
	m = kappaJSONOut(t, "--table", tbl)
	nearJSON(t, "kappa", m["kappa"], 0.4842, 5e-5)
	nearJSON(t, "se", m["se"], 0.1380, 5e-5)
	nearJSON(t, "se0", m["se0"], 0.1484, 5e-5)
	nearJSON(t, "z", m["z"], 3.2626, 5e-5)
	ci := m["ci95"].([]any)
	nearJSON(t, "ci low", ci[0], 0.2137, 5e-5)
	nearJSON(t, "ci high", ci[1], 0.7547, 5e-5)
	m = kappaJSONOut(t, "--table", tbl, "--weights", "linear")
	nearJSON(t, "weighted kappa", m["kappa"], 0.4701, 5e-5)
	nearJSON(t, "weighted se", m["se"], 0.1457, 5e-5)
	// Disagreement weights from a file, scaled by 3: the same κw (Cohen
	// 1968: the result does not depend on the scale of the weights).
	w := writeFile(t, "w.csv", "0,3,6\n3,0,3\n6,3,0\n")
	m2 := kappaJSONOut(t, "--table", tbl, "--weights", w)
	nearJSON(t, "scaled weights", m2["kappa"], m["kappa"].(float64), 1e-12)
	// pe = 1: kappa is undefined, said in notes, never a crash.
	m = kappaJSONOut(t, "--table", writeFile(t, "one.csv", "10,0\n0,0\n"))
	if m["kappa"] != nil || len(m["notes"].([]any)) == 0 {
		t.Errorf("undefined kappa: %v, notes %v", m["kappa"], m["notes"])
	}
}

func TestKappaCommandRatings(t *testing.T) {
	// The 3 coders × 15 units example with missing values of the Wikipedia
	// article on Krippendorff's alpha: nominal 0.691358, interval 0.810845.
	coders := [3]string{". . . . . 3 4 1 2 1 1 3 3 . 3", "1 . 2 1 3 3 4 3 . . . . . . .", ". . 2 1 3 4 4 . 2 1 1 3 3 . 4"}
	var cols [3][]string
	for i, c := range coders {
		cols[i] = strings.Fields(c)
	}
	var b strings.Builder
	b.WriteString("c1,c2,c3\n")
	for u := 0; u < 15; u++ {
		var cells []string
		for i := range cols {
			v := cols[i][u]
			if v == "." {
				v = ""
			}
			cells = append(cells, v)
		}
		b.WriteString(strings.Join(cells, ",") + "\n")
	}
	f := writeFile(t, "k.csv", b.String())
	m := kappaJSONOut(t, "--ratings", f)
	nearJSON(t, "nominal alpha", m["krippendorff_alpha"], 0.691358, 5e-7)
	if m["fleiss_kappa"] != nil || m["kappa"] != nil || m["units"].(float64) != 15 || m["raters"].(float64) != 3 {
		t.Errorf("fleiss %v kappa %v units %v raters %v", m["fleiss_kappa"], m["kappa"], m["units"], m["raters"])
	}
	m = kappaJSONOut(t, "--ratings", f, "--level", "interval")
	nearJSON(t, "interval alpha", m["krippendorff_alpha"], 0.810845, 5e-7)

	// Two raters, complete: the 2×2 table above as ratings gives the same
	// Cohen's kappa; Fleiss' kappa is given too.
	var r strings.Builder
	r.WriteString("ann,bo\n")
	for _, c := range []struct {
		a, b string
		n    int
	}{{"yes", "yes", 20}, {"yes", "no", 5}, {"no", "yes", 10}, {"no", "no", 15}} {
		for i := 0; i < c.n; i++ {
			r.WriteString(c.a + "," + c.b + "\n")
		}
	}
	m = kappaJSONOut(t, "--ratings", writeFile(t, "two.csv", r.String()), "--categories", "yes,no")
	nearJSON(t, "kappa from ratings", m["kappa"], 0.40, 1e-12)
	nearJSON(t, "percent agreement", m["percent_agreement"], 0.70, 1e-12)
	if m["fleiss_kappa"] == nil {
		t.Errorf("complete ratings should give Fleiss' kappa")
	}
}

func TestKappaCommandErrors(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"kappa"}, "exactly one of"},
		{[]string{"kappa", "--table", writeFile(t, "r.csv", "1,2,3\n4,5,6\n")}, "square"},
		{[]string{"kappa", "--table", writeFile(t, "x.csv", "1,2\n3,x\n")}, "line 2, column 2"},
		{[]string{"kappa", "--table", writeFile(t, "n.csv", "1,2\n3,4\n"), "--weights", "cubic.csv"}, "cubic.csv"},
		{[]string{"kappa", "--ratings", writeFile(t, "c.csv", "a,b\n1,2\n3,1\n"), "--categories", "1,2"}, `line 3, rater "a"`},
		{[]string{"kappa", "--ratings", writeFile(t, "l.csv", "a,b\n1,2\n"), "--level", "fuzzy"}, "fuzzy"},
	} {
		code, _, stderr := cli(t, c.args...)
		if code == 0 || !strings.Contains(stderr, c.want) {
			t.Errorf("%v: exit %d, %q does not mention %q", c.args, code, stderr, c.want)
		}
	}
}

func TestAgreeAndConsensusCommands(t *testing.T) {
	path := testkit.SmallDemo(t)
	out := mustCLI(t, "agree", path, "--annotators", "Ines,Tomas", "--json")
	var m struct {
		Pairs []struct {
			A, B                                  string
			Matched, AOnly, BOnly, ABoxes, BBoxes int
			F1                                    float64
			Confusion                             struct {
				Classes []string
				Counts  [][]float64
			}
		}
		WorstImages []map[string]any `json:"worst_images"`
		PerClass    []map[string]any `json:"per_class"`
	}
	// Field names as the issue asks for them.
	for _, f := range []string{`"a_only"`, `"b_only"`, `"mean_iou"`, `"median_iou"`, `"ci95"`, `"fleiss_kappa"`, `"krippendorff_alpha"`, `"per_class"`, `"worst_images"`} {
		if !strings.Contains(out, f) {
			t.Errorf("agree --json lacks %s", f)
		}
	}
	if err := json.Unmarshal([]byte(strings.ReplaceAll(strings.ReplaceAll(out, `"a_only"`, `"aonly"`), `"b_only"`, `"bonly"`)), &m); err != nil {
		t.Fatal(err)
	}
	p := m.Pairs[0]
	if p.A != "Ines" || p.B != "Tomas" || p.Matched == 0 {
		t.Fatalf("pair %+v", p)
	}
	sum := 0.0
	for _, r := range p.Confusion.Counts {
		for _, v := range r {
			sum += v
		}
	}
	if int(sum) != p.Matched || len(p.Confusion.Classes) != 4 {
		t.Errorf("confusion holds %v pairs over %d classes, want %d over 4", sum, len(p.Confusion.Classes), p.Matched)
	}
	// Weighted kappa over the classes in project order: the same figure as
	// the table calculator gives for the pair's confusion matrix.
	wout := mustCLI(t, "agree", path, "--annotators", "Ines,Tomas", "--json", "--weights", "linear")
	var wm struct {
		Pairs []struct {
			WeightedKappa map[string]any `json:"weighted_kappa"`
		}
	}
	json.Unmarshal([]byte(wout), &wm)
	var tb strings.Builder
	for _, r := range p.Confusion.Counts {
		var cells []string
		for _, v := range r {
			cells = append(cells, strconv.Itoa(int(v)))
		}
		tb.WriteString(strings.Join(cells, ",") + "\n")
	}
	tk := kappaJSONOut(t, "--table", writeFile(t, "conf.csv", tb.String()), "--weights", "linear")
	if len(wm.Pairs) == 0 || wm.Pairs[0].WeightedKappa == nil {
		t.Fatalf("no weighted kappa:\n%s", wout)
	}
	nearJSON(t, "weighted kappa of the pair", wm.Pairs[0].WeightedKappa["kappa"], tk["kappa"].(float64), 1e-12)
	if code, _, stderr := cli(t, "agree", path, "--annotators", "Ines,Tomas", "--weights", writeFile(t, "w2.csv", "0,1\n1,0\n")); code == 0 || !strings.Contains(stderr, "4 classes") {
		t.Errorf("weights of the wrong size: exit %d, %s", code, stderr)
	}
	csvOut := mustCLI(t, "agree", path, "--annotators", "Ines,Tomas", "--csv")
	if lines := strings.Split(strings.TrimSpace(csvOut), "\n"); len(lines) != 2 || !strings.HasPrefix(lines[0], "a,b,images") {
		t.Errorf("csv:\n%s", csvOut)
	}
	text := mustCLI(t, "agree", path, "--annotators", "Ines,Tomas")
	if !strings.Contains(text, "Landis & Koch") || !strings.Contains(text, "no object") {
		t.Errorf("text report lacks the band source or the no-object caveat:\n%s", text)
	}
	// With two annotators and the default majority, the consensus keeps
	// exactly the matched pairs.
	msg := mustCLI(t, "consensus", path, "--annotators", "Ines,Tomas")
	if !strings.Contains(msg, "stored") {
		t.Errorf("consensus said %q", msg)
	}
	out = mustCLI(t, "agree", path, "--annotators", "Ines,consensus", "--json")
	var c struct {
		Pairs []struct {
			BBoxes int `json:"b_boxes"`
		}
	}
	json.Unmarshal([]byte(out), &c)
	if c.Pairs[0].BBoxes != p.Matched {
		t.Errorf("consensus has %d boxes, want the %d matched pairs", c.Pairs[0].BBoxes, p.Matched)
	}
	for _, bad := range [][]string{{"agree", path, "--annotators", "Ines"}, {"agree", path, "--annotators", "Ines,Nobody"}, {"agree", path, "--annotators", "Ines,Tomas", "--iou", "2"}, {"consensus", path, "--annotators", "Ines,consensus"}} {
		if code, _, _ := cli(t, bad...); code == 0 {
			t.Errorf("%v succeeded", bad)
		}
	}
}

// kappaFails runs kappa and wants the exit status code and every one of
// the phrases in its message; nothing may go to stdout.
func kappaFails(t *testing.T, code int, want []string, args ...string) {
	t.Helper()
	got, out, stderr := cli(t, append([]string{"kappa"}, args...)...)
	if got != code || out != "" {
		t.Errorf("kappa %v: exit %d (want %d), stdout %q", args, got, code, out)
	}
	for _, w := range want {
		if !strings.Contains(stderr, w) {
			t.Errorf("kappa %v: %q does not mention %q", args, stderr, w)
		}
	}
}

// Issue 14, item 14, part 1: counts whose total overflows, and NaN, Inf,
// negative or too large cells, are refused with the file, line and
// column; the text and JSON reports never carry NaN or Inf.
func TestKappaTableRefusesNonFiniteCounts(t *testing.T) {
	huge := writeFile(t, "huge.csv", "1e308,1e308\n1e308,1e308\n")
	for _, args := range [][]string{{"--table", huge}, {"--table", huge, "--json"}} {
		kappaFails(t, 1, []string{"huge.csv", "line 1, column 2", "add up to more than"}, args...)
	}
	for _, c := range []struct{ body, want string }{
		{"NaN,1\n1,1\n", `line 1, column 1: "NaN" is not a number`},
		{"1,2\n+Inf,1\n", `line 2, column 1: "+Inf" is not a number`},
		{"1,2\n3,1e400\n", `line 2, column 2: "1e400" is too large`},
		{"1,-2\n3,4\n", "line 1, column 2: -2 is negative"},
		{"1,0x10\n3,4\n", `line 1, column 2: "0x10" is not a number`},
		{"1,1_0\n3,4\n", `line 1, column 2: "1_0" is not a number`},
		{"1,\n3,4\n", "line 1, column 2: the cell is empty"},
	} {
		kappaFails(t, 1, []string{"bad.csv", c.want}, "--table", writeFile(t, "bad.csv", c.body))
	}
	// Counts so small that the standard error overflows: the report says
	// "undefined" (JSON null) rather than failing or printing +Inf.
	tiny := writeFile(t, "tiny.csv", "1e-310,1e-310\n1e-310,3e-310\n")
	m := kappaJSONOut(t, "--table", tiny)
	if m["kappa"] == nil || m["se"] != nil || m["ci95"] != nil {
		t.Errorf("tiny counts: kappa %v, se %v, ci95 %v", m["kappa"], m["se"], m["ci95"])
	}
	if text := mustCLI(t, "kappa", "--table", tiny); strings.Contains(text, "Inf") || strings.Contains(text, "NaN") {
		t.Errorf("tiny counts print\n%s", text)
	}
}

// Part 2: the first row is a header only when none of its cells is a
// number (or its first cell is empty); a text cell in a data row is an
// error naming the row, the column and the text.
func TestKappaTableHeaderDetection(t *testing.T) {
	kappaFails(t, 1, []string{"h.csv", `line 1, column 2: "x" is not a number`}, "--table", writeFile(t, "h.csv", "1,x\n3,4\n"))
	kappaFails(t, 1, []string{"h2.csv", `line 1, column 1: "x" is not a number`}, "--table", writeFile(t, "h2.csv", "x,2\n3,4\n"))
	// A header of numbers after an empty corner cell names the categories.
	m := kappaJSONOut(t, "--table", writeFile(t, "likert.csv", ",1,2\n1,20,5\n2,10,15\n"))
	nearJSON(t, "kappa", m["kappa"], 0.40, 1e-12) // the Wikipedia 2×2 example, as above
	if c := m["categories"].([]any); len(c) != 2 || c[0] != "1" || c[1] != "2" {
		t.Errorf("categories %v", c)
	}
}

// Part 3: semicolons and tabs as separators, a byte-order mark with CRLF
// line ends, and a column of names without a header row all read as the
// same 2×2 table (the Wikipedia example: κ 0.40).
func TestKappaTableSeparatorsAndNames(t *testing.T) {
	for _, c := range []struct {
		body  string
		names []string
	}{
		{"20;5\n10;15\n", []string{"1", "2"}},
		{"20\t5\n10\t15\n", []string{"1", "2"}},
		{"\ufeff20,5\r\n10,15\r\n", []string{"1", "2"}},
		{"\ufeff;yes;no\r\nyes;20;5\r\nno;10;15\r\n", []string{"yes", "no"}},
		{"yes,20,5\nno,10,15\n", []string{"yes", "no"}},
		{"yes\t20\t5\nno\t10\t15\n", []string{"yes", "no"}},
		{"yes,no\n20,5\n10,15\n", []string{"yes", "no"}},
		{"A\\B,yes,no\nyes,20,5\nno,10,15\n", []string{"yes", "no"}},
		{"\n\"yes\",20,5\n\n\"no\" , 10 , 15 \n\n", []string{"yes", "no"}},
		{"20,5,\n10,15,\n", []string{"1", "2"}}, // a separator at the end of every line
	} {
		m := kappaJSONOut(t, "--table", writeFile(t, "t.csv", c.body))
		nearJSON(t, fmt.Sprintf("kappa of %q", c.body), m["kappa"], 0.40, 1e-12)
		if got := fmt.Sprint(m["categories"]); got != fmt.Sprint(c.names) {
			t.Errorf("%q: categories %s, want %v", c.body, got, c.names)
		}
	}
	// The separator is decided by the first line: a comma there makes
	// "20;5" one cell.
	kappaFails(t, 1, []string{"mixed.csv", "line 2 has 1 cells, line 1 has 2", "separated by a comma"}, "--table", writeFile(t, "mixed.csv", "20,5\n10;15\n"))
	kappaFails(t, 1, []string{"u16.csv", "UTF-16"}, "--table", writeFile(t, "u16.csv", "\xff\xfe2\x000\x00,\x005\x00\n\x00"))
	kappaFails(t, 1, []string{"cr.csv", "carriage return"}, "--table", writeFile(t, "cr.csv", "20,5\r10,15\r"))
	kappaFails(t, 1, []string{"q.csv", "line 1", "quote"}, "--table", writeFile(t, "q.csv", "\"yes,20,5\nno,10,15\n"))
}

// Part 4: a fault of the weights file is reported against that file.
func TestKappaWeightsErrorsNameTheWeightsFile(t *testing.T) {
	tbl := writeFile(t, "table.csv", "20,5\n10,15\n")
	for _, c := range []struct{ body, want string }{
		{"1,1\n1,0\n", "line 1, column 1: the weight on the diagonal must be 0"},
		{"0,-1\n1,0\n", "line 1, column 2: -1 is negative"},
		{"0,NaN\n1,0\n", `line 1, column 2: "NaN" is not a number`},
		{"0,1,2\n1,0,1\n2,1,0\n", "3×3 weights for a 2×2 table"},
	} {
		got, _, stderr := cli(t, "kappa", "--table", tbl, "--weights", writeFile(t, "weights.csv", c.body))
		if got != 1 || !strings.Contains(stderr, "weights.csv") || !strings.Contains(stderr, c.want) || strings.Contains(stderr, "table.csv") {
			t.Errorf("weights %q: exit %d, %q", c.body, got, stderr)
		}
	}
	named := writeFile(t, "named.csv", ",yes,no\nyes,20,5\nno,10,15\n")
	kappaFails(t, 1, []string{"named.csv", "w2.csv", "yes, no", "no, yes"}, "--table", named, "--weights", writeFile(t, "w2.csv", ",no,yes\nno,0,1\nyes,1,0\n"))
	kappaFails(t, 2, []string{"cubic", "none, linear, quadratic"}, "--table", named, "--weights", "cubic")
}

// Part 5: row names must be the column names in the same order.
func TestKappaTableRowAndColumnNamesMatch(t *testing.T) {
	kappaFails(t, 1, []string{"rc.csv", "line 3, column 1", `"c"`, `"b"`}, "--table", writeFile(t, "rc.csv", ",a,b\na,1,2\nc,3,4\n"))
	kappaFails(t, 1, []string{"rc2.csv", "line 2, column 1", `"b"`, `"a"`}, "--table", writeFile(t, "rc2.csv", "a,b\nb,1,2\na,3,4\n"))
	kappaFails(t, 1, []string{"dup.csv", "line 1, column 3", `"a" is named twice`}, "--table", writeFile(t, "dup.csv", ",a,a\na,1,2\na,3,4\n"))
	kappaFails(t, 1, []string{"dup2.csv", "line 2, column 1", `"a" is named twice`}, "--table", writeFile(t, "dup2.csv", "a,1,2\na,3,4\n"))
	kappaFails(t, 1, []string{"nameless.csv", "line 1, column 2", "no name"}, "--table", writeFile(t, "nameless.csv", ",,b\na,1,2\nb,3,4\n"))
}

// Part 6: NaN and Inf are not ratings at the interval or ratio level;
// an empty cell is the way to leave one out.
func TestKappaRatingsRefuseNonFiniteValues(t *testing.T) {
	for _, c := range []struct{ body, level, want string }{
		{"a,b\n1,2\n2,NaN\n3,3\n", "interval", `line 3, rater "b": "NaN" is not a number`},
		{"a,b\n1,2\nInf,2\n3,3\n", "ratio", `line 3, rater "a": "Inf" is not a number`},
		{"a,b\n1,2\n1e999,2\n3,3\n", "interval", `line 3, rater "a": "1e999" is too large`},
	} {
		kappaFails(t, 1, []string{"r.csv", c.want, "leave the cell empty"}, "--ratings", writeFile(t, "r.csv", c.body), "--level", c.level)
	}
	kappaFails(t, 1, []string{"neg.csv", `line 3, rater "a": -1 is negative, which the ratio level does not allow`}, "--ratings", writeFile(t, "neg.csv", "a,b\n1,2\n-1,2\n3,3\n"), "--level", "ratio")
	// Missing stays missing: an empty cell, as the README says.
	m := kappaJSONOut(t, "--ratings", writeFile(t, "m.csv", "a,b\n1,2\n2,\n3,3\n"), "--level", "interval")
	if m["krippendorff_alpha"] == nil || m["units"].(float64) != 3 {
		t.Errorf("an empty cell: %v", m)
	}
}

// Neighbours of those faults elsewhere in the command.
func TestKappaNeighbouringInputFaults(t *testing.T) {
	two := writeFile(t, "two.csv", "20,5\n10,15\n")
	kappaFails(t, 1, []string{"empty.csv", "empty"}, "--table", writeFile(t, "empty.csv", ""))
	kappaFails(t, 1, []string{"blank.csv", "empty"}, "--table", writeFile(t, "blank.csv", "\n\r\n  \n"))
	kappaFails(t, 1, []string{"head.csv", "line 1", "no rows"}, "--table", writeFile(t, "head.csv", "a,b\n"))
	kappaFails(t, 1, []string{"zero.csv", "every count is 0"}, "--table", writeFile(t, "zero.csv", "0,0\n0,0\n"))
	kappaFails(t, 1, []string{"wide.csv", "line 2 has 3 cells", "line 1 has 2"}, "--table", writeFile(t, "wide.csv", "1,2\n3,4,5\n"))
	dir := t.TempDir()
	kappaFails(t, 1, []string{dir, "a folder"}, "--table", dir)
	kappaFails(t, 1, []string{dir, "a folder"}, "--ratings", dir)
	kappaFails(t, 1, []string{"big.csv", "line 2", "1 MiB"}, "--table", writeFile(t, "big.csv", "1,2\n"+strings.Repeat(" ", 1<<20)+"3,4\n"))
	kappaFails(t, 1, []string{"open.csv", "line 2", "not closed within"}, "--ratings", writeFile(t, "open.csv", "a,b\n\"x,"+strings.Repeat("y\n", 600000)))
	kappaFails(t, 1, []string{"many.csv", "line 1", "1000 cells"}, "--table", writeFile(t, "many.csv", strings.Repeat("1,", 1000)+"1\n"))
	// A 1×1 table: kappa is undefined, said in notes.
	m := kappaJSONOut(t, "--table", writeFile(t, "one.csv", "7\n"))
	if m["kappa"] != nil || m["n"] != 7.0 || len(m["notes"].([]any)) == 0 {
		t.Errorf("1×1: %v", m)
	}
	kappaFails(t, 2, []string{"--level", "--ratings"}, "--table", two, "--level", "ordinal")

	// Ratings.
	kappaFails(t, 2, []string{"--categories", "empty"}, "--ratings", writeFile(t, "r.csv", "a,b\nx,y\n"), "--categories", "x,,y")
	kappaFails(t, 2, []string{"--categories", `"x" twice`}, "--ratings", writeFile(t, "r.csv", "a,b\nx,y\n"), "--categories", "x,y,x")
	kappaFails(t, 2, []string{"--weights", "cubic"}, "--ratings", writeFile(t, "r3.csv", "a,b,c\n1,2,3\n"), "--weights", "cubic")
	kappaFails(t, 2, []string{"--weights", "with --ratings use none, linear or quadratic"}, "--ratings", writeFile(t, "r2.csv", "a,b\n1,2\n"), "--weights", writeFile(t, "w.csv", "0,1\n1,0\n"))
	kappaFails(t, 1, []string{"dupr.csv", "line 1, column 3", `"a" is named twice`}, "--ratings", writeFile(t, "dupr.csv", "a,b,a\n1,2,3\n"))
	kappaFails(t, 1, []string{"noname.csv", "line 1, column 2", "no name"}, "--ratings", writeFile(t, "noname.csv", "a,,c\n1,2,3\n"))
	kappaFails(t, 1, []string{"nounits.csv", "no units"}, "--ratings", writeFile(t, "nounits.csv", "a,b\n"))
	kappaFails(t, 1, []string{"long.csv", "line 2, column 3", "2 raters"}, "--ratings", writeFile(t, "long.csv", "a,b\n1,2,3\n"))
	var wide strings.Builder
	wide.WriteString("a,b\n")
	for i := range 1001 {
		fmt.Fprintf(&wide, "%d,%d\n", i, i)
	}
	kappaFails(t, 1, []string{"wide.csv", "1001 distinct categories", "at most 1000"}, "--ratings", writeFile(t, "wide.csv", wide.String()), "--level", "interval")
	// Text categories have no order of their own: ordinal alpha and
	// linear or quadratic weights need it from --categories.
	lmh := writeFile(t, "lmh.csv", "a,b\nlow,medium\nhigh,high\nmedium,low\nlow,low\n")
	kappaFails(t, 2, []string{"--categories", "high, low, medium"}, "--ratings", lmh, "--level", "ordinal")
	kappaFails(t, 2, []string{"--categories"}, "--ratings", lmh, "--weights", "linear")
	mustCLI(t, "kappa", "--ratings", lmh, "--level", "ordinal", "--weights", "linear", "--categories", "low,medium,high")
	// A first header cell left empty marks a column of unit names, which
	// is not a rater; an extra empty cell at the end of a line is nothing.
	m = kappaJSONOut(t, "--ratings", writeFile(t, "units.csv", ";a;b;\nu1;yes;yes;\nu2;no;yes;\nu3;no;no\n"), "--categories", "yes,no")
	if m["raters"].(float64) != 2 || m["units"].(float64) != 3 || fmt.Sprint(m["categories"]) != "[yes no]" {
		t.Errorf("unit names: %v", m)
	}
	// A header of numbers is read as rater names, with a note.
	m = kappaJSONOut(t, "--ratings", writeFile(t, "numhead.csv", "1,2\n1,2\n2,2\n"))
	if notes := fmt.Sprint(m["notes"]); !strings.Contains(notes, "only numbers") {
		t.Errorf("numeric header: notes %s", notes)
	}
}
