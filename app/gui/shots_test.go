package gui

import (
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/theme"
)

// variantTheme is the toolkit's default theme held at one variant, as the
// desktop shows it when the system asks for light or dark.
type variantTheme struct {
	fyne.Theme
	v fyne.ThemeVariant
}

func (t variantTheme) Color(n fyne.ThemeColorName, _ fyne.ThemeVariant) color.Color {
	return t.Theme.Color(n, t.v)
}

// TestShots writes pictures of the report windows for people to look at:
// BOXWRIGHT_SHOTS=DIR names the folder, BOXWRIGHT_SHOTS_DEMO=FILE the
// project (a full demo: boxwright demo DIR --no-open). Skipped otherwise.
func TestShots(t *testing.T) {
	dir, demoPath := os.Getenv("BOXWRIGHT_SHOTS"), os.Getenv("BOXWRIGHT_SHOTS_DEMO")
	if dir == "" || demoPath == "" {
		t.Skip("set BOXWRIGHT_SHOTS and BOXWRIGHT_SHOTS_DEMO to write screenshots")
	}
	for _, v := range []struct {
		name string
		v    fyne.ThemeVariant
	}{{"dark", theme.VariantDark}, {"light", theme.VariantLight}} {
		t.Run(v.name, func(t *testing.T) {
			a := test.NewTempApp(t)
			a.Settings().SetTheme(variantTheme{theme.DefaultTheme(), v.v})
			u := newUI(a)
			u.annotatorFlag = "Ines"
			u.win.Resize(fyne.NewSize(1200, 800))
			decoded := make(chan error, 10)
			u.decoded = func(_ int64, err error) { decoded <- err }
			// A copy, so that the decisions below do not pile up.
			work := t.TempDir()
			if err := os.CopyFS(work, os.DirFS(filepath.Dir(demoPath))); err != nil {
				t.Fatal(err)
			}
			if err := u.openProject(filepath.Join(work, filepath.Base(demoPath))); err != nil {
				t.Fatal(err)
			}
			defer u.closeProject()
			waitDecoded(t, decoded)
			shot := func(w fyne.Window, name string) {
				t.Helper()
				time.Sleep(100 * time.Millisecond)
				refreshAll(w.Content())
				f, err := os.Create(filepath.Join(dir, "charts-"+name+"-"+v.name+".png"))
				if err != nil {
					t.Fatal(err)
				}
				defer f.Close()
				if err := png.Encode(f, w.Canvas().Capture()); err != nil {
					t.Fatal(err)
				}
			}

			u.showAgreement()
			s := u.agree
			done := make(chan error, 1)
			s.done = func(err error) { done <- err }
			s.compute()
			if err := <-done; err != nil {
				t.Fatal(err)
			}
			tabs := findTabs(s.win.Content())
			for i, name := range []string{"agree-summary", "agree-images", "agree-classes", "agree-pairs"} {
				tabs.SelectIndex(i)
				shot(s.win, name)
			}

			e := newEvalScreen(u)
			e.truth.SetSelected("Ines")
			edone := make(chan error, 1)
			e.done = func(err error) { edone <- err }
			e.compute()
			if err := <-edone; err != nil {
				t.Fatal(err)
			}
			etabs := findTabs(e.win.Content())
			shot(e.win, "eval-charts")
			etabs.SelectIndex(1)
			shot(e.win, "eval-classes")
			e.cellRow.SetSelectedIndex(0)
			e.cellCol.SetSelectedIndex(0)
			etabs.SelectIndex(2)
			shot(e.win, "eval-boxes")

			sw := u.newStatsWindow()
			sw.win.Show()
			shot(sw.win, "stats-none")
			decideSome(t, u, 60, 15)
			sw = u.newStatsWindow()
			sw.win.Show()
			shot(sw.win, "stats")
		})
	}
}

func findTabs(o fyne.CanvasObject) *container.AppTabs {
	for _, x := range test.LaidOutObjects(o) {
		if tabs, ok := x.(*container.AppTabs); ok {
			return tabs
		}
	}
	return nil
}

// refreshAll refreshes every widget, so that tables draw their visible
// cells (the test driver does not run a frame by itself).
func refreshAll(o fyne.CanvasObject) {
	for _, x := range test.LaidOutObjects(o) {
		x.Refresh()
	}
}
