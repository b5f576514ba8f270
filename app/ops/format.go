package ops

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"boxwright/project/agree"
)

// Plural is "1 word" or "n words".
func Plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	// English adds -es after a sibilant: boxes, matches, classes.
	for _, end := range []string{"x", "ch", "sh", "s", "z"} {
		if strings.HasSuffix(word, end) {
			return fmt.Sprintf("%d %ses", n, word)
		}
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// CSVNum is a figure for a CSV cell: empty when undefined.
func CSVNum(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 10, 64)
}

// Num is a figure for JSON: null when undefined.
func Num(x float64) any {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return x
}

// Interval is a confidence interval for JSON: null when undefined or
// infinite.
func Interval(ci [2]float64) any {
	if Num(ci[0]) == nil || Num(ci[1]) == nil {
		return nil // JSON has no NaN or Inf
	}
	return []float64{ci[0], ci[1]}
}

// FormatKappa is a kappa with its verbal band, never the band alone.
func FormatKappa(k agree.Kappa) string {
	if math.IsNaN(k.Kappa) {
		return "undefined"
	}
	return fmt.Sprintf("%.4f (%s, Landis & Koch 1977)", k.Kappa, agree.Band(k.Kappa))
}

// F4 is a figure with four decimals for people: a dash when undefined.
func F4(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return fmt.Sprintf("%.4f", x)
}

// Pct is a share as a percentage with one decimal: a dash when undefined.
func Pct(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return fmt.Sprintf("%.1f %%", 100*x)
}

// CI is a confidence interval for people: a dash when undefined.
func CI(c [2]float64) string {
	if math.IsNaN(c[0]) {
		return "—"
	}
	return fmt.Sprintf("[%.4f, %.4f]", c[0], c[1])
}
