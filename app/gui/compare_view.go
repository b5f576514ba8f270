package gui

import (
	"fmt"
	"strings"

	"boxwright/canvas"
	"boxwright/project"
	"boxwright/project/agree"
)

// comparison is a disputed image opened from the agreement report: every
// compared annotator's boxes, read-only, each in its own line style, and
// the boxes nobody else drew marked.
type comparison struct {
	imageID int64
	names   []string
	labels  agree.ImageLabels
	lonely  map[[2]int]bool // (annotator, box) that joined no object
}

// annotatorDash is the line style of the i-th compared annotator: thin
// solid, long dashes, dots, very long dashes, short dashes.
var annotatorDash = []int{-1, 8, 2, 14, 4}

func dashOf(i int) int { return annotatorDash[i%len(annotatorDash)] }

// newComparison groups the image's boxes across annotators as the report
// did and remembers which boxes stayed alone.
func newComparison(im agree.ImageLabels, names []string, threshold float64, classAware bool) *comparison {
	c := &comparison{imageID: im.ImageID, names: names, labels: im, lonely: map[[2]int]bool{}}
	n := len(names)
	bs := make([][]project.Box, n)
	cs := make([][]int64, n)
	for i := 0; i < n && i < len(im.By); i++ {
		bs[i], cs[i] = im.By[i].Boxes, im.By[i].Classes
	}
	for _, o := range agree.GroupObjects(bs, cs, threshold, classAware) {
		if len(o.Members) == 1 {
			for a, b := range o.Members {
				c.lonely[[2]int{a, b}] = true
			}
		}
	}
	return c
}

// items are the boxes to show.
func (c *comparison) items(u *ui) []canvas.Item {
	var out []canvas.Item
	key := int64(0)
	for a, l := range c.labels.By {
		if a >= len(c.names) {
			break
		}
		for i, b := range l.Boxes {
			key--
			cl := u.classBy[l.Classes[i]]
			caption := cl.Name + " · " + c.names[a]
			marked := c.lonely[[2]int{a, i}]
			if marked {
				caption += " · unmatched"
			}
			out = append(out, canvas.Item{Key: key, Box: b, Color: cl.Color, Caption: caption, Short: c.names[a], ReadOnly: true, Dash: dashOf(a), Marked: marked})
		}
	}
	return out
}

// legend says which line style is whose.
func (c *comparison) legend() string {
	style := func(d int) string {
		switch {
		case d < 0:
			return "thin solid"
		case d <= 2:
			return "dotted"
		case d <= 4:
			return "short dashes"
		case d <= 8:
			return "dashes"
		}
		return "long dashes"
	}
	var parts []string
	for i, n := range c.names {
		parts = append(parts, fmt.Sprintf("%s: %s", n, style(dashOf(i))))
	}
	return "Comparing — " + strings.Join(parts, ", ") + "; unmatched boxes have a white dashed ring"
}

// openComparison shows an image of the report in the main window.
func (u *ui) openComparison(c *comparison) {
	u.compare = c
	u.compareNote.SetText(c.legend())
	u.compareBar.Show()
	if c.imageID == u.imageID {
		u.refreshBoxes()
	} else {
		u.selectImageID(c.imageID)
	}
	u.win.RequestFocus()
}

// stopComparing goes back to labelling.
func (u *ui) stopComparing() {
	u.compare = nil
	u.compareBar.Hide()
	u.refreshBoxes()
}
