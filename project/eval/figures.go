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

// all fills aps with the AP, at each threshold of outs, of the predictions
// at class positions lo to hi (one class, in rank order) with n truths;
// ignored predictions are left out of the ranking. One pass serves every
// threshold.
func (a *apScorer) all(lo, hi int, outs *outcomes, n int, aps []float64) {
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
	for c := lo; c < hi; c++ {
		for u, o := range outs.o[c*nu : c*nu+nu] {
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
// shared out over GOMAXPROCS goroutines, and pools their predictions (res
// holds the per-prediction outcomes at the first threshold).
func (e *evaluation) classResults(outs outcomes, res *Result) ([]ClassResult, pool) {
	nc := len(e.classIDs)
	classes := make([]ClassResult, nc)
	tpAt, fpAt := make([]int, nc), make([]int, nc)
	workers := workersFor(nc, len(e.preds))
	scorers := make([]apScorer, workers)
	parallel(nc, workers, func(w, lo, hi int) {
		ap := &scorers[w]
		ap.interp, ap.cocoLevels = e.opt.Interpolation, e.coco
		for c := lo; c < hi; c++ {
			classes[c], tpAt[c], fpAt[c] = e.classResult(c, &outs, ap)
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
	p.list = make([]scored, 0, len(e.order))
	for r, i := range e.order {
		if !res.PredIgnored[i] {
			p.list = append(p.list, scored{e.rankScore[r], res.PredTP[i]})
		}
	}
	return classes, p
}

// classResult computes the figures of dense class c, and its TP and FP at
// Options.ScoreThreshold for pooling.
func (e *evaluation) classResult(c int, outs *outcomes, ap *apScorer) (cr ClassResult, tpAt, fpAt int) {
	lo, hi := int(e.classOff[c]), int(e.classOff[c+1])
	n := e.classTruths[c]
	cr = ClassResult{ClassID: e.classIDs[c], Truths: n, Predictions: hi - lo}
	aps := make([]float64, len(outs.thr))
	ap.all(lo, hi, outs, n, aps)
	cr.AP = mean(aps, outs.main)
	cr.AP50 = aps[outs.at50]
	cr.AP75 = aps[outs.at75]
	cr.AP50_95 = mean(aps, outs.coco)

	nu, fu := len(outs.thr), outs.first
	counted := 0
	for k := lo; k < hi; k++ {
		if outs.o[k*nu+fu] != outIgnored {
			counted++
		}
	}
	if counted > 0 {
		cr.Curve = make([]Point, 0, counted)
	}
	// The best F1 is tried at the end of each run of equal scores (a
	// threshold cannot split them), as bestF1 does.
	var best bestF1Scan
	for k := lo; k < hi; k++ {
		o := outs.o[k*nu+fu]
		if o == outIgnored {
			continue
		}
		score := e.classScore[k]
		best.next(score, cr.TP, cr.FP, n)
		if o == outTP {
			cr.TP++
		} else {
			cr.FP++
		}
		cr.Curve = append(cr.Curve, Point{
			Recall:    ratio(cr.TP, n),
			Precision: ratio(cr.TP, cr.TP+cr.FP),
			Score:     score,
		})
		if score >= e.opt.ScoreThreshold {
			if o == outTP {
				tpAt++
			} else {
				fpAt++
			}
		}
	}
	best.next(math.NaN(), cr.TP, cr.FP, n)
	cr.Precision, cr.Recall, cr.F1 = prf(tpAt, fpAt, n)
	cr.BestF1, cr.BestF1Threshold = best.f1, best.threshold
	return cr, tpAt, fpAt
}

// bestF1Scan is bestF1 fed one counted prediction at a time, in score order.
type bestF1Scan struct {
	f1, threshold float64
	last          float64
	started       bool
}

// next tells the scan that a prediction with this score follows, tp and fp
// counting the ones before it; NaN ends the list.
func (b *bestF1Scan) next(score float64, tp, fp, n int) {
	if b.started && score != b.last {
		if _, _, f := prf(tp, fp, n); f > b.f1 {
			b.f1, b.threshold = f, b.last
		}
	}
	b.last, b.started = score, true
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
