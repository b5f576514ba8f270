package exemplar

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Options tune Search. Zero fields take the defaults given with each.
type Options struct {
	Threshold  float64   // peaks at or above it are matches; 0 means 0.6
	Scales     []float64 // template scales; nil means DefaultScales()
	Rotations  bool      // also the 90°, 180° and 270° turns of each exemplar
	Feature    Feature   // what is correlated: gray, gradient or colour planes
	Vote       string    // "max" (default, also "") or "mean" over exemplars
	NMS        float64   // IoU above which overlapping peaks are suppressed; 0 means 0.3
	MaxResults int       // matches kept per image; 0 means 200
}

// Defaults of Options.
const (
	// DefaultThreshold is the threshold of a search whose Options leave it
	// 0: DefaultThresholdFor(FeatureGray).
	DefaultThreshold  = DefaultGrayThreshold
	DefaultNMS        = 0.3
	DefaultMaxResults = 200
	// MaxResultsLimit bounds MaxResults: suppressing overlaps costs a
	// comparison of every peak with every match kept.
	MaxResultsLimit = 10000
)

// Defaults a person starts from, chosen by measurement on the demo that
// `boxwright demo` writes (TestMeasureDefaults, run with
// BOXWRIGHT_MEASURE_EXEMPLARS=3 BOXWRIGHT_MEASURE_FRAMES=20: for each class
// three exemplars from Ines's labels, the first box of at least 16 px a side
// in each of the first three frames that have one, each searched in the
// first 20 frames of 1280×960 with no labels in the way; hits matched to
// Ines's labels of the class by the PASCAL VOC rule at IoU 0.5, counts
// pooled over the three). Precision is favoured over recall: a flood of
// matches on wave glints costs a reviewer more than a missed buoy.
// Precision by threshold:
//
//	        gray                 gradient             colour
//	thr   buoy motorb sailb    buoy motorb sailb    buoy motorb sailb
//	0.60   .07   .22   .93      .03   .97    1       .97   .32   .91
//	0.65   .16   .41   .98      .04    1     1       .99   .57   .98
//	0.70   .33   .86    1       .10    1     1        1    .88    1
//	0.75   .54    1     1       .28    1     1        1     1     1
//	0.80   .69    1     1       .37    1     1        1     1     1
//	0.85   .94    1     1       .52    1     1        1     1     1
//	0.90    1     1     1       .88    1     –        1     1     1
//
// At the defaults (hits n, precision P, recall R):
//
//	colour 0.70  buoy n 99 P 1 R .22, motorboat n 67 P .88 R .08,
//	             sailboat n 51 P 1 R .09, kayak n 0
//	gray 0.85    buoy n 109 P .94 R .23, motorboat n 27 P 1 R .04,
//	             sailboat n 16 P 1 R .03, kayak n 0
//	gradient .90 buoy n 24 P .88 R .05, motorboat n 1, sailboat and kayak n 0
//
// The old default, gray at 0.60, gave 3,255 buoy hits (54 per image) at
// P .07. Kayaks, thin and of many lengths, are found by none at a useful
// precision (3 true among 97 gradient hits at 0.55, none with colour).
// One exemplar per class over all 40 frames agreed on colour 0.70 (buoy
// n 61 P 1, sailboat n 44 P 1, motorboat one wrong hit, kayak one right);
// its gray buoy figures were kinder (P .98 at 0.75), which is why three
// exemplars decide.
const (
	DefaultFeature           = FeatureColor
	DefaultGrayThreshold     = 0.85
	DefaultGradientThreshold = 0.90
	DefaultColorThreshold    = 0.70
)

// DefaultThresholdFor is the threshold a person starts from with feature f.
// The scores of different features are not on one scale, so each has its
// own.
func DefaultThresholdFor(f Feature) float64 {
	switch f {
	case FeatureGradient:
		return DefaultGradientThreshold
	case FeatureColor:
		return DefaultColorThreshold
	}
	return DefaultGrayThreshold
}

// DefaultScales are 0.8 to 1.25 in five geometric steps (…, 1, …): a copy a
// fifth smaller or a quarter larger than the exemplar is still found.
func DefaultScales() []float64 { return geometric(0.8, 1.25, 5) }

// geometric returns n steps from lo to hi with a constant ratio.
func geometric(lo, hi float64, n int) []float64 {
	if n == 1 {
		return []float64{lo}
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	out[0], out[n-1] = lo, hi
	return out
}

// ParseScales reads a list of scales: "lo:hi:n" (n geometric steps from lo
// to hi), a comma-separated list ("0.9,1,1.1") or a single number.
func ParseScales(s string) ([]float64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return nil, fmt.Errorf("scales %q: empty", s)
	}
	num := func(what, v string) (float64, error) {
		f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return 0, fmt.Errorf("scales %q: %s %q is not a number", s, what, v)
		}
		if f <= 0 {
			return 0, fmt.Errorf("scales %q: %s %g is not positive", s, what, f)
		}
		return f, nil
	}
	if parts := strings.Split(s, ":"); len(parts) > 1 {
		if len(parts) != 3 {
			return nil, fmt.Errorf("scales %q: want lo:hi:steps", s)
		}
		lo, err := num("lo", parts[0])
		if err != nil {
			return nil, err
		}
		hi, err := num("hi", parts[1])
		if err != nil {
			return nil, err
		}
		n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
		if err != nil || n < 1 || n > MaxScales {
			return nil, fmt.Errorf("scales %q: steps %q is not a whole number from 1 to %d", s, parts[2], MaxScales)
		}
		if hi < lo {
			return nil, fmt.Errorf("scales %q: lo %g is above hi %g", s, lo, hi)
		}
		if n == 1 && lo != hi {
			return nil, fmt.Errorf("scales %q: one step needs lo equal to hi", s)
		}
		return geometric(lo, hi, n), nil
	}
	list := strings.Split(s, ",")
	if len(list) > MaxScales {
		return nil, fmt.Errorf("scales %q: %d scales, at most %d are searched at once", s, len(list), MaxScales)
	}
	var out []float64
	for i, v := range list {
		f, err := num(fmt.Sprintf("scale %d", i+1), v)
		if err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	return out, nil
}

// withDefaults fills zero options and checks the rest.
func (o Options) withDefaults() (Options, error) {
	if o.Threshold == 0 {
		o.Threshold = DefaultThreshold
	}
	if !(o.Threshold > 0 && o.Threshold <= 1) {
		return o, fmt.Errorf("exemplar search: threshold %g is not in (0,1]", o.Threshold)
	}
	if o.Scales == nil {
		o.Scales = DefaultScales()
	}
	if len(o.Scales) == 0 {
		return o, errors.New("exemplar search: no scales")
	}
	if len(o.Scales) > MaxScales {
		return o, fmt.Errorf("exemplar search: %d scales, at most %d are searched at once", len(o.Scales), MaxScales)
	}
	for _, s := range o.Scales {
		if !(s > 0) || math.IsInf(s, 0) {
			return o, fmt.Errorf("exemplar search: scale %g is not a positive number", s)
		}
	}
	switch o.Vote {
	case "":
		o.Vote = "max"
	case "max", "mean":
	default:
		return o, fmt.Errorf("exemplar search: vote %q is neither \"max\" nor \"mean\"", o.Vote)
	}
	if o.NMS == 0 {
		o.NMS = DefaultNMS
	}
	if !(o.NMS > 0 && o.NMS <= 1) {
		return o, fmt.Errorf("exemplar search: NMS IoU %g is not in (0,1]", o.NMS)
	}
	if o.MaxResults == 0 {
		o.MaxResults = DefaultMaxResults
	}
	if o.MaxResults < 0 || o.MaxResults > MaxResultsLimit {
		return o, fmt.Errorf("exemplar search: max results %d is not from 1 to %d", o.MaxResults, MaxResultsLimit)
	}
	return o, nil
}
