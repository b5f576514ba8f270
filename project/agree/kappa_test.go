package agree

import (
	"math"
	"strings"
	"testing"
)

// within reports whether got is within tol of want.
func within(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

func TestCohenKappaTwoByTwo(t *testing.T) {
	// The worked 2×2 example of the Wikipedia article "Cohen's kappa":
	// po 0.70, pe 0.50, κ 0.40.
	k, err := CohenKappa([][]float64{{20, 5}, {10, 15}})
	if err != nil {
		t.Fatal(err)
	}
	if !within(k.Po, 0.70, 1e-12) || !within(k.Pe, 0.50, 1e-12) || !within(k.Kappa, 0.40, 1e-12) || k.N != 50 {
		t.Errorf("got N %g po %g pe %g κ %g, want 50 0.70 0.50 0.40", k.N, k.Po, k.Pe, k.Kappa)
	}
	// statsmodels 0.13.5, cohens_kappa(...).std_kappa = 0.126996…
	if !within(k.SE, 0.126996, 5e-7) {
		t.Errorf("SE = %.7f, want 0.126996", k.SE)
	}
}

func TestCohenKappaCohen1960(t *testing.T) {
	// Cohen (1960), Educational and Psychological Measurement 20:37–46,
	// Table 1 proportions with N = 200; Cohen reports κ = .49
	// (0.29/0.59 = 0.4915).
	prop := [][]float64{{.44, .07, .09}, {.05, .20, .05}, {.01, .03, .06}}
	table := make([][]float64, 3)
	for i := range prop {
		table[i] = make([]float64, 3)
		for j := range prop[i] {
			table[i][j] = math.Round(prop[i][j] * 200)
		}
	}
	k, err := CohenKappa(table)
	if err != nil {
		t.Fatal(err)
	}
	if !within(k.Kappa, 0.4915, 5e-5) || !within(k.Po, 0.70, 1e-12) || !within(k.Pe, 0.41, 1e-12) {
		t.Errorf("κ %.5f po %g pe %g, want 0.4915 0.70 0.41", k.Kappa, k.Po, k.Pe)
	}
}

func TestCohenKappaSASPrintout(t *testing.T) {
	// A SAS PROC FREQ printout (AGREE option) reproduced in statsmodels'
	// test suite (statsmodels/stats/tests/test_inter_rater.py): simple κ
	// 0.4842, ASE 0.1380, 95 % CI 0.2137–0.7547, ASE under H0 0.1484,
	// z 3.2626; weighted with linear weights κ 0.4701, ASE 0.1457,
	// CI 0.1845–0.7558, ASE under H0 0.1426, z 3.2971.
	table := [][]float64{{0, 4, 1}, {0, 8, 0}, {0, 1, 5}}
	k, err := CohenKappa(table)
	if err != nil {
		t.Fatal(err)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"kappa", k.Kappa, 0.4842}, {"ASE", k.SE, 0.1380},
		{"CI low", k.CI95[0], 0.2137}, {"CI high", k.CI95[1], 0.7547},
		{"ASE0", k.SE0, 0.1484}, {"z", k.Z, 3.2626},
	}
	for _, c := range checks {
		if !within(c.got, c.want, 5e-5) {
			t.Errorf("%s = %.5f, want %.4f", c.name, c.got, c.want)
		}
	}
	w, _ := DisagreementWeights("linear", 3)
	kw, err := WeightedKappa(table, w)
	if err != nil {
		t.Fatal(err)
	}
	wchecks := []struct {
		name      string
		got, want float64
	}{
		{"kappa", kw.Kappa, 0.4701}, {"ASE", kw.SE, 0.1457},
		{"CI low", kw.CI95[0], 0.1845}, {"CI high", kw.CI95[1], 0.7558},
		{"ASE0", kw.SE0, 0.1426}, {"z", kw.Z, 3.2971},
	}
	for _, c := range wchecks {
		if !within(c.got, c.want, 5e-5) {
			t.Errorf("weighted %s = %.5f, want %.4f", c.name, c.got, c.want)
		}
	}
}

func TestDisagreementWeights(t *testing.T) {
	lin, err := DisagreementWeights("linear", 4)
	if err != nil {
		t.Fatal(err)
	}
	quad, err := DisagreementWeights("quadratic", 4)
	if err != nil {
		t.Fatal(err)
	}
	// Cohen (1968): weights grow with the distance between categories.
	if lin[0][3] != 3 || lin[2][1] != 1 || quad[0][3] != 9 || quad[3][1] != 4 || lin[2][2] != 0 || quad[1][1] != 0 {
		t.Errorf("linear %v, quadratic %v", lin, quad)
	}
	if w, err := DisagreementWeights("none", 4); err != nil || w != nil {
		t.Errorf("none: %v, %v; want nil, nil", w, err)
	}
	if _, err := DisagreementWeights("cubic", 4); err == nil {
		t.Error("unknown kind accepted")
	}
	if _, err := DisagreementWeights("linear", 0); err == nil {
		t.Error("k = 0 accepted")
	}
}

func TestWeightedKappaScaleInvariant(t *testing.T) {
	// Cohen (1968): κw = 1 − Σ v p_o / Σ v p_e does not change when all
	// weights are multiplied by a constant; the SEs must not either.
	table := [][]float64{{11, 3, 1, 0}, {2, 9, 4, 1}, {0, 3, 8, 2}, {1, 0, 2, 6}}
	w, _ := DisagreementWeights("quadratic", 4)
	w7 := make([][]float64, 4)
	for i := range w {
		w7[i] = make([]float64, 4)
		for j := range w[i] {
			w7[i][j] = 7 * w[i][j]
		}
	}
	a, err := WeightedKappa(table, w)
	if err != nil {
		t.Fatal(err)
	}
	b, err := WeightedKappa(table, w7)
	if err != nil {
		t.Fatal(err)
	}
	if !within(a.Kappa, b.Kappa, 1e-12) || !within(a.SE, b.SE, 1e-12) || !within(a.SE0, b.SE0, 1e-12) || !within(a.Po, b.Po, 1e-12) {
		t.Errorf("×1 %+v\n×7 %+v", a, b)
	}
	// Disagreement form, computed directly.
	var num, den, n float64
	row, col := make([]float64, 4), make([]float64, 4)
	for i := range table {
		for j := range table[i] {
			n += table[i][j]
			row[i] += table[i][j]
			col[j] += table[i][j]
		}
	}
	for i := range table {
		for j := range table[i] {
			num += w[i][j] * table[i][j] / n
			den += w[i][j] * row[i] * col[j] / (n * n)
		}
	}
	if !within(a.Kappa, 1-num/den, 1e-12) {
		t.Errorf("κw %.12f, direct %.12f", a.Kappa, 1-num/den)
	}
	// Nil weights mean unweighted.
	u, _ := CohenKappa(table)
	nw, _ := WeightedKappa(table, nil)
	if u.Kappa != nw.Kappa || u.SE != nw.SE {
		t.Errorf("nil weights %v, unweighted %v", nw.Kappa, u.Kappa)
	}
}

func TestKappaErrors(t *testing.T) {
	bad := map[string][][]float64{
		"empty":      {},
		"not square": {{1, 2, 3}, {4, 5, 6}},
		"ragged":     {{1, 2}, {3}},
		"negative":   {{1, -2}, {3, 4}},
		"NaN":        {{1, math.NaN()}, {3, 4}},
		"infinite":   {{1, math.Inf(1)}, {3, 4}},
		"all zero":   {{0, 0}, {0, 0}},
	}
	for name, table := range bad {
		if _, err := CohenKappa(table); err == nil {
			t.Errorf("%s: CohenKappa accepted %v", name, table)
		}
		if _, err := WeightedKappa(table, [][]float64{{0, 1}, {1, 0}}); err == nil {
			t.Errorf("%s: WeightedKappa accepted %v", name, table)
		}
	}
	table := [][]float64{{3, 1}, {2, 4}}
	badW := map[string]struct {
		w    [][]float64
		want string
	}{
		"diagonal":   {[][]float64{{0, 1}, {1, 0.5}}, "row 1, column 1"},
		"negative":   {[][]float64{{0, -1}, {1, 0}}, "row 0, column 1"},
		"wrong size": {[][]float64{{0, 1, 2}, {1, 0, 1}, {2, 1, 0}}, "rows"},
		"ragged":     {[][]float64{{0, 1}, {1}}, "row 1"},
		"NaN":        {[][]float64{{0, math.NaN()}, {1, 0}}, "row 0, column 1"},
	}
	for name, c := range badW {
		_, err := WeightedKappa(table, c.w)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s weights: error %v, want one naming %q", name, err, c.want)
		}
	}
}

func TestKappaUndefined(t *testing.T) {
	// Both raters use one category only: pe = 1, so κ = 0/0.
	for _, table := range [][][]float64{{{10, 0}, {0, 0}}, {{7}}} {
		k, err := CohenKappa(table)
		if err != nil {
			t.Fatal(err)
		}
		if !math.IsNaN(k.Kappa) || !math.IsNaN(k.SE) || !math.IsNaN(k.SE0) || !math.IsNaN(k.Z) || len(k.Notes) == 0 {
			t.Errorf("%v: %+v, want NaN with a note", table, k)
		}
		if Band(k.Kappa) != "undefined" {
			t.Errorf("band of NaN = %q", Band(k.Kappa))
		}
		w := make([][]float64, len(table))
		for i := range w {
			w[i] = make([]float64, len(table))
		}
		kw, err := WeightedKappa(table, w) // all-zero weights: nothing can disagree
		if err != nil || !math.IsNaN(kw.Kappa) || len(kw.Notes) == 0 {
			t.Errorf("%v zero weights: %+v, %v", table, kw, err)
		}
	}
	// Rater A used one category only: κ is 0 whatever B does, so both
	// variances are truly 0, not the 1e-8 that rounding would leave.
	k, err := CohenKappa([][]float64{{0, 0}, {4, 22}})
	if err != nil || k.Kappa != 0 || k.SE != 0 || k.SE0 != 0 || !math.IsNaN(k.Z) || len(k.Notes) == 0 {
		t.Errorf("one-category rater: %+v, %v", k, err)
	}
	// Perfect agreement: κ = 1 with SE 0, not a NaN from a tiny negative variance.
	k, err = CohenKappa([][]float64{{5, 0}, {0, 5}})
	if err != nil || k.Kappa != 1 || k.SE != 0 || math.IsNaN(k.Z) {
		t.Errorf("perfect agreement: %+v, %v", k, err)
	}
}
