package agree

import (
	"strings"
	"testing"

	"boxwright/project"
)

// Three annotators: two drew the same boat (IoU 0.82), one drew something
// else. With the default support (a strict majority, 2 of 3) only the boat
// stays, with the mean box and a score of 2/3. (Invented round-trip data;
// the majority rule is common practice.)
func TestConsensusLabelsKeepsWhatAMajorityDrew(t *testing.T) {
	a := project.Box{X0: 0, Y0: 0, X1: 100, Y1: 50}
	b := project.Box{X0: 10, Y0: 0, X1: 100, Y1: 50}
	far := project.Box{X0: 300, Y0: 300, X1: 320, Y1: 320}
	im := ImageLabels{ImageID: 7, By: []Labels{
		{Boxes: []project.Box{a}, Classes: []int64{1}},
		{Boxes: []project.Box{b}, Classes: []int64{1}},
		{Boxes: []project.Box{far}, Classes: []int64{2}},
	}}
	labels, ties := ConsensusLabels([]ImageLabels{im}, []string{"Ines", "Tomas", "Ana"}, ConsensusOptions{Threshold: 0.5})
	if len(labels) != 1 || ties != 0 {
		t.Fatalf("labels %+v, ties %d", labels, ties)
	}
	l := labels[0]
	want := project.Box{X0: 5, Y0: 0, X1: 100, Y1: 50}
	if l.ImageID != 7 || l.ClassID != 1 || l.Box != want || l.Score != 2.0/3 || l.Origin != project.OriginImported {
		t.Errorf("consensus label %+v", l)
	}
	if !strings.Contains(l.Source, "consensus of Ines, Tomas, Ana") || !strings.Contains(l.Source, "seen by ≥ 2, mean box") {
		t.Errorf("source %q", l.Source)
	}
	if got, _ := ConsensusLabels([]ImageLabels{im}, []string{"Ines", "Tomas", "Ana"}, ConsensusOptions{Threshold: 0.5, MinSupport: 1}); len(got) != 2 {
		t.Errorf("support 1 keeps %d objects, want 2", len(got))
	}
}
