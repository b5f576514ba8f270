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

// The live checks run Debian 12's python3-sklearn (1.2.1) and
// python3-statsmodels (0.13.5) on random data and compare to 1e-9.
//
// Weight conventions: sklearn's cohen_kappa_score(weights="linear" or
// "quadratic") uses disagreement weights |i−j| or (i−j)², as we do.
// statsmodels' cohens_kappa(wt="linear" or "quadratic") also uses
// disagreement weights, divided by their maximum ((k−1) or (k−1)²), and
// computes the standard errors from agreement weights 1 − that, which is
// exactly our normalisation. (A 2-D weights array given to statsmodels is
// used as disagreement weights without dividing; kappa and, as checked by
// hand, the standard errors come out the same.)

const refPython = "/usr/bin/python3"

// needPython skips the test when the Debian modules are missing, except in
// CI, which must install them.
func needPython(t *testing.T, modules string) {
	t.Helper()
	if err := exec.Command(refPython, "-c", "import "+modules).Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-sklearn, python3-statsmodels and python3-scipy for this check: %v", err)
		}
		t.Skip("python3-sklearn / python3-statsmodels are not installed (apt-get install python3-sklearn python3-statsmodels python3-scipy)")
	}
}

// runReference writes data to a temporary JSON file, runs script on it and
// decodes its JSON output into out.
func runReference(t *testing.T, script string, data, out any) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "in.json")
	b, err := json.Marshal(data)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(refPython, "-c", script, path)
	res, err := cmd.Output()
	if err != nil {
		if ee, ok := err.(*exec.ExitError); ok {
			t.Fatalf("reference script failed: %v\n%s", err, ee.Stderr)
		}
		t.Fatalf("reference script: %v", err)
	}
	if err := json.Unmarshal(res, out); err != nil {
		t.Fatalf("reference output %.200q: %v", res, err)
	}
}

// cohenScript: for each table, sklearn's kappa on label vectors expanded
// from the table, and statsmodels' kappa, std_kappa and std_kappa0, for no,
// linear and quadratic weights. Non-finite results become null.
const cohenScript = `
import json, sys, math
import numpy as np
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import cohens_kappa
def fin(x):
    x = float(x)
    return x if math.isfinite(x) else None
out = []
for table in json.load(open(sys.argv[1])):
    t = np.array(table, dtype=float)
    k = t.shape[0]
    a, b = [], []
    for i in range(k):
        for j in range(k):
            a += [i] * int(t[i, j])
            b += [j] * int(t[i, j])
    rec = {}
    for name, wt in (("none", None), ("linear", "linear"), ("quadratic", "quadratic")):
        sk = cohen_kappa_score(a, b, labels=list(range(k)), weights=wt)
        r = cohens_kappa(t, wt=wt)
        rec[name] = [fin(sk), fin(r.kappa), fin(r.std_kappa), fin(r.std_kappa0)]
    out.append(rec)
print(json.dumps(out))
`

func TestCohenKappaAgainstLibraries(t *testing.T) {
	needPython(t, "sklearn, statsmodels")
	r := rand.New(rand.NewPCG(1968, 1969))
	var tables [][][]float64
	for len(tables) < 300 {
		k := 2 + r.IntN(5)
		table := make([][]float64, k)
		empty := -1
		if r.IntN(4) == 0 {
			empty = r.IntN(k) // a category rater A never uses
		}
		for i := range table {
			table[i] = make([]float64, k)
			for j := range table[i] {
				if i == empty {
					continue
				}
				max := 6
				if i == j {
					max = 25 // raters mostly agree, as in real data
				}
				table[i][j] = float64(r.IntN(max))
			}
		}
		if k, err := CohenKappa(table); err != nil || math.IsNaN(k.Kappa) {
			continue
		}
		tables = append(tables, table)
	}
	var ref []map[string][4]*float64
	runReference(t, cohenScript, tables, &ref)
	if len(ref) != len(tables) {
		t.Fatalf("reference returned %d results for %d tables", len(ref), len(tables))
	}
	zeroed := 0
	for i, table := range tables {
		for _, kind := range []string{"none", "linear", "quadratic"} {
			w, _ := DisagreementWeights(kind, len(table))
			got, err := WeightedKappa(table, w)
			if err != nil {
				t.Fatal(err)
			}
			want := ref[i][kind]
			cmp := func(what string, g float64, w *float64) {
				if w == nil {
					t.Errorf("table %d %s %s: reference gave a non-finite value, we %g", i, kind, what, g)
					return
				}
				if within(g, *w, 1e-9) {
					return
				}
				if g == 0 && *w < 1e-7 {
					// A true zero variance (a rater who used one category)
					// that statsmodels leaves as rounding residue ~1e-16,
					// whose square root is ~1e-8; we round it to 0.
					zeroed++
					return
				}
				t.Errorf("table %d %v %s %s = %.12f, reference %.12f", i, table, kind, what, g, *w)
			}
			cmp("kappa (sklearn 1.2.1)", got.Kappa, want[0])
			cmp("kappa (statsmodels 0.13.5)", got.Kappa, want[1])
			cmp("SE (statsmodels 0.13.5 std_kappa)", got.SE, want[2])
			cmp("SE0 (statsmodels 0.13.5 std_kappa0)", got.SE0, want[3])
		}
	}
	t.Logf("%d standard errors were rounding residue in statsmodels and exactly 0 here", zeroed)
}

// fleissScript: statsmodels' fleiss_kappa of each subject × category table.
const fleissScript = `
import json, sys, math
import numpy as np
from statsmodels.stats.inter_rater import fleiss_kappa
out = []
for table in json.load(open(sys.argv[1])):
    x = float(fleiss_kappa(np.array(table, dtype=float), method="fleiss"))
    out.append(x if math.isfinite(x) else None)
print(json.dumps(out))
`

func TestFleissKappaAgainstStatsmodels(t *testing.T) {
	needPython(t, "statsmodels")
	r := rand.New(rand.NewPCG(1971, 1979))
	var tables [][][]float64
	for len(tables) < 300 {
		subjects, k, raters := 3+r.IntN(40), 2+r.IntN(5), 2+r.IntN(9)
		table := make([][]float64, subjects)
		for s := range table {
			table[s] = make([]float64, k)
			// A favoured category per subject makes agreement above chance.
			fav := r.IntN(k)
			for range raters {
				c := r.IntN(k)
				if r.Float64() < 0.5 {
					c = fav
				}
				table[s][c]++
			}
		}
		if f, err := FleissKappa(table); err != nil || math.IsNaN(f.Kappa) {
			continue
		}
		tables = append(tables, table)
	}
	var ref []*float64
	runReference(t, fleissScript, tables, &ref)
	if len(ref) != len(tables) {
		t.Fatalf("reference returned %d results for %d tables", len(ref), len(tables))
	}
	for i, table := range tables {
		f, _ := FleissKappa(table)
		// statsmodels 0.13.5, fleiss_kappa(table, method="fleiss").
		if ref[i] == nil || !within(f.Kappa, *ref[i], 1e-9) {
			t.Errorf("table %d: κ = %.12f, statsmodels %v", i, f.Kappa, ref[i])
		}
	}
}
