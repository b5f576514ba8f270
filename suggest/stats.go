package suggest

import (
	"cmp"
	"math"
	"slices"

	"boxwright/project"
)

// Decision is one reviewed or pending suggestion as statistics see it.
type Decision struct {
	Source  string
	ClassID int64
	Score   float64
	State   project.SuggestionState
	// IoU is that of the suggestion with the final box, for accepted (1)
	// and corrected suggestions; NaN otherwise.
	IoU float64
}

// decided reports whether a person has ruled on the suggestion. A state
// that is not known counts as pending: it is neither right nor wrong.
func (d Decision) decided() bool {
	switch d.State {
	case project.SuggestionAccepted, project.SuggestionCorrected, project.SuggestionRejected:
		return true
	}
	return false
}

// kept reports whether the suggestion became a label.
func (d Decision) kept() bool {
	return d.State == project.SuggestionAccepted || d.State == project.SuggestionCorrected
}

// SourceClassStats counts the decisions on one source's suggestions of one
// class.
type SourceClassStats struct {
	Source  string
	ClassID int64
	// In is every suggestion; the other counts split it by state (unknown
	// states count as pending).
	In, Accepted, Corrected, Rejected, Pending int
	// MeanCorrectedIoU is the mean IoU of corrected suggestions with their
	// final boxes (those with a NaN IoU left out); NaN when there are none.
	MeanCorrectedIoU float64
}

// Summarise counts decisions per source and class, sorted by source then
// class ID.
func Summarise(ds []Decision) []SourceClassStats {
	type key struct {
		source string
		class  int64
	}
	type acc struct {
		s      SourceClassStats
		iouSum float64
		iouN   int
	}
	m := map[key]*acc{}
	for _, d := range ds {
		k := key{d.Source, d.ClassID}
		a := m[k]
		if a == nil {
			a = &acc{s: SourceClassStats{Source: d.Source, ClassID: d.ClassID}}
			m[k] = a
		}
		a.s.In++
		switch d.State {
		case project.SuggestionAccepted:
			a.s.Accepted++
		case project.SuggestionCorrected:
			a.s.Corrected++
			if !math.IsNaN(d.IoU) {
				a.iouSum += d.IoU
				a.iouN++
			}
		case project.SuggestionRejected:
			a.s.Rejected++
		default:
			a.s.Pending++
		}
	}
	out := make([]SourceClassStats, 0, len(m))
	for _, a := range m {
		a.s.MeanCorrectedIoU = math.NaN()
		if a.iouN > 0 {
			a.s.MeanCorrectedIoU = a.iouSum / float64(a.iouN)
		}
		out = append(out, a.s)
	}
	slices.SortFunc(out, func(a, b SourceClassStats) int {
		return cmp.Or(cmp.Compare(a.Source, b.Source), cmp.Compare(a.ClassID, b.ClassID))
	})
	return out
}

// Bin is one score bin of the reliability chart: decisions
// (accepted+corrected+rejected, never pending) with score in [Lo, Hi) (the
// last bin includes 1) and how many were accepted or corrected.
type Bin struct {
	Lo, Hi        float64
	Decided, Kept int
	Rate          float64 // Kept/Decided; NaN when Decided = 0
}

// Reliability splits [0,1] into bins of equal width and counts the decided
// suggestions in each. Scores outside [0,1] or NaN are left out. It returns
// nil when bins < 1.
func Reliability(ds []Decision, bins int) []Bin {
	if bins < 1 {
		return nil
	}
	out := make([]Bin, bins)
	lo := func(i int) float64 { return float64(i) / float64(bins) }
	for i := range out {
		out[i].Lo, out[i].Hi = lo(i), lo(i+1)
	}
	for _, d := range ds {
		if !d.decided() || !(d.Score >= 0 && d.Score <= 1) {
			continue
		}
		// The product may round across a bin edge; the edges decide.
		i := min(int(d.Score*float64(bins)), bins-1)
		for i > 0 && d.Score < out[i].Lo {
			i--
		}
		for i < bins-1 && d.Score >= out[i+1].Lo {
			i++
		}
		out[i].Decided++
		if d.kept() {
			out[i].Kept++
		}
	}
	for i := range out {
		out[i].Rate = math.NaN()
		if out[i].Decided > 0 {
			out[i].Rate = float64(out[i].Kept) / float64(out[i].Decided)
		}
	}
	return out
}

// Threshold is the lowest score s (taken from the decided scores) such
// that at least Rate of the decided suggestions with score >= s were kept
// (accepted or corrected).
type Threshold struct {
	Score float64
	Rate  float64 // the share kept among the decisions with score >= Score
	N     int     // how many decisions it rests on
	Kept  int     // how many of them were kept
	OK    bool    // false when no score qualifies or nothing is decided
}

// SuggestThreshold finds the lowest decided score above which at least
// rate (e.g. 0.95) of the decided suggestions were kept. Pending
// suggestions and NaN scores are left out.
func SuggestThreshold(ds []Decision, rate float64) Threshold {
	type sk struct {
		score float64
		kept  bool
	}
	var xs []sk
	for _, d := range ds {
		if d.decided() && !math.IsNaN(d.Score) {
			xs = append(xs, sk{d.Score, d.kept()})
		}
	}
	slices.SortFunc(xs, func(a, b sk) int { return cmp.Compare(b.score, a.score) })
	var t Threshold
	n, kept := 0, 0
	for i, x := range xs {
		n++
		if x.kept {
			kept++
		}
		if i+1 < len(xs) && xs[i+1].score == x.score {
			continue // all decisions at one score stand or fall together
		}
		if r := float64(kept) / float64(n); r >= rate {
			t = Threshold{Score: x.score, Rate: r, N: n, Kept: kept, OK: true}
		}
	}
	return t
}
