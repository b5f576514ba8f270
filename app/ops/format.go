package ops

import (
	"fmt"
	"math"
	"strconv"

	"boxwright/project/agree"
)

func Plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

func CSVNum(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 10, 64)
}

// num is a figure for JSON: null when undefined.
func Num(x float64) any {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return x
}

func Interval(ci [2]float64) any {
	if math.IsNaN(ci[0]) || math.IsNaN(ci[1]) {
		return nil
	}
	return []float64{ci[0], ci[1]}
}

// fmtKappa is a kappa with its verbal band, never the band alone.
func FormatKappa(k agree.Kappa) string {
	if math.IsNaN(k.Kappa) {
		return "undefined"
	}
	return fmt.Sprintf("%.4f (%s, Landis & Koch 1977)", k.Kappa, agree.Band(k.Kappa))
}

func F4(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return fmt.Sprintf("%.4f", x)
}

func Pct(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return fmt.Sprintf("%.1f %%", 100*x)
}

func CI(c [2]float64) string {
	if math.IsNaN(c[0]) {
		return "—"
	}
	return fmt.Sprintf("[%.4f, %.4f]", c[0], c[1])
}
