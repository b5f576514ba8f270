package gui

import (
	"context"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"
)

// runJob runs work in the background behind a progress dialog with a
// Cancel button; done runs on the Fyne goroutine when work succeeded.
func (u *ui) runJob(title string, work func(ctx context.Context, progress func(float64)) error, done func()) {
	ctx, cancel := context.WithCancel(context.Background())
	// A moving bar until the job reports how far it is.
	bar := widget.NewProgressBar()
	busy := widget.NewProgressBarInfinite()
	bar.Hide()
	d := dialog.NewCustom(title, "Cancel", container.NewVBox(widget.NewLabel(title+"…"), container.NewStack(busy, bar)), u.win)
	// Closing the dialog (Cancel) cancels the job, but not once it has
	// finished: Fyne chains closing callbacks, so this one decides.
	finished := false
	d.SetOnClosed(func() {
		if !finished {
			cancel()
		}
	})
	d.Show()
	go func() {
		err := work(ctx, func(f float64) {
			fyne.Do(func() {
				if !busy.Hidden {
					busy.Stop()
					busy.Hide()
					bar.Show()
				}
				bar.SetValue(f)
			})
		})
		fyne.Do(busy.Stop)
		fyne.Do(func() {
			cancelled := ctx.Err() != nil
			finished = true
			d.Hide()
			cancel()
			switch {
			case err != nil && !cancelled:
				u.showError(err)
			case cancelled:
				if err := u.reload(); err == nil && u.st != nil {
					dialog.ShowInformation(title, "Cancelled. Everything finished before the cancel is kept.", u.win)
				}
			default:
				done()
			}
		})
	}()
}
