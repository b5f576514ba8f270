package gui

import (
	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

// Keys of the main window; documented in keysHelp and the README.
func (u *ui) addShortcuts() {
	c := u.win.Canvas()
	ctrl := fyne.KeyModifierShortcutDefault
	add := func(k fyne.KeyName, m fyne.KeyModifier, f func()) {
		c.AddShortcut(&desktop.CustomShortcut{KeyName: k, Modifier: m}, func(fyne.Shortcut) { f() })
	}
	add(fyne.KeyO, ctrl, u.askOpen)
	add(fyne.KeyN, ctrl, u.askNew)
	add(fyne.KeyI, ctrl, u.askAddFolder)
	add(fyne.KeyL, ctrl, u.askImport)
	add(fyne.KeyE, ctrl, u.askExport)
	add(fyne.KeyG, ctrl, u.showAgreement)
	add(fyne.KeyR, ctrl, u.showReviewQueue)
	add(fyne.KeyF, ctrl, u.askFindSimilar)
	add(fyne.KeyJ, ctrl, u.showCropGrid)
	add(fyne.KeyT, ctrl, u.showTraining)
	c.AddShortcut(&fyne.ShortcutUndo{}, func(fyne.Shortcut) { u.undo() })
	c.AddShortcut(&fyne.ShortcutRedo{}, func(fyne.Shortcut) { u.redo() })
	add(fyne.KeyZ, ctrl|fyne.KeyModifierShift, u.redo)
	add(fyne.KeyDelete, ctrl, u.deleteAll)
	add(fyne.KeyB, ctrl|fyne.KeyModifierShift, func() { u.togglePanel(true) })
	add(fyne.KeyK, ctrl|fyne.KeyModifierShift, func() { u.togglePanel(false) })
	// Ctrl+arrows resize the selected box by its bottom-right corner.
	for _, k := range []struct {
		name   fyne.KeyName
		dx, dy float64
	}{{fyne.KeyLeft, -1, 0}, {fyne.KeyRight, 1, 0}, {fyne.KeyUp, 0, -1}, {fyne.KeyDown, 0, 1}} {
		add(k.name, ctrl, func() { u.view.Grow(k.dx, k.dy) })
		add(k.name, ctrl|fyne.KeyModifierShift, func() { u.view.Grow(10*k.dx, 10*k.dy) })
	}
	for i, k := range []fyne.KeyName{fyne.Key1, fyne.Key2, fyne.Key3, fyne.Key4, fyne.Key5, fyne.Key6, fyne.Key7, fyne.Key8, fyne.Key9, fyne.Key0} {
		digit := rune('1' + i)
		if k == fyne.Key0 {
			digit = '0'
		}
		add(k, ctrl, func() {
			if c, ok := u.classByKey(digit); ok {
				u.classAll(c.ID)
			}
		})
	}
	// With nothing focused the view gets the keys: it handles its own and
	// hands the rest back to typedKey and typedRune.
	c.SetOnTypedKey(u.typedKeyTop)
	c.SetOnTypedRune(u.typedRuneTop)
}

// typedKey handles the keys the view leaves to the window.
func (u *ui) typedKey(e *fyne.KeyEvent) {
	switch e.Name {
	case fyne.KeyPageDown:
		u.step(1)
	case fyne.KeyPageUp:
		u.step(-1)
	case fyne.KeyHome:
		u.selectIndex(0)
	case fyne.KeyEnd:
		u.selectIndex(len(u.images) - 1)
	case fyne.KeyDelete, fyne.KeyBackspace:
		u.deleteSelected()
	case fyne.KeyReturn, fyne.KeyEnter:
		u.markAndGo(project.StatusDone)
	case fyne.KeyF1:
		u.showKeys()
	}
}

// typedRune handles letters and digits the view leaves to the window.
func (u *ui) typedRune(r rune) {
	switch {
	case r >= '0' && r <= '9':
		if c, ok := u.classByKey(r); ok {
			u.pickClass(c.ID)
		}
	case r == 'n':
		u.step(1)
	case r == 'b':
		u.step(-1)
	case r == 'u':
		u.nextUnfinished()
	case r == 'x':
		u.markAndGo(project.StatusSkipped)
	case r == 'd':
		u.duplicate()
	case r == 'o':
		u.others.SetChecked(!u.others.Checked)
	case r == 'g':
		u.view.TypedRune('g')
	case r == 'h' || r == '?':
		u.showKeys()
	case r == 'a':
		u.acceptSuggestion()
	case r == 'z':
		u.rejectSuggestion()
	case r == 'A':
		u.acceptAllAbove()
	}
}

func (u *ui) classByKey(r rune) (project.Class, bool) {
	for _, c := range u.classes {
		if c.HotKey == string(r) {
			return c, true
		}
	}
	return project.Class{}, false
}

func (u *ui) showKeys() {
	t := widget.NewTextGridFromString(keysHelp)
	d := dialog.NewCustom("Keys and mouse", "Close (Esc or H)", container.NewVScroll(t), u.win)
	d.Resize(fyne.NewSize(min(720, dialogSize(u.win).Width), min(620, dialogSize(u.win).Height)))
	u.keysDialog = d
	u.escClosable(d)
	d.Show()
}

const keysHelp = `DRAWING AND EDITING (click the image first)
  drag on empty image       draw a box of the current class
  click a box               select it (the smallest box under the pointer;
                            a suggestion lying over your box of about its size)
  point at a box            show its whole tag (small boxes show a short tag or none)
  drag inside a box         move it          drag a white handle   resize it
  arrows                    nudge 1 px       Shift+arrows          nudge 10 px
  Ctrl+arrows               resize by the bottom-right corner (Shift: 10 px)
  1 … 9, 0                  current class; a selected box takes it
  Ctrl+1 … Ctrl+0           give every one of my boxes on this image that class
  D                         duplicate the selected box
  Delete or Backspace       delete the selected box
  Ctrl+Delete               delete all my boxes on this image
  Tab / Shift+Tab           select the next / previous box
  C                         cycle through the boxes under the pointer
  Esc                       cancel a drag, or clear the selection
  Ctrl+Z                    undo      Ctrl+Shift+Z or Ctrl+Y   redo

SUGGESTIONS (a model's boxes: dotted, tinted, "suggested … score")
  click a suggestion        select it; drag it or press a number key to correct it
  A                         accept it (as corrected when you changed it)
  Z, Delete                 reject it
  Shift+A                   accept every suggestion on this image above the threshold
  Ctrl+Z                    undoes a decision like any edit
  Ctrl+F                    find objects like the selected box (by correlation)
  Ctrl+R                    review one by one (A accept, Z reject, S skip, U undo)
  Ctrl+J                    review a grid of crops of one class
  Ctrl+T                    train a detector on this project (a window of its own)

VIEW
  wheel                     zoom around the pointer (5 % … 3200 %)
  + / -                     zoom in / out        F  fit      R  actual pixels
  right-button drag, or Space held with a left drag   pan
  arrows with nothing selected   pan
  G                         guide lines through the pointer
  T                         show or hide the class-name tags (crowded images)
  O                         show or hide other annotators' boxes (dashed)

IMAGES
  N or Page Down            next image     B or Page Up   previous image
  U                         next unfinished image
  Enter                     mark done and go to the next unfinished image
  X                         skip this image and go on
  Home / End                first / last image

PROJECT
  Ctrl+O open   Ctrl+N new   Ctrl+I add images   Ctrl+L import labels
  Ctrl+E export dataset   Ctrl+G annotator agreement   H, ? or F1   this help
  Ctrl+Shift+B / Ctrl+Shift+K   hide or show the image list / the class panel
  (the dividers between the panels can be dragged; Esc or H closes this help)

Every edit is saved at once; the status bar says "saved".`
