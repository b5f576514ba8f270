package gui

import (
	"fmt"
	"testing"

	"fyne.io/fyne/v2"
)

// The zoom shown in the toolbar follows a window resize that refits the
// image (it used to keep the zoom of the old size, 61 % at 51 %).
func TestZoomLabelFollowsWindowResize(t *testing.T) {
	u, _ := openDemoAs(t, "Ines")
	before := u.view.Transform().Scale
	u.win.Resize(fyne.NewSize(900, 600))
	after := u.view.Transform().Scale
	if after == before {
		t.Fatalf("the resize left the fit scale at %v", after)
	}
	if want := fmt.Sprintf("%.0f %%", 100*after); u.zoom.Text != want {
		t.Errorf("after the resize the toolbar shows %q, want %q", u.zoom.Text, want)
	}
}
