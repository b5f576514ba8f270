package ops

import (
	"encoding/json"
	"math"
	"testing"
)

// English plurals of the nouns the messages count (common practice: -es
// after s, x, z, ch and sh).
func TestPlural(t *testing.T) {
	for _, c := range []struct {
		n          int
		word, want string
	}{
		{1, "box", "1 box"}, {2, "box", "2 boxes"}, {3, "match", "3 matches"}, {0, "class", "0 classes"},
		{2, "image", "2 images"}, {5, "consensus box", "5 consensus boxes"},
	} {
		if got := Plural(c.n, c.word); got != c.want {
			t.Errorf("Plural(%d, %q) = %q, want %q", c.n, c.word, got, c.want)
		}
	}
}

// JSON has no NaN or Inf (RFC 8259, section 6): an interval with either
// end undefined or infinite is null, never an encoding error.
func TestIntervalIsNullWhenNotFinite(t *testing.T) {
	for _, ci := range [][2]float64{{math.NaN(), 1}, {math.Inf(-1), math.Inf(1)}, {0, math.Inf(1)}} {
		v := Interval(ci)
		if v != nil {
			t.Errorf("Interval(%v) = %v, want nil", ci, v)
		}
		if _, err := json.Marshal(map[string]any{"ci95": v}); err != nil {
			t.Errorf("Interval(%v): %v", ci, err)
		}
	}
	if v, ok := Interval([2]float64{0.1, 0.5}).([]float64); !ok || v[0] != 0.1 || v[1] != 0.5 {
		t.Errorf("a finite interval: %v", v)
	}
}
