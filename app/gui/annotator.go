package gui

import (
	"context"
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/ops"
	"boxwright/project"
)

// annotatorPref is the preference that remembers who labels on this
// computer.
const annotatorPref = "annotator"

// chooseAnnotator sets who labels: the command line's name, the
// remembered one, or (when neither) asks.
func (u *ui) chooseAnnotator() {
	name := u.annotatorFlag
	u.annotatorFromFlag = name != ""
	if name == "" {
		name = u.app.Preferences().String(annotatorPref)
	}
	if name != "" {
		err := u.setAnnotator(name)
		u.annotatorFromFlag = false // a later change in the window is remembered
		if err == nil {
			return
		} else {
			u.showError(err)
		}
	}
	u.askAnnotator()
}

// setAnnotator makes name the person labelling (creating the annotator
// when new) and remembers it.
func (u *ui) setAnnotator(name string) error {
	if u.st == nil {
		return nil
	}
	name = strings.TrimSpace(name)
	if err := project.ValidateName("annotator", name); err != nil {
		return err
	}
	if u.sess != nil {
		if err := u.sess.Flush(context.Background()); err != nil {
			return fmt.Errorf("cannot change annotator while edits are unsaved: %w", err)
		}
	}
	a, err := u.st.EnsureAnnotator(context.Background(), name)
	if err != nil && u.readOnlyWhy != "" {
		// Looking only: a name new to the project cannot be stored, and
		// is not needed, since nothing is written.
		a, err = project.Annotator{Name: name}, nil
	}
	if err != nil {
		return err
	}
	u.me, u.sess = a, ops.NewSession(u.st, a)
	// Remember a name the person chose in the window, not one given on the
	// command line for a single run, and write only what changed: the
	// toolkit's watcher of the preferences file can catch a first write
	// half-done and complain.
	if !u.annotatorFromFlag && u.app.Preferences().String(annotatorPref) != name {
		u.app.Preferences().SetString(annotatorPref, name)
	}
	if as, err := u.st.Annotators(context.Background()); err == nil {
		u.annotators = as
	}
	// Image statuses are each annotator's own: show this person's.
	if err := u.reload(); err != nil {
		return err
	}
	if u.selected >= 0 && u.selected < len(u.images) {
		u.nav.refreshImage(u.images[u.selected].ID)
	}
	u.updateTitle()
	u.updateUndo()
	u.loadOthers()
	u.refreshBoxes()
	return nil
}

func (u *ui) askAnnotator() { u.askAnnotatorThen(nil) }

// askAnnotatorThen asks who is labelling and runs then (if not nil) once
// a name is set, so a box drawn before the answer is not lost.
func (u *ui) askAnnotatorThen(then func()) {
	if u.st == nil {
		return
	}
	names := u.annotatorNames()
	entry := widget.NewSelectEntry(names)
	entry.SetPlaceHolder("your name, e.g. Ines")
	entry.SetText(u.me.Name)
	hint := widget.NewLabel("Every box you draw records this name, so agreement between annotators can be measured. Pick yours or type a new one.")
	hint.Wrapping = fyne.TextWrapWord
	d := dialog.NewForm("Who is labelling?", "Start", "Later", []*widget.FormItem{
		widget.NewFormItem("", hint), widget.NewFormItem("Annotator", entry)}, func(ok bool) {
		if !ok {
			return
		}
		if err := u.setAnnotator(entry.Text); err != nil {
			u.showError(err)
			return
		}
		if then != nil {
			then()
		}
	}, u.win)
	d.Resize(fyne.NewSize(460, 260))
	d.Show()
}

// needAnnotator says whether edits can be made, asking for a name first
// when nobody is labelling yet.
func (u *ui) needAnnotator() bool {
	if u.comparing() {
		return false
	}
	if u.sess == nil {
		u.askAnnotator()
		return false
	}
	return true
}

// annotatorNames are the project's annotators' names, in name order.
func (u *ui) annotatorNames() []string {
	names := make([]string, 0, len(u.annotators))
	for _, a := range u.annotators {
		names = append(names, a.Name)
	}
	return names
}
