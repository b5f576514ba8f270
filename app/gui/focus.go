package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// giveKeysBack returns the keyboard to the image after a click on a
// toolbar check or a list filter, which would otherwise keep it: the
// single keys (N, H, A…) must work whenever no text is being edited.
func (u *ui) giveKeysBack() {
	c := u.win.Canvas()
	if _, editing := c.Focused().(*widget.Entry); editing {
		return
	}
	c.Unfocus() // unfocused, the canvas hands every key to the view
}

// escClosable makes d close on Esc in the main window (the toolkit's
// dialogs ignore it); the window remembers the dialog until it closes.
func (u *ui) escClosable(d dialog.Dialog) {
	u.escDialog = d
	u.win.Canvas().Unfocus() // so that the keys reach typedKeyTop
	d.SetOnClosed(func() {
		if u.escDialog == d {
			u.escDialog = nil
		}
	})
}

// typedKeyTop takes the window's keys first: Esc closes a closable
// dialog, the rest go to the view.
func (u *ui) typedKeyTop(e *fyne.KeyEvent) {
	if u.escDialog != nil && e.Name == fyne.KeyEscape {
		u.escDialog.Hide()
		return
	}
	u.view.TypedKey(e)
}

// typedRuneTop: H closes the keys overlay it opened.
func (u *ui) typedRuneTop(r rune) {
	if u.escDialog != nil && u.escDialog == u.keysDialog && (r == 'h' || r == 'H') {
		u.escDialog.Hide()
		return
	}
	u.view.TypedRune(r)
}

// withClose puts a Close button under a secondary window's content and
// closes the window on Esc when no dialog is open in it; keys the window
// already handled still reach that handler.
func withClose(w fyne.Window, content fyne.CanvasObject) fyne.CanvasObject {
	c := w.Canvas()
	prev := c.OnTypedKey()
	c.SetOnTypedKey(func(e *fyne.KeyEvent) {
		if e.Name == fyne.KeyEscape && c.Overlays().Top() == nil {
			w.Close()
			return
		}
		if prev != nil {
			prev(e)
		}
	})
	closeBtn := widget.NewButtonWithIcon("Close", theme.WindowCloseIcon(), w.Close)
	return container.NewBorder(nil, container.NewHBox(layout.NewSpacer(), closeBtn), nil, nil, content)
}
