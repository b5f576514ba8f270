package eval

import "math"

// AveragePrecision summarises a ranked list: tp[i] tells whether the i-th
// prediction in descending score order is a true positive, and nTruth is the
// number of ground-truth boxes (those never found lower the recall). It is
// NaN when nTruth is 0.
func AveragePrecision(tp []bool, nTruth int, interp Interpolation) float64 {
	if nTruth <= 0 {
		return math.NaN()
	}
	switch interp {
	case Step:
		return AveragePrecisionStep(tp, nTruth)
	case ElevenPoint:
		return levels(tp, nTruth, 10)
	case Point101:
		return levels(tp, nTruth, 100)
	case AllPoint:
		// Recall only rises at true positives, by 1/nTruth each; the area
		// under the envelope is the envelope's precision there times 1/nTruth.
		env := envelope(tp)
		s := 0.0
		for i, t := range tp {
			if t {
				s += env[i]
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
// one (so at that recall or higher).
func envelope(tp []bool) []float64 {
	env := make([]float64, len(tp))
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
// precision at recall ≥ r (0 when the list never reaches r). Recall ≥ k/steps
// is tested as hits·steps ≥ k·nTruth so decimal levels are exact.
func levels(tp []bool, nTruth, steps int) float64 {
	env := envelope(tp)
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
