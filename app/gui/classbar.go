package gui

import (
	"context"
	"errors"
	"fmt"
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
)

// classBarMinWidth keeps names and counts readable beside a wide image.
const classBarMinWidth = 220

// classBar is the panel of classes beside the image.
type classBar struct {
	win     fyne.Window
	store   func() backend.Project
	changed func()
	picked  func(classID int64)

	classes   []project.Class
	onImage   map[int64]int
	inProject map[int64]int
	current   int64

	rows    []*classRow
	list    *fyne.Container
	empty   *widget.Label
	buttons []*widget.Button // acting on the current class
	addBtn  *widget.Button
	// lockedWhy, when set, says why this person may not change classes
	// (their role in a server project); the tools are off and it is shown.
	lockedWhy string
	locked    *widget.Label
	obj       fyne.CanvasObject
}

// newClassBar makes the panel. store returns the open project's store (nil
// when none is open). changed is called after any class was added, renamed,
// recoloured, merged or deleted (the window reloads its data). picked is
// called when the person clicks a class row (it becomes the class for new
// boxes / is given to the selected box).
func newClassBar(win fyne.Window, store func() backend.Project, changed func(), picked func(classID int64)) *classBar {
	b := &classBar{win: win, store: store, changed: changed, picked: picked}
	b.list = container.NewVBox()
	b.empty = widget.NewLabel("No classes yet. Add one to start drawing boxes.")
	b.empty.Wrapping = fyne.TextWrapWord
	b.list.Add(b.empty)

	add := widget.NewButtonWithIcon("Add…", theme.ContentAddIcon(), b.showAdd)
	rename := widget.NewButtonWithIcon("Rename…", theme.DocumentCreateIcon(), b.showRename)
	colour := widget.NewButtonWithIcon("Colour…", theme.ColorPaletteIcon(), b.showColour)
	merge := widget.NewButtonWithIcon("Merge…", theme.MoveDownIcon(), b.showMerge)
	del := widget.NewButtonWithIcon("Delete…", theme.DeleteIcon(), b.showDelete)
	b.buttons = []*widget.Button{rename, colour, merge, del}
	b.addBtn = add
	for _, bt := range b.buttons {
		bt.Disable()
	}
	b.locked = widget.NewLabel("")
	b.locked.Wrapping = fyne.TextWrapWord
	b.locked.Importance = widget.LowImportance
	b.locked.Hide()

	title := widget.NewLabelWithStyle("Classes", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	tools := container.NewVBox(b.locked, container.NewGridWithColumns(2, add, rename, colour, merge, del))
	width := canvas.NewRectangle(color.Transparent)
	width.SetMinSize(fyne.NewSize(classBarMinWidth, 0))
	b.obj = container.NewStack(width, container.NewBorder(title, tools, nil, nil, container.NewVScroll(b.list)))
	return b
}

// updateTools turns the class tools on or off: those acting on the
// current class need one, and all are off (with the reason shown) for a
// person whose role may not change classes.
func (b *classBar) updateTools() {
	for _, bt := range b.buttons {
		if _, ok := b.currentClass(); ok && b.lockedWhy == "" {
			bt.Enable()
		} else {
			bt.Disable()
		}
	}
	if b.lockedWhy != "" {
		b.addBtn.Disable()
		b.locked.SetText(b.lockedWhy)
		b.locked.Show()
	} else {
		b.addBtn.Enable()
		b.locked.Hide()
	}
}

// Object is the panel to put in the window.
func (b *classBar) Object() fyne.CanvasObject { return b.obj }

// SetData shows classes (in the given order) with their count on the
// image on screen and in the whole project (by class ID; missing = 0),
// and marks current as the class for new boxes.
func (b *classBar) SetData(classes []project.Class, mine, onImage, inProject map[int64]int, current int64, who string) {
	same := len(classes) == len(b.rows) && len(classes) > 0
	for i := 0; same && i < len(classes); i++ {
		same = b.rows[i].class == classes[i]
	}
	b.classes = append([]project.Class(nil), classes...)
	b.onImage, b.inProject, b.current = onImage, inProject, current
	if same {
		// The usual case after an edit: only counts or the current class
		// changed, so update the rows in place (rebuilding them costs
		// text shaping on every nudge).
		for _, r := range b.rows {
			r.update(countsText(mine[r.class.ID], onImage[r.class.ID], inProject[r.class.ID], who), r.class.ID == current)
		}
		b.updateTools()
		return
	}
	b.rows = b.rows[:0]
	b.list.RemoveAll()
	if len(classes) == 0 {
		b.list.Add(b.empty)
	}
	for _, c := range b.classes {
		r := newClassRow(c, countsText(mine[c.ID], onImage[c.ID], inProject[c.ID], who), c.ID == current, b.picked)
		b.rows = append(b.rows, r)
		b.list.Add(r)
	}
	b.updateTools()
	b.list.Refresh()
}

// currentClass is the class the buttons act on: the current one, or the
// first when the current one is not among those shown.
func (b *classBar) currentClass() (project.Class, bool) {
	for _, c := range b.classes {
		if c.ID == b.current {
			return c, true
		}
	}
	if len(b.classes) > 0 {
		return b.classes[0], true
	}
	return project.Class{}, false
}

func (b *classBar) open() (backend.Project, error) {
	var st backend.Project
	if b.store != nil {
		st = b.store()
	}
	if st == nil {
		return nil, errors.New("no project is open")
	}
	return st, nil
}

func (b *classBar) done() {
	if b.changed != nil {
		b.changed()
	}
}

// add stores a new class; the store gives it a palette colour and a free key.
func (b *classBar) add(name string) error {
	if err := project.ValidateName("class", name); err != nil {
		return project.Explained(project.ErrInvalid, "%v", err)
	}
	st, err := b.open()
	if err != nil {
		return err
	}
	if _, err := st.AddClass(context.Background(), project.Class{Name: name}); err != nil {
		return err
	}
	b.done()
	return nil
}

func (b *classBar) rename(id int64, name string) error {
	if err := project.ValidateName("class", name); err != nil {
		return project.Explained(project.ErrInvalid, "%v", err)
	}
	st, err := b.open()
	if err != nil {
		return err
	}
	ctx := context.Background()
	c, err := st.Class(ctx, id)
	if err != nil {
		return err
	}
	if c.Name == name {
		return nil
	}
	c.Name = name
	if err := st.UpdateClass(ctx, c); err != nil {
		return err
	}
	b.done()
	return nil
}

func (b *classBar) recolour(id int64, col color.NRGBA) error {
	st, err := b.open()
	if err != nil {
		return err
	}
	ctx := context.Background()
	c, err := st.Class(ctx, id)
	if err != nil {
		return err
	}
	col.A = 0xff // boxes are drawn opaque; the store keeps #rrggbb only
	c.Color = col
	if err := st.UpdateClass(ctx, c); err != nil {
		return err
	}
	b.done()
	return nil
}

// merge moves every label and suggestion of fromID into intoID and removes fromID.
func (b *classBar) merge(fromID, intoID int64) error {
	if fromID == intoID {
		return project.Explained(project.ErrInvalid, "a class cannot be merged into itself")
	}
	st, err := b.open()
	if err != nil {
		return err
	}
	ctx := context.Background()
	from, err := st.Class(ctx, fromID)
	if err != nil {
		return err
	}
	into, err := st.Class(ctx, intoID)
	if err != nil {
		return err
	}
	if err := st.MergeClass(ctx, from.Name, into.Name); err != nil {
		return err
	}
	b.done()
	return nil
}

func (b *classBar) remove(id int64, opts project.DeleteClassOptions) error {
	st, err := b.open()
	if err != nil {
		return err
	}
	if err := st.DeleteClass(context.Background(), id, opts); err != nil {
		return err
	}
	b.done()
	return nil
}

// fail tells the person what went wrong, in words they can act on.
func (b *classBar) fail(what string, err error) {
	if errors.Is(err, project.ErrDuplicate) {
		err = fmt.Errorf("%s: a class with that name already exists; choose another name: %w", what, err)
	} else {
		err = fmt.Errorf("%s: %w", what, err)
	}
	dialog.ShowError(err, b.win)
}

// nameDialog asks for a class name; the confirm button stays off while the
// name would be refused.
func (b *classBar) nameDialog(title, confirm, initial string, ok func(name string)) {
	e := widget.NewEntry()
	e.SetText(initial)
	e.Validator = func(s string) error { return project.ValidateName("class", s) }
	d := dialog.NewForm(title, confirm, "Cancel", []*widget.FormItem{widget.NewFormItem("Name", e)}, func(yes bool) {
		if yes {
			ok(e.Text)
		}
	}, b.win)
	e.OnSubmitted = func(string) { d.Submit() }
	d.Resize(fyne.NewSize(360, d.MinSize().Height))
	d.Show()
	b.win.Canvas().Focus(e)
}

func (b *classBar) showAdd() {
	b.nameDialog("Add class", "Add", "", func(name string) {
		if err := b.add(name); err != nil {
			b.fail(fmt.Sprintf("Could not add class %q", name), err)
		}
	})
}

func (b *classBar) showRename() {
	c, ok := b.currentClass()
	if !ok {
		return
	}
	b.nameDialog(fmt.Sprintf("Rename class %q", c.Name), "Rename", c.Name, func(name string) {
		if err := b.rename(c.ID, name); err != nil {
			b.fail(fmt.Sprintf("Could not rename class %q to %q", c.Name, name), err)
		}
	})
}

// paletteNames lets the colour buttons say their colour in words, not only show it.
var paletteNames = map[color.NRGBA]string{
	{0xE6, 0x9F, 0x00, 0xFF}: "orange",
	{0x56, 0xB4, 0xE9, 0xFF}: "sky blue",
	{0x00, 0x9E, 0x73, 0xFF}: "bluish green",
	{0xF0, 0xE4, 0x42, 0xFF}: "yellow",
	{0x00, 0x72, 0xB2, 0xFF}: "blue",
	{0xD5, 0x5E, 0x00, 0xFF}: "vermilion",
	{0xCC, 0x79, 0xA7, 0xFF}: "reddish purple",
	{0xDD, 0xDD, 0xDD, 0xFF}: "light grey",
}

func colourName(c color.NRGBA) string {
	if n, ok := paletteNames[c]; ok {
		return n
	}
	return project.FormatColor(c)
}

func (b *classBar) showColour() {
	c, ok := b.currentClass()
	if !ok {
		return
	}
	var d dialog.Dialog
	set := func(col color.NRGBA) {
		if d != nil {
			d.Hide()
		}
		if err := b.recolour(c.ID, col); err != nil {
			b.fail(fmt.Sprintf("Could not change the colour of class %q", c.Name), err)
		}
	}
	hint := widget.NewLabel("These colours stay distinct for most kinds of colour blindness.")
	hint.Wrapping = fyne.TextWrapWord
	grid := container.NewGridWithColumns(2)
	for _, p := range project.Palette {
		bt := widget.NewButton(colourName(p), func() { set(p) })
		bt.Alignment = widget.ButtonAlignLeading
		if p == c.Color {
			bt.Importance = widget.HighImportance
		}
		grid.Add(container.NewBorder(nil, nil, newSwatch(p), nil, bt))
	}
	other := widget.NewButtonWithIcon("Any colour…", theme.ColorChromaticIcon(), func() {
		d.Hide()
		pick := dialog.NewColorPicker(fmt.Sprintf("Colour of %q", c.Name), "Pick any colour for the boxes of this class.", func(col color.Color) {
			if err := b.recolour(c.ID, color.NRGBAModel.Convert(col).(color.NRGBA)); err != nil {
				b.fail(fmt.Sprintf("Could not change the colour of class %q", c.Name), err)
			}
		}, b.win)
		pick.Advanced = true
		pick.SetColor(c.Color)
		pick.Show()
	})
	d = dialog.NewCustom(fmt.Sprintf("Colour of %q", c.Name), "Cancel", container.NewVBox(hint, grid, other), b.win)
	d.Resize(fyne.NewSize(420, d.MinSize().Height))
	d.Show()
}

// others lists the classes other than id, as Select options with their IDs.
func (b *classBar) others(id int64) ([]string, map[string]int64) {
	var names []string
	ids := map[string]int64{}
	for _, c := range b.classes {
		if c.ID != id {
			names = append(names, c.Name)
			ids[c.Name] = c.ID
		}
	}
	return names, ids
}

func (b *classBar) showMerge() {
	c, ok := b.currentClass()
	if !ok {
		return
	}
	names, ids := b.others(c.ID)
	if len(names) == 0 {
		dialog.ShowInformation("Merge class", "There is no other class to merge into. Add one first.", b.win)
		return
	}
	into := widget.NewSelect(names, nil)
	into.SetSelectedIndex(0)
	d := dialog.NewForm(fmt.Sprintf("Merge class %q", c.Name), "Next…", "Cancel",
		[]*widget.FormItem{widget.NewFormItem("Into", into)}, func(yes bool) {
			if !yes || into.Selected == "" {
				return
			}
			target, n := ids[into.Selected], b.inProject[c.ID]
			msg := fmt.Sprintf("%s of %q will become %q, then %q is removed.\nSuggestions move with them.",
				ops.Plural(n, "label"), c.Name, into.Selected, c.Name)
			dialog.ShowConfirm("Merge classes", msg, func(yes bool) {
				if !yes {
					return
				}
				if err := b.merge(c.ID, target); err != nil {
					b.fail(fmt.Sprintf("Could not merge class %q into %q", c.Name, into.Selected), err)
				}
			}, b.win)
		}, b.win)
	d.Resize(fyne.NewSize(360, d.MinSize().Height))
	d.Show()
}

func (b *classBar) showDelete() {
	c, ok := b.currentClass()
	if !ok {
		return
	}
	failed := func(err error) { b.fail(fmt.Sprintf("Could not delete class %q", c.Name), err) }
	n := b.inProject[c.ID]
	if n == 0 {
		dialog.ShowConfirm("Delete class", fmt.Sprintf("Delete class %q? It has no labels.", c.Name), func(yes bool) {
			if yes {
				if err := b.remove(c.ID, project.DeleteClassOptions{}); err != nil {
					failed(err)
				}
			}
		}, b.win)
		return
	}
	const moveOpt, dropOpt = "Move them to another class", "Delete them too"
	names, ids := b.others(c.ID)
	opts := []string{moveOpt, dropOpt}
	if len(names) == 0 {
		opts = opts[1:]
	}
	choice := widget.NewRadioGroup(opts, nil)
	choice.Required = true
	choice.SetSelected(opts[0])
	target := widget.NewSelect(names, nil)
	if len(names) > 0 {
		target.SetSelectedIndex(0)
	}
	choice.OnChanged = func(s string) {
		if s == moveOpt {
			target.Enable()
		} else {
			target.Disable()
		}
	}
	form := widget.NewForm(widget.NewFormItem("Its labels", choice))
	if len(names) > 0 {
		form.Append("Move to", target)
	}
	intro := widget.NewLabel(fmt.Sprintf("Class %q has %s in this project. What should happen to them?", c.Name, ops.Plural(n, "label")))
	intro.Wrapping = fyne.TextWrapWord
	d := dialog.NewCustomConfirm(fmt.Sprintf("Delete class %q", c.Name), "Delete class", "Cancel", container.NewVBox(intro, form), func(yes bool) {
		if !yes {
			return
		}
		if choice.Selected == moveOpt && target.Selected != "" {
			if err := b.remove(c.ID, project.DeleteClassOptions{MoveTo: ids[target.Selected]}); err != nil {
				failed(err)
			}
			return
		}
		if choice.Selected != dropOpt {
			return
		}
		msg := fmt.Sprintf("This deletes class %q and its %s (and any suggestions of it).\nThis cannot be undone.",
			c.Name, ops.Plural(n, "label"))
		dialog.ShowConfirm("Delete class and labels", msg, func(yes bool) {
			if yes {
				if err := b.remove(c.ID, project.DeleteClassOptions{DeleteLabels: true}); err != nil {
					failed(err)
				}
			}
		}, b.win)
	}, b.win)
	d.Resize(fyne.NewSize(420, d.MinSize().Height))
	d.Show()
}
