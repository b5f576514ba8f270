package agree

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// scipyAssign solves each case with scipy.optimize.linear_sum_assignment
// (Debian 12's python3-scipy, 1.10.1), the reference solver outside this
// project. Entries below min become 0, which a maximising solver is then
// free to pair: such pairs add nothing, so the maximum total is the same as
// that of an assignment restricted to entries >= min.
const scipyAssign = `
import json, sys
import numpy as np
from scipy.optimize import linear_sum_assignment
out = []
for case in json.load(open(sys.argv[1])):
    s = np.array(case["score"], dtype=float).reshape(case["rows"], case["cols"])
    m = np.where(s >= case["min"], s, 0.0)
    if m.size == 0:
        out.append(0.0)
        continue
    r, c = linear_sum_assignment(m, maximize=True)
    out.append(float(m[r, c].sum()))
print(json.dumps(out))
`

type scipyCase struct {
	Score []float64 `json:"score"` // row-major
	Rows  int       `json:"rows"`
	Cols  int       `json:"cols"`
	Min   float64   `json:"min"`
}

// TestAssignAgainstScipy compares Assign's total with scipy's maximum on a
// few hundred random IoU-like matrices of sizes 0..12 × 0..12. Totals, not
// pairs, are compared: with ties both solvers may choose different optimal
// pairs.
func TestAssignAgainstScipy(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import scipy.optimize").Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-scipy for this check: %v", err)
		}
		t.Skip("python3-scipy is not installed (apt-get install python3-scipy)")
	}
	r := rand.New(rand.NewPCG(2, 7))
	var cases []scipyCase
	var mats [][][]float64
	for n := 0; n < 400; n++ {
		rows, cols := r.IntN(13), r.IntN(13)
		min := []float64{0.3, 0.5, 0.7}[n%3]
		sparse := r.Float64() // share of pairs that do not overlap at all
		s := make([][]float64, rows)
		flat := make([]float64, 0, rows*cols)
		for i := range s {
			s[i] = make([]float64, cols)
			for j := range s[i] {
				switch {
				case r.Float64() < sparse:
				case n%4 == 0 && r.IntN(4) == 0:
					s[i][j] = min // exactly at the threshold
				case n%4 == 1:
					s[i][j] = float64(r.IntN(11)) / 10 // many ties
				default:
					s[i][j] = r.Float64()
				}
				flat = append(flat, s[i][j])
			}
		}
		cases = append(cases, scipyCase{Score: flat, Rows: rows, Cols: cols, Min: min})
		mats = append(mats, s)
	}
	in, err := json.Marshal(cases)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "cases.json")
	if err := os.WriteFile(path, in, 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(py, "-c", scipyAssign, path).Output()
	if err != nil {
		t.Fatalf("running scipy: %v", err)
	}
	var want []float64
	if err := json.Unmarshal(out, &want); err != nil || len(want) != len(cases) {
		t.Fatalf("scipy output %q: %v", out, err)
	}
	for n, s := range mats {
		got := checkAssignment(t, s, cases[n].Min, Assign(s, cases[n].Min))
		if math.Abs(got-want[n]) > 1e-9 {
			t.Errorf("case %d (%d×%d, min %g): total %.12f, scipy %.12f", n, cases[n].Rows, cases[n].Cols, cases[n].Min, got, want[n])
		}
	}
}
