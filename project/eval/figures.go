package eval

import (
	"cmp"
	"math"
	"slices"
)

// apScorer computes AP from outcomes, reusing one buffer for all classes.
type apScorer struct {
	interp Interpolation
	tp     []bool
}

// at is the AP of the ranked predictions under outcomes o with n truths;
// ignored predictions are left out of the ranking.
func (a *apScorer) at(ranked []int, o []int8, n int) float64 {
	a.tp = a.tp[:0]
	for _, i := range ranked {
		if o[i] != outIgnored {
			a.tp = append(a.tp, o[i] == outTP)
		}
	}
	return AveragePrecision(a.tp, n, a.interp)
}

// mean is the mean of at over several thresholds' outcomes.
func (a *apScorer) mean(ranked []int, outs [][]int8, n int) float64 {
	s := 0.0
	for _, o := range outs {
		s += a.at(ranked, o, n)
	}
	return s / float64(len(outs))
}

// pool gathers the counted predictions of all classes for the pooled
// figures.
type pool struct {
	list      []scored // class after class, each in score order
	tp, fp, n int      // tp and fp at Options.ScoreThreshold; n truths
}

// classResults computes each class's figures in classIDs order and pools
// their predictions.
func (e *evaluation) classResults(outs outcomes) ([]ClassResult, pool) {
	ap := &apScorer{interp: e.opt.Interpolation}
	var classes []ClassResult
	var p pool
	for _, c := range e.classIDs() {
		cr, list, tpAt, fpAt := e.classResult(c, outs, ap)
		p.tp += tpAt
		p.fp += fpAt
		p.n += cr.Truths
		p.list = append(p.list, list...)
		classes = append(classes, cr)
	}
	return classes, p
}

// classResult computes the figures of class c. It also returns the class's
// counted predictions in score order and its TP and FP at
// Options.ScoreThreshold, for pooling.
func (e *evaluation) classResult(c int64, outs outcomes, ap *apScorer) (cr ClassResult, list []scored, tpAt, fpAt int) {
	ranked := e.classPreds[c]
	n := e.classTruths[c]
	cr = ClassResult{ClassID: c, Truths: n, Predictions: len(ranked)}
	cr.AP = ap.mean(ranked, outs.main, n)
	cr.AP50 = ap.at(ranked, outs.at50, n)
	cr.AP75 = ap.at(ranked, outs.at75, n)
	cr.AP50_95 = ap.mean(ranked, outs.coco, n)

	for _, i := range ranked {
		switch outs.first[i] {
		case outIgnored:
			continue
		case outTP:
			cr.TP++
		default:
			cr.FP++
		}
		isTP := outs.first[i] == outTP
		list = append(list, scored{e.preds[i].Score, isTP})
		cr.Curve = append(cr.Curve, Point{
			Recall:    ratio(cr.TP, n),
			Precision: ratio(cr.TP, cr.TP+cr.FP),
			Score:     e.preds[i].Score,
		})
		if e.preds[i].Score >= e.opt.ScoreThreshold {
			if isTP {
				tpAt++
			} else {
				fpAt++
			}
		}
	}
	cr.Precision, cr.Recall, cr.F1 = prf(tpAt, fpAt, n)
	cr.BestF1, cr.BestF1Threshold = bestF1(list, n)
	return cr, list, tpAt, fpAt
}

// summarize fills in the means over the classes with ground truth and the
// figures pooled over all classes.
func summarize(res *Result, p pool) {
	var sums [4]float64
	var nWith int
	for _, cr := range res.Classes {
		if cr.Truths > 0 {
			nWith++
			sums[0] += cr.AP
			sums[1] += cr.AP50
			sums[2] += cr.AP75
			sums[3] += cr.AP50_95
		}
	}
	if nWith > 0 {
		k := float64(nWith)
		res.MAP, res.AP50, res.AP75, res.AP50_95 = sums[0]/k, sums[1]/k, sums[2]/k, sums[3]/k
	} else {
		res.MAP, res.AP50, res.AP75, res.AP50_95 = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	}
	res.Precision, res.Recall, res.F1 = prf(p.tp, p.fp, p.n)
	slices.SortStableFunc(p.list, func(a, b scored) int { return cmp.Compare(b.score, a.score) })
	res.BestF1, res.BestF1Threshold = bestF1(p.list, p.n)
}

// scored is one counted prediction for the F1 search.
type scored struct {
	score float64
	tp    bool
}

// bestF1 scans score thresholds down a ranked list. A cut is only taken
// where the score changes, since a threshold cannot split tied scores.
func bestF1(list []scored, n int) (f1, threshold float64) {
	tp, fp := 0, 0
	for i, s := range list {
		if s.tp {
			tp++
		} else {
			fp++
		}
		if i+1 < len(list) && list[i+1].score == s.score {
			continue
		}
		if _, _, f := prf(tp, fp, n); f > f1 {
			f1, threshold = f, s.score
		}
	}
	return f1, threshold
}

// prf returns precision, recall and F1 from counts.
func prf(tp, fp, n int) (p, r, f float64) {
	p, r = ratio(tp, tp+fp), ratio(tp, n)
	if p+r > 0 {
		f = 2 * p * r / (p + r)
	}
	return p, r, f
}

// ratio is a/b, or 0 when b is 0.
func ratio(a, b int) float64 {
	if b == 0 {
		return 0
	}
	return float64(a) / float64(b)
}
