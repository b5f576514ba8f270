package postgres

import (
	"testing"

	"boxwright/project"
)

// Counts and CountsByImage on a server project give the file's figures
// (store/counts.go): every class and annotator listed with zeros, images
// by the furthest status, each annotator's statuses with untouched
// images as new, suggestions by state; per image only those with labels
// or pending suggestions. The expected figures are counted by hand from
// the rows made here.
func TestServerCounts(t *testing.T) {
	_, s := teamProject(t)
	a, b, c := imgRecord(t, s, 0), imgRecord(t, s, 1), imgRecord(t, s, 2)
	buoy, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	kayak, _ := s.AddClass(bg, project.Class{Name: "kayak"})
	s.AddClass(bg, project.Class{Name: "unused"})
	ines, _ := s.AnnotatorByName(bg, "ines")
	tomas, _ := s.AnnotatorByName(bg, "tomas")
	rawLabel(t, s, a.ID, buoy.ID, ines.ID, 0)
	rawLabel(t, s, a.ID, kayak.ID, ines.ID, 1)
	rawLabel(t, s, b.ID, buoy.ID, tomas.ID, 2)
	rawSuggestion(t, s, a.ID, buoy.ID, "pending")
	rawSuggestion(t, s, c.ID, kayak.ID, "pending")
	rawSuggestion(t, s, c.ID, kayak.ID, "rejected")
	s.SetImageStatus(bg, a.ID, ines.ID, project.StatusDone, ines.ID)
	s.SetImageStatus(bg, b.ID, tomas.ID, project.StatusStarted, tomas.ID)
	s.SetImageStatus(bg, a.ID, tomas.ID, project.StatusSkipped, tomas.ID)

	got, err := s.Counts(bg)
	if err != nil {
		t.Fatal(err)
	}
	if got.Images != 3 || got.Labels != 3 {
		t.Errorf("%d images, %d labels; want 3 and 3", got.Images, got.Labels)
	}
	wantBy := map[project.ImageStatus]int{project.StatusNew: 1, project.StatusStarted: 1, project.StatusDone: 1, project.StatusReviewed: 0, project.StatusSkipped: 0}
	for st, n := range wantBy {
		if got.ImagesBy[st] != n {
			t.Errorf("images %s: %d, want %d (all %v)", st, got.ImagesBy[st], n, got.ImagesBy)
		}
	}
	if got.Suggestions[project.SuggestionPending] != 2 || got.Suggestions[project.SuggestionRejected] != 1 || got.Suggestions[project.SuggestionAccepted] != 0 {
		t.Errorf("suggestions %v", got.Suggestions)
	}
	if len(got.LabelsByClass) != 3 || got.LabelsByClass[0].Count != 2 || got.LabelsByClass[1].Count != 1 || got.LabelsByClass[2].Name != "unused" || got.LabelsByClass[2].Count != 0 {
		t.Errorf("labels by class %+v", got.LabelsByClass)
	}
	names := ""
	for _, nc := range got.LabelsByAnnotator {
		names += nc.Name + " "
	}
	if names != "ines olga rita tomas " || got.LabelsByAnnotator[0].Count != 2 || got.LabelsByAnnotator[3].Count != 1 {
		t.Errorf("labels by annotator %+v", got.LabelsByAnnotator)
	}
	if m := got.StatusByAnnotator["tomas"]; m[project.StatusStarted] != 1 || m[project.StatusSkipped] != 1 || m[project.StatusNew] != 1 {
		t.Errorf("tomas's statuses %v", m)
	}
	if m := got.StatusByAnnotator["rita"]; m[project.StatusNew] != 3 {
		t.Errorf("rita's statuses %v, want her 3 images new", m)
	}

	per, err := s.CountsByImage(bg)
	if err != nil {
		t.Fatal(err)
	}
	want := map[int64]project.ImageCounts{a.ID: {Labels: 2, Pending: 1}, b.ID: {Labels: 1}, c.ID: {Pending: 1}}
	if len(per) != len(want) {
		t.Errorf("per image %v, want %v", per, want)
	}
	for id, w := range want {
		if per[id] != w {
			t.Errorf("image %d: %+v, want %+v", id, per[id], w)
		}
	}
}
