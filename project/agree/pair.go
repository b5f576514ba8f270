package agree

import (
	"cmp"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"sync"
	"sync/atomic"
)

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

// ComparePair matches annotators a and b on every image and sums up.
func ComparePair(images []ImageLabels, a, b int, opt Options) PairReport {
	return comparePair(images, a, b, opt, nil)
}

type pairClass struct{ ca, cb int64 }

// pairPart is the matching of a run of images, in image order: the
// images where either annotator drew (at index[i] of the run), their
// matched pairs' classes and IoUs and the classes of the boxes left over.
type pairPart struct {
	perImage []ImageAgreement
	index    []int
	pairs    []pairClass
	ious     []float64
	unA, unB []int64
	seen     classSet
}

// classSet is a set of classes, in the order first added; there are few.
type classSet struct {
	list []int64
	big  map[int64]bool // when the list is long
}

func (s *classSet) add(c int64) {
	if s.big != nil {
		if !s.big[c] {
			s.big[c] = true
			s.list = append(s.list, c)
		}
		return
	}
	if slices.Contains(s.list, c) {
		return
	}
	s.list = append(s.list, c)
	if len(s.list) > 32 {
		s.big = map[int64]bool{}
		for _, x := range s.list {
			s.big[x] = true
		}
	}
}

func (m *matcher) comparePart(images []ImageLabels, offset, a, b int, opt Options) pairPart {
	var p pairPart
	n := 0
	for _, im := range images {
		n += min(len(labelsOf(im, a).Boxes), len(labelsOf(im, b).Boxes))
	}
	p.pairs, p.ious = make([]pairClass, 0, n), make([]float64, 0, n)
	for ii, im := range images {
		la, lb := labelsOf(im, a), labelsOf(im, b)
		if len(la.Boxes)+len(lb.Boxes) == 0 {
			continue
		}
		mt := m.match(la.Boxes, lb.Boxes, la.Classes, lb.Classes, opt.threshold(), opt.ClassAware)
		ia := ImageAgreement{ImageID: im.ImageID, Name: im.Name, A: len(la.Boxes), B: len(lb.Boxes),
			Matched: len(mt.Pairs), OnlyA: len(mt.OnlyA), OnlyB: len(mt.OnlyB), Match: mt}
		sum := 0.0
		for _, pr := range mt.Pairs {
			ca, cb := la.Classes[pr.A], lb.Classes[pr.B]
			p.pairs = append(p.pairs, pairClass{ca, cb})
			p.seen.add(ca)
			p.seen.add(cb)
			p.ious = append(p.ious, pr.IoU)
			sum += pr.IoU
			if ca != cb {
				ia.ClassDisagreements++
			}
		}
		for _, i := range mt.OnlyA {
			p.unA = append(p.unA, la.Classes[i])
			p.seen.add(la.Classes[i])
		}
		for _, j := range mt.OnlyB {
			p.unB = append(p.unB, lb.Classes[j])
			p.seen.add(lb.Classes[j])
		}
		ia.F1 = f1(ia.Matched, ia.A, ia.B)
		ia.MeanIoU = math.NaN()
		if ia.Matched > 0 {
			ia.MeanIoU = sum / float64(ia.Matched)
		}
		ia.Errors = ia.OnlyA + ia.OnlyB + ia.ClassDisagreements
		p.perImage = append(p.perImage, ia)
		p.index = append(p.index, offset+ii)
	}
	return p
}

// matchParts matches a and b on runs of images, in parallel on the
// available cores; the parts come back in image order.
func matchParts(images []ImageLabels, a, b int, opt Options) []pairPart {
	workers := runtime.GOMAXPROCS(0)
	parts := 1
	if workers > 1 && len(images) >= 128 {
		parts = min(4*workers, len(images)/32)
	}
	out := make([]pairPart, parts)
	var next atomic.Int64
	work := func() {
		m := matcher{pairs: arena[Pair]{chunk: 4096}, indices: arena[int]{chunk: 4096}}
		for {
			p := int(next.Add(1) - 1)
			if p >= parts {
				return
			}
			lo, hi := p*len(images)/parts, (p+1)*len(images)/parts
			out[p] = m.comparePart(images[lo:hi], lo, a, b, opt)
		}
	}
	if parts == 1 {
		work()
		return out
	}
	var wg sync.WaitGroup
	for range min(workers, parts) {
		wg.Go(work)
	}
	wg.Wait()
	return out
}

// comparePair is ComparePair; also, when not nil, is given the images'
// agreements in image order (PerImage is worst first), the index of each
// in images and the order of the classes, and runs beside the pair's
// sums.
func comparePair(images []ImageLabels, a, b int, opt Options, also func(byImage []ImageAgreement, index []int, classes []int64)) PairReport {
	r := PairReport{A: a, B: b}
	parts := matchParts(images, a, b, opt)
	// The parts joined in order are what one pass over the images gives,
	// so every sum below adds the same numbers in the same order.
	var nImages, nPairs, nA, nB int
	for _, p := range parts {
		nImages += len(p.perImage)
		nPairs += len(p.pairs)
		nA += len(p.unA)
		nB += len(p.unB)
	}
	byImage := make([]ImageAgreement, 0, nImages)
	index := make([]int, 0, nImages)
	pairs := make([]pairClass, 0, nPairs)
	ious := make([]float64, 0, nPairs)
	unA, unB := make([]int64, 0, nA), make([]int64, 0, nB)
	seen := map[int64]bool{}
	for _, p := range parts {
		byImage = append(byImage, p.perImage...)
		index = append(index, p.index...)
		pairs = append(pairs, p.pairs...)
		ious = append(ious, p.ious...)
		unA = append(unA, p.unA...)
		unB = append(unB, p.unB...)
		for _, c := range p.seen.list {
			seen[c] = true
		}
	}
	for _, ia := range byImage {
		r.NA += ia.A
		r.NB += ia.B
		r.Matched += ia.Matched
		r.OnlyA += ia.OnlyA
		r.OnlyB += ia.OnlyB
	}
	r.Images = len(byImage)
	r.F1 = f1(r.Matched, r.NA, r.NB)
	r.Classes = classOrder(opt.Classes, seen)
	// The IoU summary (a sort), the ranking of images and whatever the
	// caller wants of the images run beside the sums below.
	var wg sync.WaitGroup
	var perImage []ImageAgreement
	var iou IoUSummary
	wg.Go(func() { iou = summarise(ious) })
	if also != nil {
		wg.Go(func() { also(byImage, index, r.Classes) })
	}
	wg.Go(func() { perImage = worstFirst(byImage) })
	ci := classIndex(r.Classes)
	idx := func(c int64) int { return int(ci.of(c)) }
	k := len(r.Classes)
	r.Confusion = square(k)
	r.ConfusionWithNoObject = square(k + 1)
	for _, p := range pairs {
		r.Confusion[idx(p.ca)][idx(p.cb)]++
		r.ConfusionWithNoObject[idx(p.ca)][idx(p.cb)]++
	}
	for _, c := range unA {
		r.ConfusionWithNoObject[idx(c)][k]++
	}
	for _, c := range unB {
		r.ConfusionWithNoObject[k][idx(c)]++
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
	wg.Wait()
	r.IoU, r.PerImage = iou, perImage
	return r
}

// worstFirst is a copy of the images' agreements sorted stably by
// WorstFirst: an index is sorted rather than the large records, ties kept
// in their order by the index itself.
func worstFirst(ims []ImageAgreement) []ImageAgreement {
	if len(ims) == 0 {
		return nil
	}
	order := make([]int32, len(ims))
	for i := range order {
		order[i] = int32(i)
	}
	slices.SortFunc(order, func(x, y int32) int {
		if c := WorstFirst(ims[x].dispute(), ims[y].dispute()); c != 0 {
			return c
		}
		return cmp.Compare(x, y)
	})
	out := make([]ImageAgreement, len(ims))
	for i, k := range order {
		out[i] = ims[k]
	}
	return out
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
	x := sortedCopy(v)
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

// sortedCopy is v sorted ascending. Positive finite values (IoUs are)
// sort by their bits, by radix in four passes of 16 bits; anything else
// by comparison. Either way the result is the one ascending order.
func sortedCopy(v []float64) []float64 {
	x := append([]float64(nil), v...)
	for _, e := range x {
		if !(e > 0 && e <= math.MaxFloat64) {
			sort.Float64s(x)
			return x
		}
	}
	if len(x) < 1024 {
		sort.Float64s(x)
		return x
	}
	// For positive floats the order of the bit patterns, read as unsigned
	// integers, is the order of the values (IEEE 754, sign bit 0).
	a := make([]uint64, len(x))
	for i, e := range x {
		a[i] = math.Float64bits(e)
	}
	b := make([]uint64, len(x))
	var count [1 << 16]int
	for shift := uint(0); shift < 64; shift += 16 {
		clear(count[:])
		for _, k := range a {
			count[(k>>shift)&0xffff]++
		}
		if count[(a[0]>>shift)&0xffff] == len(a) {
			continue // every key has this digit
		}
		pos := 0
		for d, c := range count {
			count[d] = pos
			pos += c
		}
		for _, k := range a {
			d := (k >> shift) & 0xffff
			b[count[d]] = k
			count[d]++
		}
		a, b = b, a
	}
	for i, k := range a {
		x[i] = math.Float64frombits(k)
	}
	return x
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

// Dispute is how much two or more annotators disagree on one image: the
// key of every worst-first list of images.
type Dispute struct {
	Errors  int     // unmatched boxes and class disagreements
	F1      float64 // detection F1 on the image (the lowest over pairs)
	MeanIoU float64 // mean IoU of its matched pairs (the lowest over pairs)
}

// WorstFirst orders images worst first, for the command line's most
// disputed images and the report window's image table alike: more
// disagreements first, then the lower F1, then the lower mean IoU; a NaN
// (no box, no matched pair) counts as the lowest. Sort stably with it:
// images that tie keep the order they were given in.
func WorstFirst(a, b Dispute) int {
	if c := cmp.Compare(b.Errors, a.Errors); c != 0 {
		return c
	}
	if c := cmp.Compare(a.F1, b.F1); c != 0 { // cmp.Compare puts NaN first
		return c
	}
	return cmp.Compare(a.MeanIoU, b.MeanIoU)
}

func (ia ImageAgreement) dispute() Dispute { return Dispute{ia.Errors, ia.F1, ia.MeanIoU} }
