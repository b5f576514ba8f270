package eval

import (
	"math"
)

// apScorer computes a class's AP at every threshold, reusing its buffers.
type apScorer struct {
	interp     Interpolation
	cocoLevels bool        // Point101 at the COCO evaluation tool's recall levels
	counted    []int       // per threshold, predictions counted so far
	prec       [][]float64 // per threshold, the precision at each true positive
}

// all fills aps with the AP of the ranked predictions at each threshold
// of outs, with n truths; ignored predictions are left out of the ranking.
// One pass over the ranking serves every threshold.
func (a *apScorer) all(ranked []int32, outs *outcomes, n int, aps []float64) {
	nu := len(outs.thr)
	if n <= 0 {
		for u := range aps {
			aps[u] = math.NaN()
		}
		return
	}
	a.counted = grow(a.counted, nu)
	clear(a.counted)
	a.prec = grow(a.prec, nu)
	for u := range a.prec {
		a.prec[u] = a.prec[u][:0]
	}
	for _, i := range ranked {
		row := outs.o[int(i)*nu : int(i)*nu+nu]
		for u, o := range row {
			if o == outIgnored {
				continue
			}
			a.counted[u]++
			if o == outTP {
				a.prec[u] = append(a.prec[u], float64(len(a.prec[u])+1)/float64(a.counted[u]))
			}
		}
	}
	for u := range aps {
		aps[u] = apAtHits(a.prec[u], n, a.interp, a.cocoLevels)
	}
}

// mean is the mean of the APs ap[u] over the thresholds us.
func mean(ap []float64, us []int) float64 {
	s := 0.0
	for _, u := range us {
		s += ap[u]
	}
	return s / float64(len(us))
}

// pool gathers the counted predictions of all classes for the pooled
// figures.
type pool struct {
	list      []scored // in score order
	tp, fp, n int      // tp and fp at Options.ScoreThreshold; n truths
}

// classResults computes each class's figures in classIDs order, classes
// shared out over GOMAXPROCS goroutines, and pools their predictions.
func (e *evaluation) classResults(outs outcomes) ([]ClassResult, pool) {
	nc := len(e.classIDs)
	classes := make([]ClassResult, nc)
	tpAt, fpAt := make([]int, nc), make([]int, nc)
	parallel(nc, len(e.preds), func(lo, hi int) {
		ap := &apScorer{interp: e.opt.Interpolation, cocoLevels: e.coco}
		var list []scored
		for c := lo; c < hi; c++ {
			classes[c], list, tpAt[c], fpAt[c] = e.classResult(c, outs, ap, list[:0])
		}
	})
	var p pool
	for c := range classes {
		p.tp += tpAt[c]
		p.fp += fpAt[c]
		p.n += classes[c].Truths
	}
	// The ranking is in score order already; ties may come in any order,
	// as bestF1 only cuts where the score changes.
	nu := len(outs.thr)
	p.list = make([]scored, 0, len(e.order))
	for _, i := range e.order {
		if o := outs.o[int(i)*nu+outs.first]; o != outIgnored {
			p.list = append(p.list, scored{e.preds[i].Score, o == outTP})
		}
	}
	return classes, p
}

// classResult computes the figures of dense class c, using list as
// scratch. It also returns its TP and FP at Options.ScoreThreshold, for
// pooling.
func (e *evaluation) classResult(c int, outs outcomes, ap *apScorer, list []scored) (cr ClassResult, _ []scored, tpAt, fpAt int) {
	ranked := e.classRanked[e.classOff[c]:e.classOff[c+1]]
	n := e.classTruths[c]
	cr = ClassResult{ClassID: e.classIDs[c], Truths: n, Predictions: len(ranked)}
	aps := make([]float64, len(outs.thr))
	ap.all(ranked, &outs, n, aps)
	cr.AP = mean(aps, outs.main)
	cr.AP50 = aps[outs.at50]
	cr.AP75 = aps[outs.at75]
	cr.AP50_95 = mean(aps, outs.coco)

	nu, fu := len(outs.thr), outs.first
	first := func(i int32) int8 { return outs.o[int(i)*nu+fu] }
	counted := 0
	for _, i := range ranked {
		if first(i) != outIgnored {
			counted++
		}
	}
	if counted > 0 {
		cr.Curve = make([]Point, 0, counted)
	}
	for _, i := range ranked {
		o := first(i)
		switch o {
		case outIgnored:
			continue
		case outTP:
			cr.TP++
		default:
			cr.FP++
		}
		isTP := o == outTP
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
