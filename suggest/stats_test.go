package suggest

import (
	"math"
	"testing"

	"boxwright/project"
)

const (
	acc = project.SuggestionAccepted
	cor = project.SuggestionCorrected
	rej = project.SuggestionRejected
	pen = project.SuggestionPending
)

var nan = math.NaN()

// TestSummarise counts by hand: source "a", class 1 has 2 accepted, 2
// corrected (IoU 0.8 and 0.6, mean 0.7), 1 rejected, 1 pending.
func TestSummarise(t *testing.T) {
	ds := []Decision{
		{"b", 1, 0.9, acc, 1},
		{"a", 2, 0.5, rej, nan},
		{"a", 1, 0.9, acc, 1},
		{"a", 1, 0.8, cor, 0.8},
		{"a", 1, 0.7, cor, 0.6},
		{"a", 1, 0.6, acc, 1},
		{"a", 1, 0.4, rej, nan},
		{"a", 1, 0.3, pen, nan},
		{"a", 2, 0.2, cor, nan}, // no IoU recorded: left out of the mean
	}
	got := Summarise(ds)
	want := []SourceClassStats{
		{"a", 1, 6, 2, 2, 1, 1, 0.7},
		{"a", 2, 2, 0, 1, 1, 0, nan},
		{"b", 1, 1, 1, 0, 0, 0, nan},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d rows, want %d: %+v", len(got), len(want), got)
	}
	for i := range want {
		g, w := got[i], want[i]
		gm, wm := g.MeanCorrectedIoU, w.MeanCorrectedIoU
		g.MeanCorrectedIoU, w.MeanCorrectedIoU = 0, 0
		if g != w || !(math.Abs(gm-wm) < 1e-12 || math.IsNaN(gm) && math.IsNaN(wm)) {
			t.Errorf("row %d = %+v (mean %v), want %+v (mean %v)", i, g, gm, w, wm)
		}
	}
	if Summarise(nil) == nil || len(Summarise(nil)) != 0 {
		t.Errorf("Summarise(nil) should be an empty list")
	}
}

// TestReliability bins by hand into [0,0.25), [0.25,0.5), [0.5,0.75),
// [0.75,1].
func TestReliability(t *testing.T) {
	ds := []Decision{
		{"a", 1, 0, rej, nan},    // bin 0
		{"a", 1, 0.25, acc, 1},   // bin 1: the lower edge belongs to the bin
		{"a", 1, 0.3, rej, nan},  // bin 1
		{"a", 1, 0.49, cor, 0.7}, // bin 1
		{"a", 1, 0.75, acc, 1},   // bin 3
		{"a", 1, 1, acc, 1},      // bin 3: the last bin includes 1
		{"a", 1, 0.9, rej, nan},  // bin 3
		{"a", 1, 0.6, pen, nan},  // pending: not counted
		{"a", 1, 0.6, pen, nan},
		{"a", 1, 1.5, acc, 1}, // out of range: left out
		{"a", 1, nan, acc, 1}, // no score: left out
	}
	got := Reliability(ds, 4)
	want := []Bin{
		{0, 0.25, 1, 0, 0},
		{0.25, 0.5, 3, 2, 2.0 / 3},
		{0.5, 0.75, 0, 0, nan},
		{0.75, 1, 3, 2, 2.0 / 3},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d bins", len(got))
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.Lo != w.Lo || g.Hi != w.Hi || g.Decided != w.Decided || g.Kept != w.Kept ||
			!(g.Rate == w.Rate || math.IsNaN(g.Rate) && math.IsNaN(w.Rate)) {
			t.Errorf("bin %d = %+v, want %+v", i, g, w)
		}
	}
	// With 100 bins, 0.29*100 rounds to 28.999999999999996 and 0.57*100
	// to 56.99999999999999: each score must still land in the bin whose
	// lower edge it equals.
	hundredths := Reliability([]Decision{{"a", 1, 0.29, acc, 1}, {"a", 1, 0.57, acc, 1}, {"a", 1, 0.58, acc, 1}}, 100)
	for _, i := range []int{29, 57, 58} {
		if hundredths[i].Decided != 1 {
			t.Errorf("bins of 0.01: bin %d [%v,%v) holds %d, want 1", i, hundredths[i].Lo, hundredths[i].Hi, hundredths[i].Decided)
		}
	}
	if Reliability(ds, 0) != nil {
		t.Error("Reliability with 0 bins should be nil")
	}
}

// TestSuggestThreshold works the sweep by hand. Decided scores, highest
// first, with kept (K) or rejected (R):
//
//	0.9 K, 0.8 K, 0.7 K, 0.6 R, 0.5 K, 0.4 R, 0.3 R
//
// share kept at or above each score: 0.9 1/1, 0.8 2/2, 0.7 3/3, 0.6 3/4,
// 0.5 4/5 = 0.8, 0.4 4/6, 0.3 4/7. For rate 0.8 the lowest score that
// qualifies is 0.5 (on 5 decisions); for 0.95 it is 0.7 (on 3).
func TestSuggestThreshold(t *testing.T) {
	ds := []Decision{
		{"a", 1, 0.6, rej, nan},
		{"a", 1, 0.9, acc, 1},
		{"a", 2, 0.3, rej, nan},
		{"a", 1, 0.8, cor, 0.5},
		{"a", 1, 0.5, acc, 1},
		{"a", 1, 0.7, acc, 1},
		{"a", 1, 0.4, rej, nan},
		{"a", 1, 0.2, pen, nan}, // pending: neither right nor wrong
		{"a", 1, 0.1, pen, nan},
	}
	cases := []struct {
		rate float64
		want Threshold
	}{
		{0.8, Threshold{0.5, 0.8, 5, 4, true}},
		{0.95, Threshold{0.7, 1, 3, 3, true}},
		{0.5, Threshold{0.3, 4.0 / 7, 7, 4, true}},
		{1, Threshold{0.7, 1, 3, 3, true}},
	}
	for _, c := range cases {
		if got := SuggestThreshold(ds, c.rate); got != c.want {
			t.Errorf("rate %v: %+v, want %+v", c.rate, got, c.want)
		}
	}
	// Nothing decided, or every decision rejected: no threshold.
	if got := SuggestThreshold(ds[7:], 0.5); got.OK {
		t.Errorf("only pending: %+v, want not OK", got)
	}
	if got := SuggestThreshold([]Decision{{"a", 1, 0.9, rej, nan}}, 0.5); got.OK {
		t.Errorf("all rejected: %+v, want not OK", got)
	}
	// Ties: at 0.5 one kept and one rejected stand together, 1/2 < 0.95,
	// so 0.9 is the threshold.
	tied := []Decision{{"a", 1, 0.9, acc, 1}, {"a", 1, 0.5, acc, 1}, {"a", 1, 0.5, rej, nan}}
	if got, want := SuggestThreshold(tied, 0.95), (Threshold{0.9, 1, 1, 1, true}); got != want {
		t.Errorf("tied: %+v, want %+v", got, want)
	}
}

// TestPendingNeverCounts checks that adding pending suggestions changes no
// rate, bin or threshold.
func TestPendingNeverCounts(t *testing.T) {
	base := []Decision{{"a", 1, 0.9, acc, 1}, {"a", 1, 0.55, rej, nan}, {"a", 1, 0.3, cor, 0.6}}
	more := append([]Decision{}, base...)
	for _, s := range []float64{0.95, 0.55, 0.3, 0.1} {
		more = append(more, Decision{"a", 1, s, pen, nan})
	}
	if a, b := SuggestThreshold(base, 0.6), SuggestThreshold(more, 0.6); a != b {
		t.Errorf("threshold %+v became %+v with pending suggestions", a, b)
	}
	ra, rb := Reliability(base, 5), Reliability(more, 5)
	for i := range ra {
		if ra[i].Decided != rb[i].Decided || ra[i].Kept != rb[i].Kept {
			t.Errorf("bin %d %+v became %+v with pending suggestions", i, ra[i], rb[i])
		}
	}
	sa, sb := Summarise(base)[0], Summarise(more)[0]
	if sb.Pending != 4 || sb.In != 7 || sa.Accepted != sb.Accepted || sa.Corrected != sb.Corrected || sa.Rejected != sb.Rejected {
		t.Errorf("summary %+v became %+v with pending suggestions", sa, sb)
	}
}
