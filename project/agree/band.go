package agree

import "math"

// BandCitation names the source of the verbal bands returned by Band.
const BandCitation = "Landis & Koch (1977), Biometrics 33:159–174"

// BandRule says how Band closes the gaps the published bands leave
// (0.00–0.20, 0.21–0.40, …): every band but "poor" is open below and closed
// above, so poor κ < 0, slight 0 ≤ κ ≤ 0.20, fair 0.20 < κ ≤ 0.40,
// moderate 0.40 < κ ≤ 0.60, substantial 0.60 < κ ≤ 0.80 and almost perfect
// 0.80 < κ ≤ 1.
const BandRule = "Each band includes its printed upper limit and starts just above the previous one: poor κ < 0, slight 0 ≤ κ ≤ 0.20, fair 0.20 < κ ≤ 0.40, moderate 0.40 < κ ≤ 0.60, substantial 0.60 < κ ≤ 0.80, almost perfect 0.80 < κ ≤ 1 (so 0.205 is fair)."

// Band returns the Landis & Koch (1977) verbal label of a kappa value under
// BandRule: "poor", "slight", "fair", "moderate", "substantial" or
// "almost perfect"; "undefined" for NaN. Values are compared as given, not
// rounded, so a computed 0.2000000001 is fair.
func Band(kappa float64) string {
	switch {
	case math.IsNaN(kappa):
		return "undefined"
	case kappa < 0:
		return "poor"
	case kappa <= 0.20:
		return "slight"
	case kappa <= 0.40:
		return "fair"
	case kappa <= 0.60:
		return "moderate"
	case kappa <= 0.80:
		return "substantial"
	default:
		// Above 1 only through rounding; it still is the top band.
		return "almost perfect"
	}
}
