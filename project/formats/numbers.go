package formats

import "math"

// Precision of the numbers a writer computes. A value stored in the
// project (a box corner, a score) is written in the shortest form that
// reads back to the same float64. A value the writer computes from stored
// ones (a corner/size width X1−X0, an area, a 1-based index X0+1, a
// centre-normalised (X0+X1)/2/W) carries the rounding of binary arithmetic:
// 38.43 stored as a corner and a width of 38.43 computed as 49.2−10.77 is
// 38.43000000000001 in float64. Such values are rounded to these many
// decimals before they are written, so that the file says 38.43, where
// the rounding only removes that noise (dropNoise).
const (
	// PixelDecimals rounds computed pixel values (widths, heights, areas,
	// 1-based indices) to 1e-6 px (1e-6 px² for areas): a thousandth of
	// the finest edge a person can place on a 1000× zoom, and far above
	// float64 noise on any image (1e-11 px at 100,000 px).
	PixelDecimals = 6
	// CentrePixelDecimals rounds computed centre-normalised values
	// (fractions of the image's width or height, 0..1) to the decimals that
	// hold 1e-10 px on that side: CentrePixelDecimals plus the digits of
	// the side (13 decimals on a side of 100 to 999 px; see
	// normalisedDecimals). Finer than PixelDecimals because such a
	// fraction of a stored corner (308.86/960 = 0.32172916…) has no short
	// form, and reading it back should give the stored corner, not one
	// rounded to 1e-6 px; still coarser than float64 noise (1e-16).
	CentrePixelDecimals = 10
)

// roundDecimals rounds v to d decimals. For |v|·10^d below 2^53 the result
// is the float64 nearest the decimal, so its shortest form has at most d
// decimals; larger values keep their precision, which is coarser already.
func roundDecimals(v float64, d int) float64 {
	p := math.Pow10(d)
	if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v)*p >= 1<<53 {
		return v
	}
	r := math.Round(v*p) / p
	if r == 0 {
		return 0 // no "-0"
	}
	return r
}

// roundPixels rounds a computed pixel value to PixelDecimals.
func roundPixels(v float64) float64 { return roundDecimals(v, PixelDecimals) }

// dropNoise rounds a value computed from stored ones to PixelDecimals only
// when that moves it by no more than the float64 rounding of the
// arithmetic that made it, at most 4 units in the last place of scale (the
// largest magnitude that went into it; IEEE 754 round to nearest, common
// practice). So 49.2−10.77 = 38.43000000000001 is written 38.43, while a
// real 7e-7 px side, finer than PixelDecimals, keeps its value instead of
// becoming 1e-6 or 0: whatever was read is written back as it was.
func dropNoise(v, scale float64) float64 {
	r := roundPixels(v)
	if r != 0 && math.Abs(r-v) <= 4*0x1p-52*math.Max(math.Abs(scale), math.Abs(v)) {
		return r
	}
	return v
}

// roundSide is dropNoise for a width X1−X0 (or a height): scale is the
// larger corner.
func roundSide(v, lo, hi float64) float64 {
	return dropNoise(v, math.Max(math.Abs(lo), math.Abs(hi)))
}

// normalisedDecimals is the number of decimals that hold a fraction of a
// side of n px to 1e-CentrePixelDecimals px: CentrePixelDecimals plus the
// digits of n.
func normalisedDecimals(n int) int {
	d := CentrePixelDecimals
	for ; n > 0; n /= 10 {
		d++
	}
	return d
}

// roundNormalised rounds a computed fraction of a side of n px so that it
// stays within half of 1e-CentrePixelDecimals px.
func roundNormalised(v float64, n int) float64 { return roundDecimals(v, normalisedDecimals(n)) }
