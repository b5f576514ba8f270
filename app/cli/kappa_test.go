package cli

import (
	"encoding/json"
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
