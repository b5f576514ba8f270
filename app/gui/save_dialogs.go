package gui

import (
	"fmt"
	"io"
	"os"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"gonum.org/v1/plot"

	"boxwright/app/ops"
	"boxwright/project/formats"
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
		where, err := saveChosen(w, func(out io.Writer) error { return ops.WritePlotPNG(p, chartW*2, chartH*2, out) })
		if err != nil {
			dialog.ShowError(fmt.Errorf("saving the chart to %s: %w", where, err), win)
		}
	}, win)
	d.SetFileName(name)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".png"}))
	prepareFileDialog(d, win, "Save the chart as PNG", "Save")
	d.Show()
}

// askSaveCSV asks where to save a table and writes it as CSV in the order
// it is shown.
func askSaveCSV(win fyne.Window, t *sortTable, name string) {
	d := dialog.NewFileSave(func(w fyne.URIWriteCloser, err error) {
		if err != nil || w == nil {
			return
		}
		where, err := saveChosen(w, t.WriteCSV)
		if err != nil {
			dialog.ShowError(fmt.Errorf("saving the table to %s: %w", where, err), win)
		}
	}, win)
	d.SetFileName(name)
	d.SetFilter(storage.NewExtensionFileFilter([]string{".csv"}))
	prepareFileDialog(d, win, "Save the table as CSV", "Save")
	d.Show()
}

// saveChosen writes fill's output to the file a save dialog chose, by way
// of a temporary file renamed over it when complete, and says where. The
// dialog has already created (or emptied) the file by the time it hands
// over w; if the write fails, that empty file is removed, so that nothing
// looking saved is left. Locations that are not local files are written
// through w itself.
func saveChosen(w fyne.URIWriteCloser, fill func(io.Writer) error) (string, error) {
	u := w.URI()
	if u.Scheme() != "file" {
		err := fill(w)
		if cerr := w.Close(); err == nil {
			err = cerr
		}
		return u.String(), err
	}
	path := u.Path()
	w.Close()
	err := formats.WriteFileAtomic(path, fill)
	if err != nil {
		if st, serr := os.Lstat(path); serr == nil && st.Mode().IsRegular() && st.Size() == 0 {
			os.Remove(path)
		}
	}
	return path, err
}
