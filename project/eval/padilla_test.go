package eval

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"boxwright/project"
)

// loadPadilla reads testdata/padilla2020.txt (source in the file). Refs are
// 0-based line order; the paper letters its detections A…X in that order.
func loadPadilla(t *testing.T) ([]Truth, []Prediction) {
	t.Helper()
	f, err := os.Open("testdata/padilla2020.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var truths []Truth
	var preds []Prediction
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		fields := strings.Fields(sc.Text())
		if len(fields) == 0 || strings.HasPrefix(fields[0], "#") {
			continue
		}
		num := make([]float64, len(fields)-1)
		for i, s := range fields[1:] {
			if num[i], err = strconv.ParseFloat(s, 64); err != nil {
				t.Fatalf("line %d: %v", line, err)
			}
		}
		box := func(v []float64) project.Box {
			return project.Box{X0: v[0], Y0: v[1], X1: v[0] + v[2], Y1: v[1] + v[3]}
		}
		switch {
		case fields[0] == "gt" && len(num) == 5:
			truths = append(truths, Truth{ImageID: int64(num[0]), ClassID: 1, Box: box(num[1:]), Ref: int64(len(truths))})
		case fields[0] == "det" && len(num) == 6:
			preds = append(preds, Prediction{ImageID: int64(num[0]), ClassID: 1, Score: num[1], Box: box(num[2:]), Ref: int64(len(preds))})
		default:
			t.Fatalf("line %d: cannot read %q", line, sc.Text())
		}
	}
	if len(truths) != 15 || len(preds) != 24 {
		t.Fatalf("read %d truths and %d detections, want 15 and 24", len(truths), len(preds))
	}
	return truths, preds
}

// TestPadilla2020 reproduces the worked example of Padilla, Netto & da Silva,
// IWSSIP 2020 (testdata/padilla2020.txt): VOC matching at IoU 0.3 with
// pixel-inclusive areas gives 7 TP out of 24 detections against 15 truths,
// 11-point AP 26.84 % and all-point AP 24.56 %.
func TestPadilla2020(t *testing.T) {
	truths, preds := loadPadilla(t)
	run := func(interp Interpolation, plusOne bool) Result {
		r, err := Evaluate(truths, preds, Options{Protocol: VOC, IoU: 0.3, PlusOne: plusOne, Interpolation: interp})
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	all := run(AllPoint, true)
	c := all.Classes[0]
	if c.TP != 7 || c.FP != 17 || c.Truths != 15 {
		t.Errorf("TP/FP/truths = %d/%d/%d, paper 7/17/15", c.TP, c.FP, c.Truths)
	}
	last := c.Curve[len(c.Curve)-1]
	if last.Precision != 7.0/24 || last.Recall != 7.0/15 {
		t.Errorf("final precision/recall = %v/%v, paper 7/24 and 7/15", last.Precision, last.Recall)
	}
	// The paper prints 24.56 %; the exact value is 0.2456867.
	if math.Abs(c.AP-0.2456867) > 5e-8 {
		t.Errorf("all-point AP = %.7f, paper 24.56 %% (0.2456867)", c.AP)
	}
	if ap := run(ElevenPoint, true).Classes[0].AP; math.Round(ap*1e4) != 2684 {
		t.Errorf("11-point AP = %.6f, paper 26.84 %%", ap)
	}
	t.Logf("Padilla 2020: all-point AP %.7f, 11-point AP %.7f", c.AP, run(ElevenPoint, true).Classes[0].AP)

	// With continuous areas one true positive of the paper drops below 0.3:
	// detection G (image 3, score .18, corners 109,15–186,54) against the
	// truth 123,30–172,74 overlaps 49×24 = 1176 of 3003 + 2156 − 1176, IoU
	// 0.2953; pixel-inclusive it is 50×25 = 1250 of 3120 + 2250 − 1250,
	// IoU 0.3034. It is the last TP in score order, so the all-point AP
	// changes too.
	cont := run(AllPoint, false)
	if got := cont.Classes[0].TP; got != 6 {
		t.Errorf("continuous IoU: TP = %d, want 6", got)
	}
	for i := range preds {
		if all.PredTP[i] != cont.PredTP[i] && i != 6 {
			t.Errorf("detection %c changes with the area convention; only G should", 'A'+i)
		}
	}
	g, gt := preds[6].Box, truths[5].Box
	if a, b := IoU(g, gt, true), IoU(g, gt, false); !(a >= 0.3 && b < 0.3) || !all.PredTP[6] || cont.PredTP[6] {
		t.Errorf("detection G: IoU %.4f pixel-inclusive, %.4f continuous; want ≥ 0.3 and < 0.3", a, b)
	}
}
