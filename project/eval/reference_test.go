package eval

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// sklearnRanking runs, for each case, sklearn.metrics.average_precision_score
// and precision_recall_curve (Debian 12's python3-sklearn, 1.2.1), the
// reference library outside this project, in one process.
const sklearnRanking = `
import json, sys
import sklearn
from sklearn.metrics import average_precision_score, precision_recall_curve
out = []
for c in json.load(sys.stdin):
    p, r, t = precision_recall_curve(c["y"], c["s"])
    out.append({"ap": average_precision_score(c["y"], c["s"]),
                "p": p.tolist(), "r": r.tolist(), "t": t.tolist()})
print(json.dumps({"version": sklearn.__version__, "cases": out}))
`

// TestRankingAgainstSklearn builds random ranked lists with distinct scores
// (sklearn groups tied scores into one threshold), scores them with Evaluate
// (one prediction per image, a truth under each true positive and, in some
// cases, extra truths never found) and compares with sklearn. sklearn's
// recall is relative to the positives in the list, ours to all truths, so
// our step AP is sklearn's times the largest recall k/n; where every truth is
// found (n = k) they are equal.
func TestRankingAgainstSklearn(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import sklearn").Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-sklearn for this check: %v", err)
		}
		t.Skip("python3-sklearn is not installed (make test installs it)")
	}
	type rcase struct {
		Y     []int     `json:"y"`
		S     []float64 `json:"s"`
		extra int
	}
	r := rand.New(rand.NewPCG(17, 3))
	var cases []rcase
	for len(cases) < 200 {
		n := 1 + r.IntN(40)
		c := rcase{Y: make([]int, n), S: make([]float64, n)}
		k := 0
		for i, v := range r.Perm(n) {
			c.S[i] = float64(v+1) / float64(n+1)
			if r.Float64() < 0.4 {
				c.Y[i] = 1
				k++
			}
		}
		if k == 0 {
			continue // sklearn needs a positive
		}
		if len(cases)%2 == 1 {
			c.extra = r.IntN(5)
		}
		cases = append(cases, c)
	}
	in, _ := json.Marshal(cases)
	cmd := exec.Command(py, "-c", sklearnRanking)
	cmd.Stdin = strings.NewReader(string(in))
	raw, err := cmd.Output()
	if err != nil {
		t.Fatalf("running sklearn: %v", err)
	}
	var out struct {
		Version string
		Cases   []struct {
			AP      float64
			P, R, T []float64
		}
	}
	if err := json.Unmarshal(raw, &out); err != nil || len(out.Cases) != len(cases) {
		t.Fatalf("sklearn output %q: %v", raw, err)
	}
	t.Logf("sklearn %s, %d cases", out.Version, len(cases))

	for ci, c := range cases {
		var truths []Truth
		var preds []Prediction
		k := 0
		for i := range c.Y {
			preds = append(preds, Prediction{ImageID: int64(i), ClassID: 1, Box: bx(0, 0, 10, 10), Score: c.S[i], Ref: int64(i)})
			if c.Y[i] == 1 {
				truths = append(truths, Truth{ImageID: int64(i), ClassID: 1, Box: bx(0, 0, 10, 10)})
				k++
			}
		}
		for e := 0; e < c.extra; e++ {
			truths = append(truths, Truth{ImageID: -1 - int64(e), ClassID: 1, Box: bx(0, 0, 10, 10)})
		}
		n := k + c.extra
		res := mustEval(t, truths, preds, Options{Interpolation: Step})
		cr := res.Classes[0]
		ref := out.Cases[ci]
		maxRecall := float64(k) / float64(n)
		if math.Abs(cr.AP-ref.AP*maxRecall) > 1e-12 {
			t.Errorf("case %d: step AP %.15f, sklearn %.15f × %d/%d", ci, cr.AP, ref.AP, k, n)
		}
		// sklearn's points come in ascending threshold order with a final
		// (precision 1, recall 0) that has no threshold.
		if len(ref.T) != len(cr.Curve) {
			t.Errorf("case %d: %d curve points, sklearn %d thresholds", ci, len(cr.Curve), len(ref.T))
			continue
		}
		for j, pt := range cr.Curve {
			s := len(ref.T) - 1 - j
			if pt.Score != ref.T[s] || math.Abs(pt.Precision-ref.P[s]) > 1e-12 || math.Abs(pt.Recall/maxRecall-ref.R[s]) > 1e-12 {
				t.Errorf("case %d point %d: (score %v, P %v, R %v), sklearn (%v, %v, %v × %v)",
					ci, j, pt.Score, pt.Precision, pt.Recall, ref.T[s], ref.P[s], ref.R[s], maxRecall)
				break
			}
		}
	}
}
