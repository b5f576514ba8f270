package store

import (
	"testing"

	"boxwright/project"
)

// Statuses belong to annotators: one person's "done" is not another's, and
// export's "checked and found empty" uses the exported annotator's only.
func TestStatusIsPerAnnotator(t *testing.T) {
	s := newStore(t)
	a, b := addImage(t, s, 0), addImage(t, s, 1)
	ines, _ := s.AddAnnotator(bg, "Ines")
	omar, _ := s.AddAnnotator(bg, "Omar")
	tomas, _ := s.AddAnnotator(bg, "Tomas")
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	if err := s.SetImageStatus(bg, a.ID, ines.ID, project.StatusReviewed, tomas.ID); err != nil {
		t.Fatal(err)
	}
	if err := s.SetImageStatus(bg, b.ID, ines.ID, project.StatusDone, ines.ID); err != nil {
		t.Fatal(err)
	}
	// Omar labels image b only.
	if _, err := s.ApplyLabelChange(bg, project.LabelChange{Insert: []project.Label{{ImageID: b.ID, ClassID: c.ID, AnnotatorID: omar.ID,
		Box: project.Box{X0: 1, Y0: 1, X1: 5, Y1: 5}, Origin: project.OriginDrawn}}}); err != nil {
		t.Fatal(err)
	}
	status := func(id int64) map[int64]project.ImageStatus {
		ims, err := s.ImagesFor(bg, id)
		if err != nil {
			t.Fatal(err)
		}
		m := map[int64]project.ImageStatus{}
		for _, im := range ims {
			m[im.ID] = im.Status
		}
		return m
	}
	if got := status(ines.ID); got[a.ID] != project.StatusReviewed || got[b.ID] != project.StatusDone {
		t.Errorf("Ines's statuses %v", got)
	}
	if got := status(omar.ID); got[a.ID] != project.StatusNew || got[b.ID] != project.StatusStarted {
		t.Errorf("Omar's statuses %v: a label starts his image, and Ines's marks are not his", got)
	}
	var by int64
	s.db.QueryRow("SELECT reviewed_by FROM image_status WHERE image_id = ? AND annotator_id = ?", a.ID, ines.ID).Scan(&by)
	if by != tomas.ID {
		t.Errorf("reviewed_by = %d, want Tomas (%d)", by, tomas.ID)
	}
	// Omar's export holds image b (his label) and not image a, which Ines
	// reviewed and he never looked at.
	_, out, err := s.ExportImages(bg, omar.ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(out) != 1 || out[0].Record.Name != b.Path {
		t.Errorf("Omar's export: %d images %+v, want only %s", len(out), out, b.Path)
	}
	// Ines's export keeps her checked-and-empty images.
	if _, out, _ := s.ExportImages(bg, ines.ID); len(out) != 2 {
		t.Errorf("Ines's export: %d images, want her 2 checked images", len(out))
	}
	cnt, _ := s.Counts(bg)
	if cnt.StatusByAnnotator["Omar"][project.StatusStarted] != 1 || cnt.StatusByAnnotator["Omar"][project.StatusNew] != 1 ||
		cnt.StatusByAnnotator["Ines"][project.StatusReviewed] != 1 || cnt.ImagesBy[project.StatusReviewed] != 1 || cnt.ImagesBy[project.StatusDone] != 1 {
		t.Errorf("counts: %+v", cnt)
	}
}

// Migration 4 hands the old project-wide status to the annotators who
// labelled the image, and an empty checked image to the only annotator.
func TestStatusMigrationFromProjectWide(t *testing.T) {
	for _, annotators := range []int{1, 2} {
		path := projectWithLabels(t, 3) // 3 labels by Ines on image 0
		s, err := Open(path)
		if err != nil {
			t.Fatal(err)
		}
		empty := addImage(t, s, 5)
		if annotators == 2 {
			s.AddAnnotator(bg, "Tomas")
		}
		// Back to schema 3, with the project-wide column in use.
		for _, q := range []string{"DROP TABLE image_status", "DELETE FROM schema_migrations WHERE version = 4",
			"UPDATE images SET status = 'done'"} {
			if _, err := s.db.Exec(q); err != nil {
				t.Fatal(err)
			}
		}
		s.Close()
		if s, err = Open(path); err != nil {
			t.Fatal(err)
		}
		ines, _ := s.AnnotatorByName(bg, "Ines")
		ims, _ := s.ImagesFor(bg, ines.ID)
		got := map[int64]project.ImageStatus{}
		for _, im := range ims {
			got[im.ID] = im.Status
		}
		wantEmpty := project.StatusDone
		if annotators == 2 {
			wantEmpty = project.StatusNew // nobody knows who checked it
		}
		if got[1] != project.StatusDone || got[empty.ID] != wantEmpty {
			t.Errorf("%d annotators: Ines's statuses after migration %v, want labelled image done and the empty one %s", annotators, got, wantEmpty)
		}
		if annotators == 2 {
			tomas, _ := s.AnnotatorByName(bg, "Tomas")
			if ims, _ := s.ImagesFor(bg, tomas.ID); ims[0].Status != project.StatusNew {
				t.Errorf("Tomas, who labelled nothing, got %s", ims[0].Status)
			}
		}
		s.Close()
	}
}

// Accepting a suggestion gives the reviewer a label, which starts their
// work on the image just as drawing one does (the window showed
// "started" while the file kept "new": the kill test caught it).
func TestAcceptingStartsTheImage(t *testing.T) {
	s := newStore(t)
	im := addImage(t, s, 0)
	rita, _ := s.AddAnnotator(bg, "Rita")
	c, _ := s.AddClass(bg, project.Class{Name: "buoy"})
	ids, err := s.AddSuggestions(bg, []project.Suggestion{
		{ImageID: im.ID, ClassID: c.ID, Box: project.Box{X0: 1, Y0: 1, X1: 9, Y1: 9}, Score: 0.9, Source: "m"},
		{ImageID: im.ID, ClassID: c.ID, Box: project.Box{X0: 20, Y0: 1, X1: 29, Y1: 9}, Score: 0.8, Source: "m"},
	})
	if err != nil {
		t.Fatal(err)
	}
	statusOf := func() project.ImageStatus {
		ims, err := s.ImagesFor(bg, rita.ID)
		if err != nil {
			t.Fatal(err)
		}
		return ims[0].Status
	}
	if _, err := s.Decide(bg, rita.ID, []project.Decision{{SuggestionID: ids[1], Accept: false}}); err != nil {
		t.Fatal(err)
	}
	if got := statusOf(); got != project.StatusNew {
		t.Errorf("after a rejection the image is %s for the reviewer, want new (no label of theirs)", got)
	}
	if _, err := s.Decide(bg, rita.ID, []project.Decision{{SuggestionID: ids[0], Accept: true}}); err != nil {
		t.Fatal(err)
	}
	if got := statusOf(); got != project.StatusStarted {
		t.Errorf("after accepting, the image is %s for the reviewer, want started", got)
	}
}
