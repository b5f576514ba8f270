package project

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"testing"
)

// wilsonScript prints statsmodels' proportion_confint(k, n, alpha=0.05,
// method="wilson") for each [k, n] of its argument.
const wilsonScript = `
import json, sys
from statsmodels.stats.proportion import proportion_confint
print(json.dumps([list(proportion_confint(k, n, alpha=0.05, method="wilson")) for k, n in json.loads(sys.argv[1])]))
`

// The Wilson interval reproduces Debian 12's python3-statsmodels (0.13.5)
// proportion_confint(method="wilson") to 1e-12, small n and the ends
// (k = 0, k = n) included.
func TestWilsonIntervalMatchesStatsmodels(t *testing.T) {
	cases := [][2]int{{0, 1}, {1, 1}, {0, 5}, {5, 5}, {1, 2}, {3, 7}, {19, 20}, {20, 20}, {95, 100}, {1, 100}, {412, 433}, {9999, 10000}}
	arg, _ := json.Marshal(cases)
	out, err := exec.Command("/usr/bin/python3", "-c", wilsonScript, string(arg)).Output()
	if err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-statsmodels for this check: %v", err)
		}
		t.Skipf("python3-statsmodels is not available (apt-get install python3-statsmodels): %v", err)
	}
	var want [][2]float64
	if err := json.Unmarshal(out, &want); err != nil || len(want) != len(cases) {
		t.Fatalf("reference output %q: %v", out, err)
	}
	for i, c := range cases {
		got := WilsonInterval(c[0], c[1], Z95)
		for e := range 2 {
			// statsmodels does not clip; its ends at k = 0 or n are 0 or 1
			// up to rounding.
			if math.Abs(got[e]-want[i][e]) > 1e-12 {
				t.Errorf("WilsonInterval(%d, %d) = %v, statsmodels %v", c[0], c[1], got, want[i])
				break
			}
		}
	}
}

// Wilson (1927), worked by hand from the formula: one success in one
// trial gives [1/(1+z²), 1] = [0.2065…, 1] at 95 %; undefined input gives
// NaN.
func TestWilsonIntervalEdges(t *testing.T) {
	got := WilsonInterval(1, 1, Z95)
	if lo := 1 / (1 + Z95*Z95); math.Abs(got[0]-lo) > 1e-15 || got[1] != 1 {
		t.Errorf("1 of 1: %v, want [%v, 1]", got, lo)
	}
	for _, c := range [][2]int{{0, 0}, {-1, 3}, {4, 3}} {
		if got := WilsonInterval(c[0], c[1], Z95); !math.IsNaN(got[0]) || !math.IsNaN(got[1]) {
			t.Errorf("WilsonInterval(%d, %d) = %v, want NaN", c[0], c[1], got)
		}
	}
}
