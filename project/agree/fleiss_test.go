package agree

import (
	"math"
	"strings"
	"testing"
)

// fleiss1971 is the example of Fleiss (1971), Psychological Bulletin
// 76(5):378–382, Table 1: 30 subjects, 6 raters each, 5 categories.
var fleiss1971 = [][]float64{
	{0, 0, 0, 6, 0}, {0, 3, 0, 0, 3}, {0, 1, 4, 0, 1}, {0, 0, 0, 0, 6}, {0, 3, 0, 3, 0},
	{2, 0, 4, 0, 0}, {0, 0, 4, 0, 2}, {2, 0, 3, 1, 0}, {2, 0, 0, 4, 0}, {0, 0, 0, 0, 6},
	{1, 0, 0, 5, 0}, {1, 1, 0, 4, 0}, {0, 3, 3, 0, 0}, {1, 0, 0, 5, 0}, {0, 2, 0, 3, 1},
	{0, 0, 5, 0, 1}, {3, 0, 0, 1, 2}, {5, 1, 0, 0, 0}, {0, 2, 0, 4, 0}, {1, 0, 2, 0, 3},
	{0, 0, 0, 0, 6}, {0, 1, 0, 5, 0}, {0, 2, 0, 1, 3}, {2, 0, 0, 4, 0}, {1, 0, 0, 4, 1},
	{0, 5, 0, 1, 0}, {4, 0, 0, 0, 2}, {0, 2, 0, 4, 0}, {1, 0, 5, 0, 0}, {0, 0, 0, 0, 6},
}

func TestFleissKappa1971(t *testing.T) {
	f, err := FleissKappa(fleiss1971)
	if err != nil {
		t.Fatal(err)
	}
	if f.Subjects != 30 || f.Raters != 6 {
		t.Errorf("subjects %d raters %d, want 30 6", f.Subjects, f.Raters)
	}
	// Fleiss (1971), p. 380: κ = .430; to full precision 0.4302445.
	if !within(f.Kappa, 0.4302445, 5e-8) {
		t.Errorf("κ = %.8f, want 0.4302445", f.Kappa)
	}
	// Fleiss (1971), p. 381: per-category κ_j .245 .245 .520 .471 .566.
	want := []float64{.245, .245, .520, .471, .566}
	for j, w := range want {
		if !within(f.PerCategory[j], w, 5e-4) {
			t.Errorf("κ_%d = %.4f, want %.3f", j+1, f.PerCategory[j], w)
		}
	}
	if math.IsNaN(f.SE0) || f.SE0 <= 0 {
		t.Errorf("SE0 = %g", f.SE0)
	}
}

func TestFleissSE0TwoCategories(t *testing.T) {
	// Fleiss, Nee & Landis (1979): with two categories Σ p q (q − p) = 0,
	// so Var0(κ) = 2 / (N n (n − 1)) whatever the margins.
	counts := [][]float64{{3, 1}, {4, 0}, {2, 2}, {1, 3}, {4, 0}}
	f, err := FleissKappa(counts)
	if err != nil {
		t.Fatal(err)
	}
	if want := math.Sqrt(2.0 / (5 * 4 * 3)); !within(f.SE0, want, 1e-12) {
		t.Errorf("SE0 = %.12f, want %.12f", f.SE0, want)
	}
	// With two categories each category against the rest is the whole
	// question, so both κ_j equal κ.
	for j, kj := range f.PerCategory {
		if !within(kj, f.Kappa, 1e-12) {
			t.Errorf("κ_%d = %g, κ = %g", j, kj, f.Kappa)
		}
	}
}

func TestFleissKappaErrors(t *testing.T) {
	bad := map[string]struct {
		counts [][]float64
		want   string
	}{
		"no subjects":    {nil, "no subjects"},
		"unequal raters": {[][]float64{{2, 1}, {1, 1}, {3, 0}}, "subject 1"},
		"one rater":      {[][]float64{{1, 0}, {0, 1}}, "at least 2"},
		"negative":       {[][]float64{{3, 0}, {4, -1}}, "subject 1"},
		"fraction":       {[][]float64{{1.5, 1.5}, {3, 0}}, "subject 0"},
		"ragged":         {[][]float64{{1, 2}, {3}}, "subject 1"},
		"NaN":            {[][]float64{{1, 2}, {math.NaN(), 3}}, "subject 1"},
	}
	for name, c := range bad {
		_, err := FleissKappa(c.counts)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one naming %q", name, err, c.want)
		}
	}
}

func TestFleissKappaUndefined(t *testing.T) {
	f, err := FleissKappa([][]float64{{3, 0}, {3, 0}})
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(f.Kappa) || !math.IsNaN(f.SE0) || len(f.Notes) == 0 {
		t.Errorf("%+v, want NaN with a note", f)
	}
	if !math.IsNaN(f.PerCategory[0]) || !math.IsNaN(f.PerCategory[1]) {
		t.Errorf("per category %v, want NaN", f.PerCategory)
	}
}
