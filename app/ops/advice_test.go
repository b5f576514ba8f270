package ops

import (
	"strings"
	"testing"

	"boxwright/suggest"
)

// The advice names a threshold only on MinThresholdDecisions or more
// decisions and always gives the Wilson interval of the kept share. The
// intervals are Debian 12's python3-statsmodels 0.13.5
// proportion_confint(k, n, method="wilson"): (116, 120) → (0.9174,
// 0.9870); (3, 7) → (0.1582, 0.7495); (1, 1) → (0.2065, 1.0).
func TestThresholdAdvice(t *testing.T) {
	summary := func(acc, rej int) []suggest.SourceClassStats {
		return []suggest.SourceClassStats{{Source: "m", ClassID: 1, In: acc + rej + 5, Accepted: acc, Rejected: rej, Pending: 5}}
	}
	cases := []struct {
		name string
		rs   ReviewStats
		want []string
		not  []string
	}{
		{"nothing decided", ReviewStats{Source: "m", Summary: summary(0, 0)},
			[]string{"No suggestion of m has been decided yet", "from 20 decisions on"}, []string{"scoring"}},
		{"no score qualifies", ReviewStats{Source: "m", Summary: summary(3, 4)},
			[]string{"No score of m keeps 95 % of suggestions yet: 3 of 7 decisions kept (42.9 %, 95 % Wilson interval 15.8–75.0 %)"}, nil},
		{"one decision", ReviewStats{Source: "m", Summary: summary(1, 0), Suggested: suggest.Threshold{Score: 0.942, Rate: 1, N: 1, Kept: 1, OK: true}},
			[]string{"Not enough evidence", "scoring 0.942 or more were kept in 1 of 1 decision (100.0 %, 95 % Wilson interval 20.7–100.0 %)"}, []string{"1 decisions", "On the evidence"}},
		{"just short", ReviewStats{Source: "m", Summary: summary(19, 0), Suggested: suggest.Threshold{Score: 0.5, Rate: 1, N: MinThresholdDecisions - 1, Kept: MinThresholdDecisions - 1, OK: true}},
			[]string{"Not enough evidence"}, nil},
		{"enough", ReviewStats{Source: "m", Summary: summary(130, 9), Suggested: suggest.Threshold{Score: 0.61, Rate: 116.0 / 120, N: 120, Kept: 116, OK: true}},
			[]string{"On the evidence so far, suggestions of m scoring 0.610 or more were kept (accepted or corrected) in 116 of 120 decisions (96.7 %, 95 % Wilson interval 91.7–98.7 %)"}, []string{"Not enough"}},
	}
	for _, c := range cases {
		got := c.rs.ThresholdAdvice()
		for _, w := range c.want {
			if !strings.Contains(got, w) {
				t.Errorf("%s: lacks %q: %s", c.name, w, got)
			}
		}
		for _, w := range c.not {
			if strings.Contains(got, w) {
				t.Errorf("%s: says %q: %s", c.name, w, got)
			}
		}
	}
}
