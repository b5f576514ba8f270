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
// `boxwright demo` writes (TestMeasureDefaults: 40 frames of 1280×960, one
// exemplar per class from Ines's labels, hits matched to her labels of the
// class by the PASCAL VOC rule at IoU 0.5, no labels in the way). Precision
// is favoured over recall: a flood of matches on wave glints costs a
// reviewer more than a missed buoy. P precision, R recall, n hits:
//
//	           gray                  gradient              colour
//	thr   buoy         sailb.    buoy         motorb.  buoy         motorb.
//	0.60  P .07 n 2032 P 1   52  P .91 n 56   n 0      P .99 n 107  P .23 n 22
//	0.65  P .16 n 830  P 1   47  P 1   n 44   n 0      P 1   n 82   P .50 n 2
//	0.70  P .53 n 221  P 1   44  P 1   n 44   n 0      P 1   n 61   n 1
//	0.75  P .98 n 101  P 1   39  P 1   n 41   n 0      P 1   n 48   n 0
//	0.80  P 1   n 84   P 1   29  P 1   n 32   n 0      P 1   n 32   n 0
//	R at the default:  buoy .30, sailboat .06 (gray 0.80); buoy .16,
//	sailboat .02 (gradient 0.65); buoy .30, sailboat .10 (colour 0.65).
//
// Motorboats and kayaks (white hulls and paddlers on textured water) are
// found by none of them at a useful precision: gray motorboat P ≤ .15 at
// any threshold with hits (none at 0.70 and above), kayak none at 0.55 and
// above. Gray at 0.75 is the edge where glints stop (P .53 at 0.70), so its
// default keeps a step of margin.
const (
	DefaultFeature           = FeatureGray
	DefaultGrayThreshold     = 0.80
	DefaultGradientThreshold = 0.65
	DefaultColorThreshold    = 0.65
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
