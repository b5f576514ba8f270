package exemplar

import "testing"

func TestZZPlan(t *testing.T) {
	for _, s := range [][4]int{{4000, 3000, 64, 64}, {4000, 3000, 51, 51}, {4000, 3000, 80, 80}, {1000, 750, 16, 16}, {1000, 750, 13, 13}, {1000, 750, 20, 20}} {
		m, n, c := planTiles(s[0], s[1], s[2], s[3])
		t.Logf("%v: %dx%d cost %.3g direct %v", s, m, n, c, chooseMethod(s[0], s[1], s[2], s[3]))
	}
}
