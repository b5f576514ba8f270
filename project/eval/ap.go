package eval

import "math"

// AveragePrecision summarises a ranked list: tp[i] tells whether the i-th
// prediction in descending score order is a true positive, and nTruth is the
// number of ground-truth boxes (those never found lower the recall). It is
// NaN when nTruth is 0.
func AveragePrecision(tp []bool, nTruth int, interp Interpolation) float64 {
	return averagePrecision(tp, nTruth, interp, false, nil)
}

// averagePrecision is AveragePrecision with the COCO evaluation tool's
// recall levels for Point101 when cocoLevels is set; env, when not nil, is
// scratch storage it reuses.
func averagePrecision(tp []bool, nTruth int, interp Interpolation, cocoLevels bool, env *[]float64) float64 {
	if nTruth <= 0 {
		return math.NaN()
	}
	var buf []float64
	if env != nil {
		buf = *env
	}
	defer func() {
		if env != nil {
			*env = buf
		}
	}()
	switch interp {
	case Step:
		return AveragePrecisionStep(tp, nTruth)
	case ElevenPoint:
		buf = envelope(tp, buf)
		return levels(tp, buf, nTruth, 10)
	case Point101:
		buf = envelope(tp, buf)
		if cocoLevels {
			return levelsCOCO(tp, buf, nTruth)
		}
		return levels(tp, buf, nTruth, 100)
	case AllPoint:
		// Recall only rises at true positives, by 1/nTruth each; the area
		// under the envelope is the envelope's precision there times 1/nTruth.
		buf = envelope(tp, buf)
		s := 0.0
		for i, t := range tp {
			if t {
				s += buf[i]
			}
		}
		return s / float64(nTruth)
	}
	return math.NaN()
}

// AveragePrecisionStep is the non-interpolated average precision
// Σ (R_n − R_{n−1}) P_n over the ranks of tp (score order), with recall
// relative to nTruth. NaN when nTruth is 0.
func AveragePrecisionStep(tp []bool, nTruth int) float64 {
	if nTruth <= 0 {
		return math.NaN()
	}
	s, hits := 0.0, 0
	for i, t := range tp {
		if t {
			hits++
			s += float64(hits) / float64(i+1)
		}
	}
	return s / float64(nTruth)
}

// envelope returns, per rank, the best precision at that rank or any later
// one (so at that recall or higher), in buf's storage when it is large
// enough.
func envelope(tp []bool, buf []float64) []float64 {
	env := grow(buf, len(tp))
	hits := 0
	for i, t := range tp {
		if t {
			hits++
		}
		env[i] = float64(hits) / float64(i+1)
	}
	for i := len(env) - 2; i >= 0; i-- {
		if env[i+1] > env[i] {
			env[i] = env[i+1]
		}
	}
	return env
}

// levels averages, over recall levels r = k/steps for k = 0…steps, the best
// precision at recall ≥ r (0 when the list never reaches r), env being tp's
// envelope. Recall ≥ k/steps is tested as hits·steps ≥ k·nTruth so decimal
// levels are exact.
func levels(tp []bool, env []float64, nTruth, steps int) float64 {
	s, hits, k := 0.0, 0, 0
	// The envelope at the first rank reaching a level is the best precision
	// at that recall or beyond; recall only rises at true positives.
	if len(tp) > 0 {
		s += env[0] // recall ≥ 0: the best precision anywhere
	}
	k = 1
	for i, t := range tp {
		if !t {
			continue
		}
		hits++
		for k <= steps && hits*steps >= k*nTruth {
			s += env[i]
			k++
		}
	}
	return s / float64(steps+1)
}

// levelsCOCO is levels at the COCO evaluation tool's 101 recall levels
// (cocoRecallLevels), with recall computed as it does, hits/nTruth in
// float64, and a level reached when the recall is at or above it (its
// searchsorted(side='left')).
func levelsCOCO(tp []bool, env []float64, nTruth int) float64 {
	s, hits, k := 0.0, 0, 1
	if len(tp) > 0 {
		s += env[0] // level 0
	}
	n := float64(nTruth)
	last := len(cocoRecallLevels) - 1
	for i, t := range tp {
		if !t {
			continue
		}
		hits++
		rc := float64(hits) / n
		for k <= last && rc >= cocoRecallLevels[k] {
			s += env[i]
			k++
		}
	}
	return s / float64(last+1)
}
