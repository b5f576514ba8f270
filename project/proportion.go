package project

import "math"

// Z95 is the standard normal quantile of 0.975, the z of a two-sided 95 %
// interval (scipy.stats.norm.isf(0.025) = 1.959963984540054).
const Z95 = 1.959963984540054

// WilsonInterval returns the Wilson score interval for a proportion of k
// successes in n trials at the normal quantile z (Z95 for 95 %): E. B.
// Wilson (1927), "Probable inference, the law of succession, and
// statistical inference", JASA 22:209–212. Unlike the normal-approximation
// interval it stays within [0, 1] and is not empty at k = 0 or k = n, so it
// says something honest about a handful of trials. With n <= 0, k outside
// 0..n or z not positive both ends are NaN.
func WilsonInterval(k, n int, z float64) [2]float64 {
	if n <= 0 || k < 0 || k > n || !(z > 0) || math.IsInf(z, 0) {
		return [2]float64{math.NaN(), math.NaN()}
	}
	nf := float64(n)
	p := float64(k) / nf
	z2 := z * z
	denom := 1 + z2/nf
	centre := (p + z2/(2*nf)) / denom
	half := z * math.Sqrt(p*(1-p)/nf+z2/(4*nf*nf)) / denom
	// Rounding can leave the ends a hair outside [0, 1] at k = 0 or k = n.
	return [2]float64{max(centre-half, 0), min(centre+half, 1)}
}
