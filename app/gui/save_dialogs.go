package gui

import (
	"fmt"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"gonum.org/v1/plot"

	"boxwright/app/ops"
)

// askSavePlot asks where to save a chart and writes it as a PNG at twice
// the on-screen size.
func askSavePlot(win fyne.Window, p *plot.Plot, name, nothingYet string) {
	if p == nil {
		dialog.ShowInformation("Nothing to save", nothingYet, win)
		return
	}
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil || w == nil {
			return
		}
		path := w.URI().Path()
		w.Close()
		if err := ops.SavePlotPNG(p, chartW*2, chartH*2, path); err != nil {
			dialog.ShowError(fmt.Errorf("saving the chart to %s: %w", path, err), win)
		}
	}, win)
	d.SetFileName(name)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".png"}))
	d.Show()
}

// askSaveCSV asks where to save a table and writes it as CSV in the order
// it is shown.
func askSaveCSV(win fyne.Window, t *sortTable, name string) {
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil || w == nil {
			return
		}
		defer w.Close()
		if err := t.WriteCSV(w); err != nil {
			dialog.ShowError(fmt.Errorf("saving the table: %w", err), win)
		}
	}, win)
	d.SetFileName(name)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".csv"}))
	d.Show()
}
