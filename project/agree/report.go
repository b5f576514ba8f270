package agree

import (
	"cmp"
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"

	"boxwright/project"
)

// Labels are one annotator's boxes on one image, with their classes.
type Labels struct {
	Boxes   []project.Box
	Classes []int64
}

// ImageLabels are the compared annotators' boxes on one image; By[i] is
// annotator i's (empty when they drew nothing there).
type ImageLabels struct {
	ImageID int64
	Name    string
	By      []Labels
}

// Options control a comparison.
type Options struct {
	// Threshold is the IoU a pair of boxes needs to count as the same
	// object (equality counts); 0 means DefaultThreshold.
	Threshold float64
	// ClassAware pairs only boxes of the same class. Off by default, so
	// that class disagreements show in the confusion matrix.
	ClassAware bool
	// Classes fixes the order of the confusion matrix; classes seen but
	// not listed are appended in ascending ID order.
	Classes []int64
	// Weights, when not nil, are disagreement weights over Classes (in
	// that order) for a weighted kappa of ordered classes; "linear" and
	// "quadratic" come from DisagreementWeights.
	Weights [][]float64
}

// DefaultThreshold is the usual IoU for "the same object" (common practice).
const DefaultThreshold = 0.5

// HistogramBins is the number of equal IoU bins over [0, 1].
const HistogramBins = 20

// IoUSummary describes the IoU of matched pairs.
type IoUSummary struct {
	N                      int
	Mean, Median, P10, P90 float64 // NaN when N = 0
	// Histogram[i] counts pairs with IoU in [i/20, (i+1)/20); the last bin
	// includes 1.
	Histogram [HistogramBins]int
}

// ClassAgreement is the agreement on one class.
type ClassAgreement struct {
	Class int64
	// A and B are the boxes of this class each annotator drew; Agreed the
	// matched pairs where both chose it; Confused the matched pairs where
	// exactly one did; OnlyA and OnlyB its unmatched boxes.
	A, B, Agreed, Confused, OnlyA, OnlyB int
	// F1 = 2·Agreed / (A + B).
	F1      float64
	MeanIoU float64 // of the Agreed pairs
	// Kappa is this class against the rest, on the matched pairs.
	Kappa Kappa
}

// ImageAgreement is the agreement on one image.
type ImageAgreement struct {
	ImageID                     int64
	Name                        string
	A, B, Matched, OnlyA, OnlyB int
	ClassDisagreements          int // matched pairs of different classes
	F1, MeanIoU                 float64
	Errors                      int // OnlyA + OnlyB + ClassDisagreements: the ranking key
	Match                       ImageMatch
}

// PairReport is the agreement of two annotators over all images.
type PairReport struct {
	A, B                  int // annotator indices
	Images                int // images where at least one of them drew a box
	NA, NB                int
	Matched, OnlyA, OnlyB int
	F1                    float64 // 2·Matched / (NA + NB)
	IoU                   IoUSummary
	Classes               []int64     // order of the confusion matrices
	Confusion             [][]float64 // matched pairs: rows A's class, columns B's
	Kappa                 Kappa       // Cohen's kappa on Confusion
	WeightedKappa         *Kappa      // with Options.Weights, when given
	ConfusionWithNoObject [][]float64 // Classes plus a last "no object" row and column
	KappaWithNoObject     Kappa
	PerClass              []ClassAgreement
	PerImage              []ImageAgreement // worst first
}

// NoObjectCaveat explains the kappa that counts unmatched boxes.
const NoObjectCaveat = "Unmatched boxes are counted as a \"no object\" answer of the other annotator. The no-object/no-object cell cannot be observed (nobody draws a box around nothing), so it is zero and this kappa is biased low; read it beside the detection F1, not instead of it."

func (o Options) threshold() float64 {
	if o.Threshold <= 0 {
		return DefaultThreshold
	}
	return o.Threshold
}

// ComparePair matches annotators a and b on every image and sums up.
func ComparePair(images []ImageLabels, a, b int, opt Options) PairReport {
	r := PairReport{A: a, B: b}
	var ious []float64
	type pairClass struct{ ca, cb int64 }
	var pairs []pairClass
	var unA, unB []int64
	seen := map[int64]bool{}
	for _, im := range images {
		la, lb := labelsOf(im, a), labelsOf(im, b)
		if len(la.Boxes)+len(lb.Boxes) == 0 {
			continue
		}
		r.Images++
		m := MatchBoxes(la.Boxes, lb.Boxes, la.Classes, lb.Classes, opt.threshold(), opt.ClassAware)
		ia := ImageAgreement{ImageID: im.ImageID, Name: im.Name, A: len(la.Boxes), B: len(lb.Boxes),
			Matched: len(m.Pairs), OnlyA: len(m.OnlyA), OnlyB: len(m.OnlyB), Match: m}
		sum := 0.0
		for _, p := range m.Pairs {
			ca, cb := la.Classes[p.A], lb.Classes[p.B]
			pairs = append(pairs, pairClass{ca, cb})
			seen[ca], seen[cb] = true, true
			ious = append(ious, p.IoU)
			sum += p.IoU
			if ca != cb {
				ia.ClassDisagreements++
			}
		}
		for _, i := range m.OnlyA {
			unA = append(unA, la.Classes[i])
			seen[la.Classes[i]] = true
		}
		for _, j := range m.OnlyB {
			unB = append(unB, lb.Classes[j])
			seen[lb.Classes[j]] = true
		}
		ia.F1 = f1(ia.Matched, ia.A, ia.B)
		ia.MeanIoU = math.NaN()
		if ia.Matched > 0 {
			ia.MeanIoU = sum / float64(ia.Matched)
		}
		ia.Errors = ia.OnlyA + ia.OnlyB + ia.ClassDisagreements
		r.PerImage = append(r.PerImage, ia)
		r.NA += ia.A
		r.NB += ia.B
		r.Matched += ia.Matched
		r.OnlyA += ia.OnlyA
		r.OnlyB += ia.OnlyB
	}
	r.F1 = f1(r.Matched, r.NA, r.NB)
	r.IoU = summarise(ious)
	sort.SliceStable(r.PerImage, func(i, j int) bool {
		x, y := r.PerImage[i], r.PerImage[j]
		if x.Errors != y.Errors {
			return x.Errors > y.Errors
		}
		return cmp.Less(x.MeanIoU, y.MeanIoU) // NaN (no matched pair) first
	})

	r.Classes = classOrder(opt.Classes, seen)
	idx := map[int64]int{}
	for i, c := range r.Classes {
		idx[c] = i
	}
	k := len(r.Classes)
	r.Confusion = square(k)
	r.ConfusionWithNoObject = square(k + 1)
	for _, p := range pairs {
		r.Confusion[idx[p.ca]][idx[p.cb]]++
		r.ConfusionWithNoObject[idx[p.ca]][idx[p.cb]]++
	}
	for _, c := range unA {
		r.ConfusionWithNoObject[idx[c]][k]++
	}
	for _, c := range unB {
		r.ConfusionWithNoObject[k][idx[c]]++
	}
	r.Kappa = kappaOrNote(r.Confusion)
	if opt.Weights != nil {
		wk := Kappa{Kappa: math.NaN(), SE: math.NaN(), SE0: math.NaN(), Z: math.NaN(), Po: math.NaN(), Pe: math.NaN(), CI95: [2]float64{math.NaN(), math.NaN()}}
		switch {
		case len(opt.Weights) != k:
			wk.Notes = []string{fmt.Sprintf("weights are %d×%d but %d classes were compared; list the classes the weights are for", len(opt.Weights), len(opt.Weights), k)}
		default:
			if got, err := WeightedKappa(r.Confusion, opt.Weights); err != nil {
				wk.Notes = []string{err.Error()}
			} else {
				wk = got
			}
		}
		r.WeightedKappa = &wk
	}
	r.KappaWithNoObject = kappaOrNote(r.ConfusionWithNoObject)
	r.KappaWithNoObject.Notes = append(r.KappaWithNoObject.Notes, NoObjectCaveat)

	for ci, c := range r.Classes {
		ca := ClassAgreement{Class: c}
		var iouSum float64
		for pi, p := range pairs {
			inA, inB := p.ca == c, p.cb == c
			switch {
			case inA && inB:
				ca.Agreed++
				iouSum += ious[pi]
			case inA || inB:
				ca.Confused++
			}
			if inA {
				ca.A++
			}
			if inB {
				ca.B++
			}
		}
		for _, x := range unA {
			if x == c {
				ca.A++
				ca.OnlyA++
			}
		}
		for _, x := range unB {
			if x == c {
				ca.B++
				ca.OnlyB++
			}
		}
		ca.F1 = f1(ca.Agreed, ca.A, ca.B)
		ca.MeanIoU = math.NaN()
		if ca.Agreed > 0 {
			ca.MeanIoU = iouSum / float64(ca.Agreed)
		}
		// One class against the rest: collapse the confusion matrix.
		t := [][]float64{{0, 0}, {0, 0}}
		for i := 0; i < k; i++ {
			for j := 0; j < k; j++ {
				t[b2i(i != ci)][b2i(j != ci)] += r.Confusion[i][j]
			}
		}
		ca.Kappa = kappaOrNote(t)
		r.PerClass = append(r.PerClass, ca)
	}
	return r
}

func labelsOf(im ImageLabels, i int) Labels {
	if i < len(im.By) {
		return im.By[i]
	}
	return Labels{}
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// kappaOrNote is CohenKappa, or an undefined kappa with the reason when
// the table cannot give one (no pairs at all).
func kappaOrNote(t [][]float64) Kappa {
	k, err := CohenKappa(t)
	if err != nil {
		nan := math.NaN()
		return Kappa{Kappa: nan, SE: nan, SE0: nan, Z: nan, Po: nan, Pe: nan, CI95: [2]float64{nan, nan}, Notes: []string{err.Error()}}
	}
	return k
}

func f1(matched, na, nb int) float64 {
	if na+nb == 0 {
		return math.NaN()
	}
	return 2 * float64(matched) / float64(na+nb)
}

func square(k int) [][]float64 {
	m := make([][]float64, k)
	for i := range m {
		m[i] = make([]float64, k)
	}
	return m
}

func classOrder(given []int64, seen map[int64]bool) []int64 {
	out := append([]int64(nil), given...)
	listed := map[int64]bool{}
	for _, c := range given {
		listed[c] = true
	}
	var extra []int64
	for c := range seen {
		if !listed[c] {
			extra = append(extra, c)
		}
	}
	sort.Slice(extra, func(i, j int) bool { return extra[i] < extra[j] })
	return append(out, extra...)
}

// summarise gives mean, median, 10th and 90th percentiles and the
// histogram. Percentiles interpolate linearly between order statistics:
// definition 7 of Hyndman & Fan (1996), the default of R and NumPy.
func summarise(v []float64) IoUSummary {
	s := IoUSummary{N: len(v), Mean: math.NaN(), Median: math.NaN(), P10: math.NaN(), P90: math.NaN()}
	if len(v) == 0 {
		return s
	}
	x := append([]float64(nil), v...)
	sort.Float64s(x)
	sum := 0.0
	for _, e := range x {
		sum += e
		b := int(e * HistogramBins)
		if b >= HistogramBins {
			b = HistogramBins - 1
		}
		if b < 0 {
			b = 0
		}
		s.Histogram[b]++
	}
	s.Mean = sum / float64(len(x))
	s.Median, s.P10, s.P90 = Quantile(x, 0.5), Quantile(x, 0.1), Quantile(x, 0.9)
	return s
}

// Quantile is the p-quantile of sorted values by linear interpolation
// (Hyndman & Fan 1996, definition 7).
func Quantile(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	h := float64(n-1) * p
	lo := math.Floor(h)
	i := int(lo)
	if i >= n-1 {
		return sorted[n-1]
	}
	return sorted[i] + (h-lo)*(sorted[i+1]-sorted[i])
}

// Report is the agreement of several annotators.
type Report struct {
	Annotators int
	Options    Options
	Threshold  float64
	Pairs      []PairReport // every pair a < b
	// Objects groups boxes across all annotators (GroupObjects), per image.
	Objects int
	// Fleiss is Fleiss' kappa on the objects' classes, only when every
	// object has a box from every annotator; otherwise nil and a note.
	Fleiss *Fleiss
	// Alpha is Krippendorff's alpha (nominal) on the objects' classes;
	// objects an annotator missed are missing values.
	Alpha Alpha
	Notes []string
}

// Compare computes every pairwise report and the many-annotator figures.
// progress, when not nil, is called with the work done so far.
func Compare(images []ImageLabels, n int, opt Options, progress func(done, total int)) (Report, error) {
	if n < 2 {
		return Report{}, fmt.Errorf("agreement needs at least two annotators, got %d", n)
	}
	for _, im := range images {
		for i, l := range im.By {
			if len(l.Boxes) != len(l.Classes) {
				return Report{}, fmt.Errorf("image %q, annotator %d: %d boxes but %d classes", im.Name, i, len(l.Boxes), len(l.Classes))
			}
		}
	}
	r := Report{Annotators: n, Options: opt, Threshold: opt.threshold()}
	total := n*(n-1)/2 + 1
	// The pairs and the grouping into objects are independent: run them
	// side by side on the available cores.
	type job struct{ a, b, i int }
	var jobs []job
	for a := 0; a < n; a++ {
		for b := a + 1; b < n; b++ {
			jobs = append(jobs, job{a, b, len(jobs)})
		}
	}
	r.Pairs = make([]PairReport, len(jobs))
	var groups [][]Object
	var mu sync.Mutex
	done := 0
	tick := func() {
		mu.Lock()
		done++
		d := done
		mu.Unlock()
		if progress != nil {
			progress(d, total)
		}
	}
	work := make(chan func(), len(jobs)+1)
	for _, j := range jobs {
		work <- func() { r.Pairs[j.i] = ComparePair(images, j.a, j.b, opt); tick() }
	}
	if n > 2 {
		work <- func() { groups = groupAll(images, n, r.Threshold, opt.ClassAware); tick() }
	}
	close(work)
	var wg sync.WaitGroup
	for w := 0; w < min(runtime.GOMAXPROCS(0), len(jobs)+1); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for f := range work {
				f()
			}
		}()
	}
	wg.Wait()
	if n == 2 {
		// Two annotators: the objects are the pair's matches and leftovers,
		// exactly what GroupObjects would find, without matching twice.
		groups = objectsOfPair(images, r.Pairs[0])
		tick()
	}
	// Objects across all annotators, their classes as ratings.
	classIdx := map[int64]float64{}
	var units [][]float64
	var counts [][]float64
	complete := true
	order := r.Pairs[0].Classes
	for _, p := range r.Pairs[1:] {
		order = classOrder(order, setOf(p.Classes))
	}
	for i, c := range order {
		classIdx[c] = float64(i)
	}
	for ii, im := range images {
		classes := make([][]int64, n)
		for i := 0; i < n; i++ {
			classes[i] = labelsOf(im, i).Classes
		}
		for _, o := range groups[ii] {
			r.Objects++
			u := make([]float64, n)
			cnt := make([]float64, len(order))
			for i := range u {
				u[i] = math.NaN()
			}
			for ann, bi := range o.Members {
				ci := classIdx[classes[ann][bi]]
				u[ann] = ci
				cnt[int(ci)]++
			}
			if len(o.Members) != n {
				complete = false
			}
			units = append(units, u)
			counts = append(counts, cnt)
		}
	}
	if complete && len(counts) > 0 {
		if f, err := FleissKappa(counts); err == nil {
			r.Fleiss = &f
		} else {
			r.Notes = append(r.Notes, "Fleiss' kappa: "+err.Error())
		}
	} else {
		r.Notes = append(r.Notes, "Fleiss' kappa needs a class from every annotator for every object; some objects were missed by someone, so only Krippendorff's alpha (which allows missing values) is given.")
	}
	if a, err := KrippendorffAlpha(units, Nominal); err == nil {
		r.Alpha = a
	} else {
		r.Alpha = Alpha{Alpha: math.NaN(), Level: Nominal, Notes: []string{err.Error()}}
	}
	return r, nil
}

// objectsOfPair turns a pair's matches into objects, image by image.
func objectsOfPair(images []ImageLabels, p PairReport) [][]Object {
	at := map[int64]int{}
	for i, im := range images {
		at[im.ImageID] = i
	}
	out := make([][]Object, len(images))
	for _, im := range p.PerImage {
		i, ok := at[im.ImageID]
		if !ok {
			continue
		}
		m := im.Match
		objs := make([]Object, 0, len(m.Pairs)+len(m.OnlyA)+len(m.OnlyB))
		for _, pr := range m.Pairs {
			objs = append(objs, Object{Members: map[int]int{p.A: pr.A, p.B: pr.B}})
		}
		for _, a := range m.OnlyA {
			objs = append(objs, Object{Members: map[int]int{p.A: a}})
		}
		for _, b := range m.OnlyB {
			objs = append(objs, Object{Members: map[int]int{p.B: b}})
		}
		out[i] = objs
	}
	return out
}

// groupAll groups every image's boxes into objects.
func groupAll(images []ImageLabels, n int, threshold float64, classAware bool) [][]Object {
	out := make([][]Object, len(images))
	for ii, im := range images {
		boxes := make([][]project.Box, n)
		classes := make([][]int64, n)
		for i := 0; i < n; i++ {
			l := labelsOf(im, i)
			boxes[i], classes[i] = l.Boxes, l.Classes
		}
		out[ii] = GroupObjects(boxes, classes, threshold, classAware)
	}
	return out
}

func setOf(cs []int64) map[int64]bool {
	m := map[int64]bool{}
	for _, c := range cs {
		m[c] = true
	}
	return m
}

// WorstImage is an image ranked by disagreement over all pairs.
type WorstImage struct {
	ImageID int64
	Name    string
	Errors  int     // unmatched boxes and class disagreements, summed over pairs
	F1      float64 // the lowest pairwise F1 on the image
}

// Worst ranks images by disagreement summed over every pair of
// annotators, worst first, at most limit of them (limit <= 0: all).
func (r Report) Worst(limit int) []WorstImage {
	by := map[int64]*WorstImage{}
	var order []int64
	for _, p := range r.Pairs {
		for _, im := range p.PerImage {
			w, ok := by[im.ImageID]
			if !ok {
				w = &WorstImage{ImageID: im.ImageID, Name: im.Name, F1: math.Inf(1)}
				by[im.ImageID] = w
				order = append(order, im.ImageID)
			}
			w.Errors += im.Errors
			if !math.IsNaN(im.F1) && im.F1 < w.F1 {
				w.F1 = im.F1
			}
		}
	}
	out := make([]WorstImage, 0, len(order))
	for _, id := range order {
		w := *by[id]
		if math.IsInf(w.F1, 1) {
			w.F1 = math.NaN()
		}
		out = append(out, w)
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Errors != out[j].Errors {
			return out[i].Errors > out[j].Errors
		}
		return cmp.Less(out[i].F1, out[j].F1) // NaN first
	})
	if limit > 0 && len(out) > limit {
		out = out[:limit]
	}
	return out
}

// PooledClasses sums the per-class figures of every pair (for two
// annotators they are the pair's own); Kappa is left out, see the pairs.
func (r Report) PooledClasses() []ClassAgreement {
	if len(r.Pairs) == 1 {
		return r.Pairs[0].PerClass
	}
	by := map[int64]*ClassAgreement{}
	var order []int64
	iou := map[int64]float64{}
	for _, p := range r.Pairs {
		for _, c := range p.PerClass {
			a, ok := by[c.Class]
			if !ok {
				a = &ClassAgreement{Class: c.Class}
				by[c.Class] = a
				order = append(order, c.Class)
			}
			a.A += c.A
			a.B += c.B
			a.Agreed += c.Agreed
			a.Confused += c.Confused
			a.OnlyA += c.OnlyA
			a.OnlyB += c.OnlyB
			if c.Agreed > 0 {
				iou[c.Class] += c.MeanIoU * float64(c.Agreed)
			}
		}
	}
	out := make([]ClassAgreement, 0, len(order))
	for _, id := range order {
		a := *by[id]
		a.F1 = f1(a.Agreed, a.A, a.B)
		a.MeanIoU = math.NaN()
		if a.Agreed > 0 {
			a.MeanIoU = iou[id] / float64(a.Agreed)
		}
		nan := math.NaN()
		a.Kappa = Kappa{Kappa: nan, SE: nan, SE0: nan, Z: nan, Po: nan, Pe: nan, CI95: [2]float64{nan, nan}}
		out = append(out, a)
	}
	return out
}
