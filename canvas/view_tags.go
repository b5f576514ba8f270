package canvas

import (
	"image/color"
	"sort"

	"fyne.io/fyne/v2"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/theme"

	"boxwright/project"
)

// tagPad is the room left and right of a tag's text, in screen units.
const tagPad = 3

// tagLayout is what the renderer keeps for placing tags: the measured
// sizes of tag texts, the placer, and a scratch list.
type tagLayout struct {
	sizes  map[tagText]fyne.Size
	placer tagPlacer
	want   []tagWant
}

type tagText struct {
	s     string
	size  float32
	style fyne.TextStyle
}

// tagWant is a box that may get a tag: its item, its rank (see
// tagGroup), its box on screen.
type tagWant struct {
	i     int
	group int
	area  float64
	sb    project.Box
}

// tagGroup ranks the boxes for tags, 0 first: the selected box, the box
// under the pointer, the person's own boxes, suggestions, the others'
// boxes, covered suggestions. Within a group larger boxes go first.
func (v *View) tagGroup(it Item) int {
	switch {
	case it.Key == v.sel:
		return 0
	case it.Key == v.hover:
		return 1
	case !it.ReadOnly && !it.Suggestion:
		return 2
	case it.Suggestion && !it.Covered:
		return 3
	case it.ReadOnly:
		return 4
	}
	return 5
}

func (r *viewRenderer) measure(s string, size float32, style fyne.TextStyle) fyne.Size {
	k := tagText{s, size, style}
	if sz, ok := r.tags.sizes[k]; ok {
		return sz
	}
	if r.tags.sizes == nil || len(r.tags.sizes) > 8192 {
		r.tags.sizes = map[tagText]fyne.Size{}
	}
	sz := fyne.MeasureText(s, size, style)
	r.tags.sizes[k] = sz
	return sz
}

// tagStyle is how an item's tag looks: the person's own boxes a tag in
// the class colour with upright text; the others' the same, less opaque,
// italic; suggestions dark with bold italic text in the class colour,
// so that no proposal reads like a label; covered suggestions fainter
// still. A forced tag (selected, under the pointer) is opaque.
func tagStyle(it Item, force bool) (style fyne.TextStyle, fill, text color.NRGBA) {
	fill, text = it.Color, readableOn(it.Color)
	switch {
	case it.Suggestion:
		style = fyne.TextStyle{Italic: true, Bold: !it.Covered}
		fill, text = color.NRGBA{0x18, 0x1a, 0x1e, 0xd8}, it.Color
		if it.Covered && !force {
			fill.A, text.A = 0x90, 0xb0
		}
		if force {
			fill.A = 0xff
		}
	case it.ReadOnly:
		style = fyne.TextStyle{Italic: true}
		if !force {
			fill.A = 0xc0
		}
	}
	return style, fill, text
}

// layoutTags chooses, sizes and places the tags for a view of the given
// size (see chooseTagForm and tagPlacer) and fills the tag objects. With
// refresh set it refreshes the objects that changed (a layout the
// renderer's Refresh does not follow).
func (r *viewRenderer) layoutTags(size fyne.Size, t Transform, refresh bool) {
	v := r.v
	tl := &r.tags
	tl.want = tl.want[:0]
	n := 0
	if v.pyr != nil && !v.noNames {
		vw, vh := float64(size.Width), float64(size.Height)
		db, dkey, drafting := v.draft()
		tl.placer.reset(vw, vh)
		items := v.items
		for i, it := range items {
			if it.ReadOnly && !v.showOther {
				continue
			}
			b := it.Box
			if drafting && it.Key == dkey {
				b = db
			}
			sb := t.BoxToScreen(b)
			if sb.X1 < 0 || sb.Y1 < 0 || sb.X0 > vw || sb.Y0 > vh {
				continue // off screen: neither a tag nor in the way of one
			}
			if !it.ReadOnly && !it.Suggestion {
				tl.placer.addOwn(sb, it.Key)
			}
			if it.Caption != "" {
				tl.want = append(tl.want, tagWant{i: i, group: v.tagGroup(it), area: sb.Area(), sb: sb})
			}
		}
		sort.Slice(tl.want, func(a, b int) bool {
			wa, wb := tl.want[a], tl.want[b]
			if wa.group != wb.group {
				return wa.group < wb.group
			}
			if wa.area != wb.area {
				return wa.area > wb.area
			}
			return wa.i < wb.i
		})
		ts := theme.CaptionTextSize()
		for _, w := range tl.want {
			if n >= maxCaptions {
				break
			}
			it := items[w.i]
			force := w.group <= 1
			style, col, fg := tagStyle(it, force)
			short := it.Short
			if short == "" {
				short = it.Caption
			}
			full := r.measure(it.Caption, ts, style)
			shortSz := full
			if short != it.Caption {
				shortSz = r.measure(short, ts, style)
			}
			text, tsz := it.Caption, full
			switch chooseTagForm(w.sb.Width(), w.sb.Height(), float64(full.Width)+2*tagPad, float64(shortSz.Width)+2*tagPad, force, it.Suggestion && it.Covered) {
			case tagNone:
				continue
			case tagShort:
				text, tsz = short, shortSz
			}
			at, ok := tl.placer.place(w.sb, it.Key, float64(tsz.Width)+2*tagPad, float64(tsz.Height), force)
			if !ok {
				continue
			}
			r.setCaption(n, it, text, ts, style, col, fg, at, tsz, refresh)
			n++
		}
	}
	r.caps = r.caps[:n]
}

// setCaption makes tag object i show text at the screen rectangle at.
func (r *viewRenderer) setCaption(i int, it Item, text string, ts float32, style fyne.TextStyle, col, fg color.NRGBA, at project.Box, tsz fyne.Size, refresh bool) {
	if i == len(r.caps) {
		r.caps = append(r.caps, caption{}) // keeps what lies beyond len, if anything
		if r.caps[i].tag == nil {
			r.caps[i] = caption{tag: fcanvas.NewRectangle(color.Black), text: fcanvas.NewText("", color.Black)}
		}
	}
	c := &r.caps[i]
	c.key, c.own = it.Key, !it.ReadOnly && !it.Suggestion
	changed := c.text.Text != text || c.text.TextSize != ts || c.text.TextStyle != style || c.text.Color != fg || c.tag.FillColor != col || c.tag.Hidden
	c.text.Text, c.text.TextSize, c.text.TextStyle, c.text.Color = text, ts, style, fg
	c.tag.FillColor = col
	c.tag.Hidden, c.text.Hidden = false, false
	pos := fyne.NewPos(float32(at.X0), float32(at.Y0))
	tagSize := fyne.NewSize(float32(at.Width()), float32(at.Height()))
	changed = changed || c.tag.Position() != pos || c.tag.Size() != tagSize
	c.tag.Move(pos)
	c.tag.Resize(tagSize)
	c.text.Move(pos.AddXY(tagPad, 0))
	c.text.Resize(tsz)
	if refresh && changed {
		c.tag.Refresh()
		c.text.Refresh()
	}
}

// retag places the tags again after the box under the pointer changed.
func (r *viewRenderer) retag() {
	v := r.v
	r.layoutMu.Lock()
	r.layoutTags(v.Size(), v.Transform(), true)
	r.layoutMu.Unlock()
	r.rebuild()
}

// keyUnder is the key of the shown box with a tag that holds the image
// point (x, y), the smallest of them (0: none): its tag is shown in full.
func (v *View) keyUnder(x, y float64) int64 {
	best, area := int64(0), 0.0
	for _, it := range v.items {
		if it.Caption == "" || (it.ReadOnly && !v.showOther) || !it.Box.Contains(x, y) {
			continue
		}
		if a := it.Box.Area(); best == 0 || a <= area {
			best, area = it.Key, a
		}
	}
	return best
}

// setHover notes the box under the pointer and shows its tag in full.
func (v *View) setHover(key int64) {
	if key == v.hover {
		return
	}
	v.hover = key
	if v.r != nil {
		v.r.retag()
	}
}
