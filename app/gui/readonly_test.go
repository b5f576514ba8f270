package gui

import (
	"bytes"
	"os"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/internal/testkit"
	"boxwright/project"
)

// A damaged project opens for looking, with a banner saying why and
// editing off; nothing is written to the file.
func TestDamagedProjectOpensForLookingOnly(t *testing.T) {
	path := testkit.SmallDemo(t)
	// Spoil one page of an index, as a failing disk would.
	before := testkit.DamagePage(t, path, "suggestions_by_label", 0)

	u, decoded, err := openWindow(t, path, "Ines")
	if err != nil {
		t.Fatalf("a damaged project should open for looking: %v", err)
	}
	waitDecoded(t, decoded)
	if u.banner == nil {
		t.Fatal("no banner says the project is open for looking only")
	}
	msg := u.banner.Objects[1].(*widget.Label).Text
	if !strings.Contains(msg, "damaged") || !strings.Contains(msg, "boxwright recover") {
		t.Errorf("banner %q should say the file is damaged and how to recover", msg)
	}
	if n := u.nav.list.Length(); n != 3 {
		t.Errorf("image list has %d rows, want 3", n)
	}
	u.view.OnCreate(project.Box{X0: 10, Y0: 10, X1: 60, Y1: 60})
	if !strings.Contains(u.status.Text, "Editing is off") {
		t.Errorf("status after drawing: %q, want that editing is off", u.status.Text)
	}
	u.closeProject()
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Error("the damaged file changed")
	}
}

// A damaged page under the labels still lets the window open for looking
// (it refused with "count labels: … malformed" before); the summary says
// the counts are missing instead of showing 0 labels.
func TestDamagedLabelPageStillOpensForLooking(t *testing.T) {
	path := testkit.SmallDemo(t)
	testkit.DamagePage(t, path, "labels", 0)
	u, decoded, err := openWindow(t, path, "Ines")
	if err != nil {
		t.Fatalf("a project with a damaged label page should open for looking: %v", err)
	}
	defer u.closeProject()
	waitDecoded(t, decoded)
	if u.banner == nil || !strings.Contains(u.banner.Objects[1].(*widget.Label).Text, "not shown") {
		t.Errorf("the banner should say some counts are not shown")
	}
	if !strings.Contains(u.summary.Text, "not counted") {
		t.Errorf("summary %q should say the labels are not counted", u.summary.Text)
	}
}

// The window shows the current annotator's own statuses: Ines marking an
// image skipped does not skip it for Tomas.
func TestStatusesAreTheAnnotatorsOwn(t *testing.T) {
	path := testkit.SmallDemo(t)
	u, decoded, err := openWindow(t, path, "Ines")
	if err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	waitDecoded(t, decoded)
	u.selectIndex(2)
	waitDecoded(t, decoded)
	if !u.setStatus(project.StatusSkipped) {
		t.Fatal("marking skipped failed")
	}
	if got := u.images[2].Status; got != project.StatusSkipped {
		t.Fatalf("Ines sees %s", got)
	}
	if err := u.setAnnotator("Tomas"); err != nil {
		t.Fatal(err)
	}
	if got := u.images[2].Status; got == project.StatusSkipped {
		t.Errorf("Tomas sees Ines's skip")
	}
	if !strings.Contains(u.summary.Text, "Tomas:") {
		t.Errorf("summary %q should say whose statuses it counts", u.summary.Text)
	}
}

// openWindow opens the project in a test window, labelling as annotator,
// and hands back the channel that hears of each image decoded.
func openWindow(t *testing.T, path, annotator string) (*ui, chan error, error) {
	t.Helper()
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = annotator
	decoded := make(chan error, 10)
	u.decoded = func(_ int64, err error) { decoded <- err }
	u.win.Resize(fyne.NewSize(1000, 700))
	return u, decoded, u.openProject(path)
}
