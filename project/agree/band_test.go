package agree

import (
	"math"
	"testing"
)

func TestBand(t *testing.T) {
	// Landis & Koch (1977), Biometrics 33:159–174, p. 165: <0 poor,
	// 0.00–0.20 slight, 0.21–0.40 fair, 0.41–0.60 moderate,
	// 0.61–0.80 substantial, 0.81–1.00 almost perfect; the gaps are closed
	// by BandRule (upper limits included).
	cases := []struct {
		k    float64
		want string
	}{
		{-0.5, "poor"}, {-1e-9, "poor"}, {0, "slight"}, {0.1, "slight"}, {0.2, "slight"},
		{0.205, "fair"}, {0.4, "fair"}, {0.4000001, "moderate"}, {0.6, "moderate"},
		{0.65, "substantial"}, {0.8, "substantial"}, {0.805, "almost perfect"},
		{1, "almost perfect"}, {math.NaN(), "undefined"},
	}
	for _, c := range cases {
		if got := Band(c.k); got != c.want {
			t.Errorf("Band(%g) = %q, want %q", c.k, got, c.want)
		}
	}
	if BandRule == "" || BandCitation == "" {
		t.Error("band rule or citation empty")
	}
}
