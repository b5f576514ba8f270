package cli

import (
	"encoding/json"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
)

// Every numeric flag refuses NaN, infinities and values outside its range
// while the command line is parsed (exit 2, naming the flag), before the
// command opens the project; a consensus refused so leaves the stored one
// as it was (it used to be recomputed with 0 pairs and so erased).
func TestNumericFlagsRefuseBadValues(t *testing.T) {
	path := testkit.SmallDemo(t)
	mustCLI(t, "consensus", path, "--annotators", "Ines,Tomas")
	count := func() int {
		var info struct {
			Annotators []struct {
				Name   string
				Labels int
			}
		}
		out := mustCLI(t, "info", path, "--json")
		if err := json.Unmarshal([]byte(out), &info); err != nil {
			t.Fatalf("%v in %s", err, out)
		}
		for _, a := range info.Annotators {
			if a.Name == "consensus" {
				return a.Labels
			}
		}
		return 0
	}
	before := count()
	if before == 0 {
		t.Fatal("the consensus is empty to begin with")
	}
	cases := []struct {
		args []string
		flag string
		bad  []string
	}{
		{[]string{"consensus", path, "--annotators", "Ines,Tomas"}, "iou", []string{"2", "NaN", "-3", "0", "Inf"}},
		{[]string{"consensus", path, "--annotators", "Ines,Tomas"}, "min", []string{"0", "-1", "x"}},
		{[]string{"agree", path, "--annotators", "Ines,Tomas"}, "iou", []string{"NaN", "1.5", "-Inf"}},
		{[]string{"agree", path, "--annotators", "Ines,Tomas"}, "worst", []string{"-5"}},
		{[]string{"eval", path, "--truth", "Ines", "--source", "detector"}, "threshold", []string{"NaN", "5", "-5"}},
		{[]string{"eval", path, "--truth", "Ines", "--source", "detector"}, "iou", []string{"NaN", "0", "1.01"}},
		{[]string{"add-images", path, "nothing"}, "max-megapixels", []string{"NaN", "Inf", "1e15", "0", "-1"}},
		{[]string{"similar", path, "--image", "a", "--exemplar", "1,1,5,5"}, "threshold", []string{"NaN", "-1", "1.5"}},
		{[]string{"suggestions", "import", path, "f.json", "--source", "s"}, "min-score", []string{"NaN", "2"}},
		{[]string{"suggestions", "import", path, "f.json", "--source", "s"}, "nms", []string{"NaN", "-0.1"}},
		{[]string{"train", path, "--annotator", "Ines"}, "minutes", []string{"NaN", "Inf", "0", "-2"}},
		{[]string{"train", path, "--annotator", "Ines"}, "validation", []string{"NaN", "0.95"}},
		{[]string{"detect", path}, "min-score", []string{"NaN", "1.1"}},
		{[]string{"detect", path}, "nms", []string{"NaN", "7"}},
	}
	for _, c := range cases {
		for _, v := range c.bad {
			args := append(append([]string{}, c.args...), "--"+c.flag, v)
			code, _, errs := cli(t, args...)
			if code != 2 || !strings.Contains(errs, "-"+c.flag) || !strings.Contains(errs, "give") {
				t.Errorf("boxwright %s: exit %d, %q; want exit 2 naming -%s and the range", strings.Join(args, " "), code, errs, c.flag)
			}
		}
	}
	// A class mapped to two different classes is refused too.
	for _, args := range [][]string{
		{"import", path, "f.json", "--layout", "json", "--annotator", "X", "--map", "a=b", "--map", "a=c"},
		{"suggestions", "import", path, "f.json", "--source", "s", "--map", "a=b", "--map", "a=c"},
	} {
		if code, _, errs := cli(t, args...); code != 2 || !strings.Contains(errs, "twice") {
			t.Errorf("boxwright %s: exit %d, %q", strings.Join(args, " "), code, errs)
		}
	}
	if after := count(); after != before {
		t.Errorf("consensus labels %d before the refused runs, %d after", before, after)
	}
}

// Messages say each thing once and name the right action.
func TestMessagesSayItOnce(t *testing.T) {
	path := testkit.SmallDemo(t)
	_, _, errs := cli(t, "agree", path, "--annotators", "Nobody,Ines")
	if strings.Count(errs, `annotator "Nobody"`) != 1 || !strings.Contains(errs, "not found") {
		t.Errorf("agree with an unknown annotator: %q", errs)
	}
	_, _, errs = cli(t, "classes", path, "merge", "sailboat", "sailboat")
	if !strings.Contains(errs, `merge class "sailboat"`) || strings.Contains(errs, "delete") {
		t.Errorf("merging a class into itself: %q", errs)
	}
	if out := mustCLI(t, "consensus", path, "--annotators", "Ines,Tomas"); !strings.Contains(out, "consensus boxes") {
		t.Errorf("consensus: %q", out)
	}
}
