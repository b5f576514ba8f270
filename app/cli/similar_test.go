package cli

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"os/exec"
	"slices"
	"strings"
	"testing"
	"time"

	"boxwright/app/internal/testkit"
	"boxwright/project"
	"boxwright/store"
	"boxwright/suggest/exemplar"
)

func TestSimilarCommandFindsAndSaves(t *testing.T) {
	path := testkit.SmallDemo(t)
	im, ex := testkit.Exemplar(t, path)
	b := ex.Box
	corners := fmt.Sprintf("%g,%g,%g,%g", b.X0, b.Y0, b.X1, b.Y1)
	out := mustCLI(t, "similar", path, "--image", im.Path, "--exemplar", corners, "--threshold", "0.5", "--json")
	var m struct {
		Matches []struct{ X0, Y0, X1, Y1, Score, Scale float64 }
	}
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	for i, mt := range m.Matches {
		if project.Rect(mt.X0, mt.Y0, mt.X1, mt.Y1).IoU(b) > 0.5 {
			t.Errorf("match %d is the example itself", i)
		}
		if i > 0 && mt.Score > m.Matches[i-1].Score {
			t.Errorf("matches not best first")
		}
		if mt.Score < 0.5 {
			t.Errorf("match %d scores %.3f below the threshold", i, mt.Score)
		}
	}
	mustCLI(t, "similar", path, "--image", im.Path, "--exemplar", corners, "--threshold", "0.5", "--class", "sailboat", "--save")
	s, _ := store.Open(path)
	gs, _ := s.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source})
	s.Close()
	if len(gs) != len(m.Matches) {
		t.Errorf("%d suggestions stored for %d matches", len(gs), len(m.Matches))
	}
	for _, bad := range [][]string{
		{"similar", path, "--image", im.Path},
		{"similar", path, "--image", im.Path, "--exemplar", "1,2,3"},
		{"similar", path, "--image", im.Path, "--exemplar", corners, "--save"},
		{"similar", path, "--image", "nowhere.jpg", "--exemplar", corners},
		{"similar", path, "--image", im.Path, "--exemplar", "0,0,5000,10"},
	} {
		if code, _, _ := cli(t, bad...); code == 0 {
			t.Errorf("%v succeeded", bad)
		}
	}
}

// similarArgs is a similar command line on the demo's example boat.
func similarArgs(t *testing.T) (path string, args []string) {
	t.Helper()
	path = testkit.SmallDemo(t)
	im, ex := testkit.Exemplar(t, path)
	b := ex.Box
	return path, []string{"similar", path, "--image", im.Path, "--exemplar", fmt.Sprintf("%g,%g,%g,%g", b.X0, b.Y0, b.X1, b.Y1)}
}

// Scales, thresholds and result counts that cannot make sense are usage
// errors (exit 2) that say what would; issue 14 ran 0.001:1000:100 for over
// a minute and returned 200 three-pixel matches for 0.001:0.001:1, and a
// threshold of 0 silently meant 0.6.
func TestSimilarRefusesSenselessNumbers(t *testing.T) {
	_, args := similarArgs(t)
	for _, c := range []struct {
		flags []string
		want  string
	}{
		{[]string{"--scales", "0.001:0.001:1"}, "make sense here"},
		{[]string{"--scales", "2:1:3"}, "for this example give scales from"},
		{[]string{"--scales", "0:1:3"}, "for this example give scales from"},
		{[]string{"--scales", "nan:1:3"}, "for this example give scales from"},
		{[]string{"--scales", "1:Inf:3"}, "for this example give scales from"},
		{[]string{"--scales", "1:2:1000000"}, "from 1 to 100"},
		{[]string{"--scales", "500,900"}, "larger than the 640×480 image"},
		{[]string{"--threshold", "0"}, "above 0 and at most 1"},
		{[]string{"--threshold", "-0.5"}, "above 0 and at most 1"},
		{[]string{"--threshold", "NaN"}, "above 0 and at most 1"},
		{[]string{"--max-results", "0"}, "from 1 to 10000"},
		{[]string{"--max-results", "100000"}, "from 1 to 10000"},
	} {
		code, _, errs := cli(t, append(slices.Clone(args), c.flags...)...)
		if code != 2 || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.flags, code, errs, c.want)
		}
	}
}

// Scales partly outside the sensible range are searched where they make
// sense, and the output says which were left out and why.
func TestSimilarSaysWhichScalesWereSearched(t *testing.T) {
	_, args := similarArgs(t)
	code, out, errs := cli(t, append(slices.Clone(args), "--scales", "0.01:1:3")...)
	if code != 0 || !strings.Contains(out, "searched 1 of 3 scales: 1; left out 0.01, 0.1 (template under 8 px on a side)") {
		t.Errorf("exit %d, stdout %q, stderr %q", code, out, errs)
	}
	js := mustCLI(t, append(slices.Clone(args), "--scales", "0.01:1:3", "--threshold", "0.3", "--max-results", "3", "--json")...)
	var m struct {
		Matches  []struct{ X0, Y0, X1, Y1, Scale float64 }
		Searched []float64 `json:"scales_searched"`
		Dropped  []struct {
			Scale float64
			Why   string
		} `json:"scales_dropped"`
		Full bool `json:"max_results_reached"`
	}
	if err := json.Unmarshal([]byte(js), &m); err != nil {
		t.Fatalf("%v\n%s", err, js)
	}
	if !slices.Equal(m.Searched, []float64{1}) || len(m.Dropped) != 2 || m.Dropped[0].Scale != 0.01 || m.Dropped[0].Why == "" {
		t.Errorf("searched %v, dropped %+v", m.Searched, m.Dropped)
	}
	if len(m.Matches) > 3 || m.Full != (len(m.Matches) == 3) {
		t.Errorf("%d matches with --max-results 3, max_results_reached %v", len(m.Matches), m.Full)
	}
	for _, mt := range m.Matches {
		if mt.X1-mt.X0 < exemplar.MinTemplateSide || mt.Y1-mt.Y0 < exemplar.MinTemplateSide || mt.Scale != 1 {
			t.Errorf("match %+v", mt)
		}
	}
}

// Ctrl+C (SIGINT) stops a long search: the command exits with status 130
// and says it was interrupted, and --save stores nothing. The command runs
// in a child process (this test binary again), so the signal cannot reach
// the tests.
func TestSimilarStopsOnCtrlC(t *testing.T) {
	if a := os.Getenv("BOXWRIGHT_TEST_SIMILAR_CHILD"); a != "" {
		var args []string
		if err := json.Unmarshal([]byte(a), &args); err != nil {
			os.Exit(3)
		}
		os.Exit(Run(args, os.Stdout, os.Stderr, noWindow))
	}
	path, args := similarArgs(t)
	// About a hundred scales, each in four turns: many seconds of work.
	args = append(args, "--scales", "0.5:12:100", "--rotations", "--class", "sailboat", "--save")
	enc, _ := json.Marshal(args)
	cmd := exec.Command(os.Args[0], "-test.run=^TestSimilarStopsOnCtrlC$")
	cmd.Env = append(os.Environ(), "BOXWRIGHT_TEST_SIMILAR_CHILD="+string(enc))
	stderr, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	var seen strings.Builder
	sc := bufio.NewScanner(stderr)
	for sc.Scan() {
		seen.WriteString(sc.Text() + "\n")
		if strings.Contains(sc.Text(), "Ctrl+C stops") {
			break // the search has begun
		}
	}
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	rest, _ := io.ReadAll(stderr)
	seen.Write(rest)
	waited := make(chan error, 1)
	go func() { waited <- cmd.Wait() }()
	select {
	case <-waited:
	case <-time.After(2 * time.Minute): // a hang, not a slow machine
		cmd.Process.Kill()
		t.Fatalf("still searching two minutes after Ctrl+C; stderr:\n%s", seen.String())
	}
	if code := cmd.ProcessState.ExitCode(); code != ExitInterrupted || !strings.Contains(seen.String(), "interrupted (Ctrl+C)") {
		t.Errorf("exit %d, stderr:\n%s", code, seen.String())
	}
	s, err := store.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	gs, _ := s.Suggestions(context.Background(), project.SuggestionFilter{Source: exemplar.Source})
	if len(gs) != 0 {
		t.Errorf("%d suggestions stored by an interrupted search", len(gs))
	}
}

// Without --threshold each comparison takes its own measured default, and
// the summary names the comparison's score.
func TestSimilarDefaultThresholdFollowsTheFeature(t *testing.T) {
	path := testkit.SmallDemo(t)
	im, ex := testkit.Exemplar(t, path)
	b := ex.Box
	corners := fmt.Sprintf("%g,%g,%g,%g", b.X0, b.Y0, b.X1, b.Y1)
	for _, c := range []struct {
		feature string
		f       exemplar.Feature
	}{{"gray", exemplar.FeatureGray}, {"gradient", exemplar.FeatureGradient}, {"color", exemplar.FeatureColor}} {
		out := mustCLI(t, "similar", path, "--image", im.Path, "--exemplar", corners, "--feature", c.feature, "--max-results", "3")
		want := fmt.Sprintf("at %s ≥ %.2f", c.f.ScoreName(), exemplar.DefaultThresholdFor(c.f))
		if !strings.Contains(out, want) {
			t.Errorf("--feature %s: %q, want %q", c.feature, out, want)
		}
	}
}
