package agree

import (
	"fmt"
	"math"
	"runtime"
	"slices"
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

func (o Options) threshold() float64 {
	if o.Threshold <= 0 {
		return DefaultThreshold
	}
	return o.Threshold
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
	var many manyFigures
	// Two annotators: the objects are the pair's matches and leftovers,
	// exactly what GroupObjects would find, without matching twice; they
	// are rated while the pair's sums are made.
	var two func(byImage []ImageAgreement, index []int, classes []int64)
	if n == 2 {
		two = func(byImage []ImageAgreement, index []int, classes []int64) {
			units, counts, complete := pairUnits(images, byImage, index, classIndex(classes), len(classes))
			many = manyRaterFigures(units, counts, complete)
		}
	}
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
		work <- func() {
			r.Pairs[j.i] = comparePair(images, j.a, j.b, opt, two)
			tick()
		}
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
	if n > 2 {
		// Objects across all annotators, their classes as ratings.
		order := r.Pairs[0].Classes
		for _, p := range r.Pairs[1:] {
			order = classOrder(order, setOf(p.Classes))
		}
		units, counts, complete := groupUnits(images, groups, n, classIndex(order), len(order))
		many = manyRaterFigures(units, counts, complete)
	} else {
		tick()
	}
	r.Objects, r.Fleiss, r.Alpha = many.objects, many.fleiss, many.alpha
	r.Notes = append(r.Notes, many.notes...)
	return r, nil
}

// manyFigures are the figures on objects rated by all annotators.
type manyFigures struct {
	objects int
	fleiss  *Fleiss
	alpha   Alpha
	notes   []string
}

// manyRaterFigures are Fleiss' kappa (when every object was rated by
// every annotator) and Krippendorff's alpha on the objects' classes.
func manyRaterFigures(units, counts [][]float64, complete bool) manyFigures {
	f := manyFigures{objects: len(units)}
	if complete && len(counts) > 0 {
		if fk, err := FleissKappa(counts); err == nil {
			f.fleiss = &fk
		} else {
			f.notes = append(f.notes, "Fleiss' kappa: "+err.Error())
		}
	} else {
		f.notes = append(f.notes, "Fleiss' kappa needs a class from every annotator for every object; some objects were missed by someone, so only Krippendorff's alpha (which allows missing values) is given.")
	}
	if a, err := KrippendorffAlpha(units, Nominal); err == nil {
		f.alpha = a
	} else {
		f.alpha = Alpha{Alpha: math.NaN(), Level: Nominal, Notes: []string{err.Error()}}
	}
	return f
}

// ratings numbers classes in the order given, as ratings; a class not
// given is rated 0.
type ratings struct {
	lo    int64
	dense []float64 // by class ID - lo, when the IDs are close together
	m     map[int64]float64
}

func classIndex(order []int64) ratings {
	var r ratings
	if len(order) == 0 {
		return r
	}
	lo, hi := slices.Min(order), slices.Max(order)
	if hi-lo < 4096 {
		r.lo, r.dense = lo, make([]float64, hi-lo+1)
		for i, c := range order {
			r.dense[c-lo] = float64(i)
		}
		return r
	}
	r.m = make(map[int64]float64, len(order))
	for i, c := range order {
		r.m[c] = float64(i)
	}
	return r
}

func (r ratings) of(class int64) float64 {
	if r.m != nil {
		return r.m[class]
	}
	if i := class - r.lo; i >= 0 && i < int64(len(r.dense)) {
		return r.dense[i]
	}
	return 0
}

// ratingTable holds one row of ratings (a class index per annotator,
// NaN for none) and one row of counts per class for each object, all rows
// in two arrays.
type ratingTable struct {
	n, k          int
	units, counts []float64
	uRows, cRows  [][]float64
	complete      bool
}

func newRatingTable(objects, n, k int) *ratingTable {
	t := &ratingTable{n: n, k: k, units: make([]float64, objects*n), counts: make([]float64, objects*k),
		uRows: make([][]float64, 0, objects), cRows: make([][]float64, 0, objects), complete: true}
	for i := range t.units {
		t.units[i] = math.NaN()
	}
	return t
}

// next starts the next object's rows.
func (t *ratingTable) next() (u, cnt []float64) {
	o := len(t.uRows)
	u, cnt = t.units[o*t.n:(o+1)*t.n:(o+1)*t.n], t.counts[o*t.k:(o+1)*t.k:(o+1)*t.k]
	t.uRows, t.cRows = append(t.uRows, u), append(t.cRows, cnt)
	return u, cnt
}

// pairUnits are the objects of two annotators, image by image in image
// order: the matched pairs, then the boxes only the first drew, then those
// only the second drew. ims are pair 0's images in image order, at[i] the
// index of ims[i] in images.
func pairUnits(images []ImageLabels, ims []ImageAgreement, at []int, classIdx ratings, k int) ([][]float64, [][]float64, bool) {
	objects := 0
	for _, ia := range ims {
		objects += len(ia.Match.Pairs) + len(ia.Match.OnlyA) + len(ia.Match.OnlyB)
	}
	t := newRatingTable(objects, 2, k)
	for i, ia := range ims {
		ca, cb := labelsOf(images[at[i]], 0).Classes, labelsOf(images[at[i]], 1).Classes
		m := ia.Match
		for _, p := range m.Pairs {
			u, cnt := t.next()
			u[0], u[1] = classIdx.of(ca[p.A]), classIdx.of(cb[p.B])
			cnt[int(u[0])]++
			cnt[int(u[1])]++
		}
		for _, a := range m.OnlyA {
			u, cnt := t.next()
			u[0] = classIdx.of(ca[a])
			cnt[int(u[0])]++
		}
		for _, b := range m.OnlyB {
			u, cnt := t.next()
			u[1] = classIdx.of(cb[b])
			cnt[int(u[1])]++
		}
		if len(m.OnlyA)+len(m.OnlyB) > 0 {
			t.complete = false
		}
	}
	return t.uRows, t.cRows, t.complete
}

// groupUnits are the objects GroupObjects found on each image, in image
// order.
func groupUnits(images []ImageLabels, groups [][]Object, n int, classIdx ratings, k int) ([][]float64, [][]float64, bool) {
	objects := 0
	for _, g := range groups {
		objects += len(g)
	}
	t := newRatingTable(objects, n, k)
	classes := make([][]int64, n)
	for ii, im := range images {
		for i := 0; i < n; i++ {
			classes[i] = labelsOf(im, i).Classes
		}
		for _, o := range groups[ii] {
			u, cnt := t.next()
			for ann, bi := range o.Members {
				ci := classIdx.of(classes[ann][bi])
				u[ann] = ci
				cnt[int(ci)]++
			}
			if len(o.Members) != n {
				t.complete = false
			}
		}
	}
	return t.uRows, t.cRows, t.complete
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
	MeanIoU float64 // the lowest pairwise mean IoU of matched pairs on the image
}

func (w WorstImage) dispute() Dispute { return Dispute{w.Errors, w.F1, w.MeanIoU} }

// Worst ranks images by disagreement summed over every pair of
// annotators, worst first, at most limit of them (limit <= 0: all).
func (r Report) Worst(limit int) []WorstImage {
	by := map[int64]*WorstImage{}
	var order []int64
	for _, p := range r.Pairs {
		for _, im := range p.PerImage {
			w, ok := by[im.ImageID]
			if !ok {
				w = &WorstImage{ImageID: im.ImageID, Name: im.Name, F1: math.Inf(1), MeanIoU: math.Inf(1)}
				by[im.ImageID] = w
				order = append(order, im.ImageID)
			}
			w.Errors += im.Errors
			if !math.IsNaN(im.F1) && im.F1 < w.F1 {
				w.F1 = im.F1
			}
			if !math.IsNaN(im.MeanIoU) && im.MeanIoU < w.MeanIoU {
				w.MeanIoU = im.MeanIoU
			}
		}
	}
	out := make([]WorstImage, 0, len(order))
	for _, id := range order {
		w := *by[id]
		if math.IsInf(w.F1, 1) {
			w.F1 = math.NaN()
		}
		if math.IsInf(w.MeanIoU, 1) {
			w.MeanIoU = math.NaN()
		}
		out = append(out, w)
	}
	slices.SortStableFunc(out, func(x, y WorstImage) int { return WorstFirst(x.dispute(), y.dispute()) })
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
