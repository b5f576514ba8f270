package gui

import (
	"image"
	"image/color"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
)

// cropCell is one cell of the grid: the crop, its score, and, when
// marked wrong, a dark veil with a cross (no reliance on red).
type cropCell struct {
	widget.BaseWidget
	id    int64 // the suggestion shown; 0 none
	img   *fcanvas.Image
	veil  *fcanvas.Rectangle
	cross *fcanvas.Text
	score *fcanvas.Text
	note  *fcanvas.Text
}

func newCropCell() *cropCell {
	c := &cropCell{img: fcanvas.NewImageFromImage(nil), veil: fcanvas.NewRectangle(color.NRGBA{0x10, 0x10, 0x18, 0xc8}),
		cross: fcanvas.NewText("× wrong", color.White), score: fcanvas.NewText("", theme.Color(theme.ColorNameForeground)),
		note: fcanvas.NewText("", theme.Color(theme.ColorNamePlaceHolder))}
	c.img.FillMode = fcanvas.ImageFillContain
	c.img.ScaleMode = fcanvas.ImageScaleFastest
	c.img.SetMinSize(fyne.NewSize(cropSide, cropSide))
	c.cross.TextSize = 22
	c.cross.TextStyle = fyne.TextStyle{Bold: true}
	c.cross.Alignment = fyne.TextAlignCenter
	c.score.Alignment = fyne.TextAlignCenter
	c.note.Alignment = fyne.TextAlignCenter
	c.veil.Hide()
	c.cross.Hide()
	c.ExtendBaseWidget(c)
	return c
}

func (c *cropCell) CreateRenderer() fyne.WidgetRenderer {
	bg := fcanvas.NewRectangle(color.NRGBA{0x30, 0x30, 0x30, 0xff})
	pic := container.NewStack(bg, container.NewCenter(c.note), c.img, c.veil, container.NewCenter(c.cross))
	return widget.NewSimpleRenderer(container.NewBorder(nil, c.score, nil, nil, pic))
}

// show sets the cell's content; a nil image shows a placeholder until
// the crop arrives.
func (c *cropCell) show(img image.Image, score string, marked bool) {
	c.score.Text = score
	c.score.Refresh()
	c.setImage(img, nil)
	if marked {
		c.veil.Show()
		c.cross.Show()
	} else {
		c.veil.Hide()
		c.cross.Hide()
	}
}

func (c *cropCell) setImage(img image.Image, err error) {
	c.note.Text = ""
	switch {
	case err != nil:
		c.note.Text = "no picture"
	case img == nil:
		c.note.Text = "…"
	}
	c.note.Refresh()
	c.img.Image = img
	c.img.Refresh()
}
