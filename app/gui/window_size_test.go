package gui

import (
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
)

// The window fits a 1,024 × 700 laptop screen, and hiding the side
// panels gives their room to the image (the toolbar used to hold the
// window at 1,120 px or more).
func TestWindowFitsASmallScreen(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	if w := u.win.Content().MinSize().Width; w > 1024 {
		t.Fatalf("the window needs %.0f px at least", w)
	}
	u.win.Resize(fyne.NewSize(1024, 700))
	before := u.view.Size().Width
	u.togglePanel(true)
	u.togglePanel(false)
	u.win.Resize(fyne.NewSize(1024, 701)) // lay out again
	if after := u.view.Size().Width; after < before+200 {
		t.Errorf("the image is %.0f px wide with both panels hidden, %.0f with them", after, before)
	}
	if contains(u.panels, u.leftPanel) || contains(u.panels, u.bar.Object()) {
		t.Error("a side panel is still shown")
	}
	u.togglePanel(true)
	if !contains(u.panels, u.leftPanel) || contains(u.panels, u.bar.Object()) {
		t.Error("the image list did not come back alone")
	}
}

// contains says whether o is in the tree under c.
func contains(c fyne.CanvasObject, o fyne.CanvasObject) bool {
	if c == o {
		return true
	}
	switch x := c.(type) {
	case *fyne.Container:
		for _, k := range x.Objects {
			if contains(k, o) {
				return true
			}
		}
	case *container.Split:
		return contains(x.Leading, o) || contains(x.Trailing, o)
	}
	return false
}
