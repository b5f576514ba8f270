package gui

import (
	"bytes"
	"encoding/csv"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/app/internal/testkit"
	"boxwright/project"
)

// The report window computes in the background, fills its tables and
// charts, and opens a disputed image in the main window read-only, with
// each annotator's boxes in its own style and the unmatched ones marked.
func TestAgreementScreenReportsAndOpensImages(t *testing.T) {
	path := testkit.SmallDemo(t)
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = "Ines"
	u.win.Resize(fyne.NewSize(1200, 800))
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	waitDecoded(t, decoded)

	u.showAgreement()
	s := u.agree
	if s == nil || len(s.who.Selected) != 2 {
		t.Fatalf("the report should open with the first two annotators ticked")
	}
	computeAndWait(t, "the comparison did not finish", &s.done, s.compute)
	for _, want := range []string{"Ines vs Tomas", "Cohen's kappa", "Landis & Koch 1977", "Detection F1"} {
		if !strings.Contains(s.headline.Text, want) {
			t.Errorf("headline lacks %q: %s", want, s.headline.Text)
		}
	}
	if s.conf.Plot() == nil || s.hist.Plot() == nil {
		t.Errorf("charts missing")
	}
	var buf bytes.Buffer
	if err := s.images.WriteCSV(&buf); err != nil {
		t.Fatal(err)
	}
	rows, _ := csv.NewReader(&buf).ReadAll()
	p := s.rep.Pairs[0]
	if len(rows) != len(p.PerImage)+1 || rows[0][0] != "image" {
		t.Fatalf("images table: %d rows for %d images", len(rows), len(p.PerImage))
	}

	// Open the worst image.
	worst := p.PerImage[0]
	s.openImage(0)
	waitDecodedOrShown(t, decoded, u, worst.ImageID)
	if u.compare == nil || u.imageID != worst.ImageID || u.compareBar.Hidden {
		t.Fatalf("comparison not shown: compare %v image %d want %d", u.compare != nil, u.imageID, worst.ImageID)
	}
	items := u.view.Items()
	marked, dashes := 0, map[int]bool{}
	for _, it := range items {
		if !it.ReadOnly {
			t.Errorf("a box is editable in the comparison: %+v", it)
		}
		if it.Marked {
			marked++
		}
		dashes[it.Dash] = true
	}
	if len(items) != worst.A+worst.B || len(dashes) != 2 {
		t.Errorf("%d boxes in %d styles, want %d in 2", len(items), len(dashes), worst.A+worst.B)
	}
	if marked < worst.OnlyA+worst.OnlyB {
		t.Errorf("%d boxes marked, want at least the %d unmatched", marked, worst.OnlyA+worst.OnlyB)
	}
	// Drawing is refused while comparing; back to labelling restores it.
	before := len(items)
	u.createBox(project.Rect(5, 5, 50, 50))
	if len(u.view.Items()) != before {
		t.Errorf("a box was drawn on the comparison")
	}
	u.stopComparing()
	if u.compare != nil || !u.compareBar.Hidden {
		t.Errorf("still comparing")
	}
	if editable(u.view.Items()) == 0 {
		t.Errorf("Ines's boxes are not editable again")
	}
}

func waitDecodedOrShown(t *testing.T, ch <-chan error, u *ui, id int64) {
	t.Helper()
	// The channel may still hold the decode of an image shown before
	// (a stale event let the test count the boxes of no image): wait for
	// this image itself to be on screen.
	deadline := time.After(10 * time.Second)
	for u.imageID != id || u.view.Image() == nil {
		select {
		case err := <-ch:
			if err != nil {
				t.Fatalf("decoding the image for display: %v", err)
			}
		case <-deadline:
			t.Fatalf("image %d was not shown within 10 s", id)
		case <-time.After(10 * time.Millisecond):
		}
	}
}
