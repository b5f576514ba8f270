package eval

import "math"

// AveragePrecision summarises a ranked list: tp[i] tells whether the i-th
// prediction in descending score order is a true positive, and nTruth is the
// number of ground-truth boxes (those never found lower the recall). It is
// NaN when nTruth is 0.
func AveragePrecision(tp []bool, nTruth int, interp Interpolation) float64 {
	var prec []float64
	hits := 0
	for i, t := range tp {
		if t {
			hits++
			prec = append(prec, float64(hits)/float64(i+1))
		}
	}
	return apAtHits(prec, nTruth, interp, false)
}

// apAtHits is the AP of a ranked list given the precision at each of its
// true positives in rank order, prec[h] = (h+1)/(rank of the (h+1)-th true
// positive), which it overwrites. Every figure needs only these: precision
// rises only at a true positive, so the best precision at a rank or later
// (the envelope) is the best at a true positive there or later, and recall
// steps up only at true positives. With cocoLevels Point101 uses the COCO
// evaluation tool's recall levels. NaN when nTruth is 0.
func apAtHits(prec []float64, nTruth int, interp Interpolation, cocoLevels bool) float64 {
	if nTruth <= 0 {
		return math.NaN()
	}
	if interp == Step {
		// Σ (R_n − R_{n−1}) P_n: recall steps 1/nTruth at each hit.
		s := 0.0
		for _, p := range prec {
			s += p
		}
		return s / float64(nTruth)
	}
	for i := len(prec) - 2; i >= 0; i-- {
		if prec[i+1] > prec[i] {
			prec[i] = prec[i+1]
		}
	}
	switch interp {
	case ElevenPoint:
		return levels(prec, nTruth, 10)
	case Point101:
		if cocoLevels {
			return levelsCOCO(prec, nTruth)
		}
		return levels(prec, nTruth, 100)
	case AllPoint:
		// Recall only rises at true positives, by 1/nTruth each; the area
		// under the envelope is the envelope's precision there times 1/nTruth.
		s := 0.0
		for _, p := range prec {
			s += p
		}
		return s / float64(nTruth)
	}
	return math.NaN()
}

// AveragePrecisionStep is the non-interpolated average precision
// Σ (R_n − R_{n−1}) P_n over the ranks of tp (score order), with recall
// relative to nTruth. NaN when nTruth is 0.
func AveragePrecisionStep(tp []bool, nTruth int) float64 {
	return AveragePrecision(tp, nTruth, Step)
}

// levels averages, over recall levels r = k/steps for k = 0…steps, the best
// precision at recall ≥ r (0 when the list never reaches r); env[h] is the
// envelope at the (h+1)-th true positive. Recall ≥ k/steps is tested as
// hits·steps ≥ k·nTruth so decimal levels are exact.
func levels(env []float64, nTruth, steps int) float64 {
	if len(env) == 0 {
		return 0
	}
	// Level 0 takes the best precision anywhere; the envelope at the first
	// true positive reaching a level is the best precision at that recall
	// or beyond.
	s, k := env[0], 1
	for h, e := range env {
		hits := h + 1
		for k <= steps && hits*steps >= k*nTruth {
			s += e
			k++
		}
	}
	return s / float64(steps+1)
}

// levelsCOCO is levels at the COCO evaluation tool's 101 recall levels
// (cocoRecallLevels), with recall computed as it does, hits/nTruth in
// float64, and a level reached when the recall is at or above it (its
// searchsorted(side='left')).
func levelsCOCO(env []float64, nTruth int) float64 {
	last := len(cocoRecallLevels) - 1
	if len(env) == 0 {
		return 0
	}
	s, k := env[0], 1
	n := float64(nTruth)
	for h, e := range env {
		rc := float64(h+1) / n
		for k <= last && rc >= cocoRecallLevels[k] {
			s += e
			k++
		}
	}
	return s / float64(last+1)
}
