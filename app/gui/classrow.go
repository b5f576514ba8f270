package gui

import (
	"fmt"
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/project"
)

func newSwatch(c color.NRGBA) *canvas.Rectangle {
	r := canvas.NewRectangle(c)
	// An outline keeps pale colours visible on a light theme.
	r.StrokeColor = theme.Color(theme.ColorNameInputBorder)
	r.StrokeWidth = 1
	r.CornerRadius = theme.Size(theme.SizeNameInputRadius) / 2
	s := theme.IconInlineSize()
	r.SetMinSize(fyne.NewSize(s, s))
	return r
}

// classRow is one class in the bar; tapping it picks the class.
type classRow struct {
	widget.BaseWidget
	class   project.Class
	current bool
	picked  func(int64)

	bg, bar *canvas.Rectangle
	key     *widget.Label
	name    *widget.Label
	counts  *widget.Label
	hovered bool
}

// countsText says how many boxes of the class are on the image — the
// person's own (who) and everyone's — and in the whole project.
func countsText(mine, all, total int, who string) string {
	inProject := fmt.Sprintf("\n%d in the project", total)
	switch {
	case all == 0:
		return "0 here" + inProject
	case who == "":
		return fmt.Sprintf("%d here (everyone's)", all) + inProject
	case mine == all:
		return fmt.Sprintf("%d here, all %s's", mine, who) + inProject
	default:
		return fmt.Sprintf("%d %s's · %d all here", mine, who, all) + inProject
	}
}

func newClassRow(c project.Class, counts string, current bool, picked func(int64)) *classRow {
	r := &classRow{class: c, current: current, picked: picked}
	r.bg = canvas.NewRectangle(color.Transparent)
	r.bg.CornerRadius = theme.Size(theme.SizeNameSelectionRadius)
	r.bar = canvas.NewRectangle(color.Transparent)
	r.bar.SetMinSize(fyne.NewSize(theme.Padding(), 0))
	key := c.HotKey
	if key == "" {
		key = " " // keeps the names of all rows aligned
	}
	r.key = widget.NewLabelWithStyle(key, fyne.TextAlignCenter, fyne.TextStyle{Monospace: true})
	r.name = widget.NewLabelWithStyle(c.Name, fyne.TextAlignLeading, fyne.TextStyle{Bold: current})
	r.name.Truncation = fyne.TextTruncateEllipsis
	r.counts = widget.NewLabel(counts)
	r.counts.SizeName = theme.SizeNameCaptionText
	r.counts.Truncation = fyne.TextTruncateEllipsis
	r.ExtendBaseWidget(r)
	return r
}

// update shows new counts and whether the row's class is current.
func (r *classRow) update(counts string, current bool) {
	r.counts.SetText(counts)
	if current != r.current {
		r.current = current
		r.name.TextStyle = fyne.TextStyle{Bold: current}
		r.name.Refresh()
		r.paint()
		r.bg.Refresh()
		r.bar.Refresh()
	}
}

func (r *classRow) CreateRenderer() fyne.WidgetRenderer {
	sw := newSwatch(r.class.Color)
	left := container.NewHBox(r.bar, container.NewCenter(sw), r.key)
	// Name and counts sit close together so that a row reads as one item.
	text := container.New(tightVBox{}, r.name, r.counts)
	r.paint()
	return widget.NewSimpleRenderer(container.NewStack(r.bg, container.NewBorder(nil, nil, left, nil, text)))
}

func (r *classRow) paint() {
	switch {
	case r.current:
		r.bg.FillColor = theme.Color(theme.ColorNameSelection)
		r.bar.FillColor = theme.Color(theme.ColorNamePrimary)
	case r.hovered:
		r.bg.FillColor = theme.Color(theme.ColorNameHover)
		r.bar.FillColor = color.Transparent
	default:
		r.bg.FillColor = color.Transparent
		r.bar.FillColor = color.Transparent
	}
}

// Refresh follows theme changes.
func (r *classRow) Refresh() {
	r.paint()
	r.bg.Refresh()
	r.bar.Refresh()
	r.BaseWidget.Refresh()
}

// Tapped picks the row's class.
func (r *classRow) Tapped(*fyne.PointEvent) {
	if r.picked != nil {
		r.picked(r.class.ID)
	}
}

// MouseIn shows which row a click would pick.
func (r *classRow) MouseIn(*desktop.MouseEvent) { r.hovered = true; r.Refresh() }

// MouseMoved is needed to receive hover events.
func (r *classRow) MouseMoved(*desktop.MouseEvent) {}

// MouseOut ends the hover highlight.
func (r *classRow) MouseOut() { r.hovered = false; r.Refresh() }

// tightVBox stacks its objects with no gap: the labels bring their own padding.
type tightVBox struct{}

func (tightVBox) MinSize(objs []fyne.CanvasObject) fyne.Size {
	var s fyne.Size
	for _, o := range objs {
		m := o.MinSize()
		s.Width = max(s.Width, m.Width)
		s.Height += m.Height
	}
	// Overlap the labels' inner padding so the two lines read as one.
	if len(objs) > 1 {
		s.Height -= theme.Padding() * float32(len(objs)-1)
	}
	return s
}

func (tightVBox) Layout(objs []fyne.CanvasObject, size fyne.Size) {
	y := float32(0)
	for _, o := range objs {
		h := o.MinSize().Height
		o.Move(fyne.NewPos(0, y))
		o.Resize(fyne.NewSize(size.Width, h))
		y += h - theme.Padding()
	}
}
