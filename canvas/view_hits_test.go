package canvas

import (
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"

	"boxwright/project"
)

// pressDrag presses the primary button at from, drags to to and lets go.
func pressDrag(v *View, from, to fyne.Position) {
	press(v, from.X, from.Y, desktop.MouseButtonPrimary)
	dragTo(v, from, to, 4)
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	v.DragEnd()
}

type change struct {
	key int64
	box project.Box
}

func recordChanges(v *View) *[]change {
	var got []change
	v.OnChange = func(key int64, b project.Box) { got = append(got, change{key, b}) }
	return &got
}

// A press on the corner of a box that is not selected resizes that box
// (it used to move it), and selects it; a press just beside a box does
// not take hold of it; a small box is still moved by a press on it.
func TestCornerOfUnselectedBoxResizesIt(t *testing.T) {
	v, _ := newTestView(t) // scale 2, no offset
	got := recordChanges(v)
	v.SetItems([]Item{
		{Key: 1, Box: project.Rect(50, 50, 150, 130)},   // screen (100,100)-(300,260)
		{Key: 2, Box: project.Rect(152, 50, 250, 130)},  // screen (304,100)-(500,260): beside it
		{Key: 3, Box: project.Rect(300, 200, 304, 204)}, // screen 8×8: small
	})
	// Bottom-right corner of box 1, from 1 px inside it (box 2's corner
	// is 5 px away), drag by (+20,+10) screen = (+10,+5) image pixels.
	pressDrag(v, fyne.NewPos(299, 259), fyne.NewPos(319, 269))
	if len(*got) != 1 || (*got)[0] != (change{1, project.Rect(50, 50, 160, 135)}) {
		t.Fatalf("dragging box 1's corner: %+v, want box 1 resized to (50,50)-(160,135)", *got)
	}
	if v.Selected() != 1 {
		t.Errorf("selected %d after the corner press, want 1", v.Selected())
	}
	// Top-left corner of box 2 while box 1 is selected: box 2 is resized.
	*got = nil
	pressDrag(v, fyne.NewPos(305, 101), fyne.NewPos(285, 81))
	if len(*got) != 1 || (*got)[0] != (change{2, project.Rect(142, 40, 250, 130)}) {
		t.Fatalf("dragging box 2's corner: %+v, want box 2 resized to (142,40)-(250,130)", *got)
	}
	// Just beside box 1's corner a drag draws a new box.
	var drawn []project.Box
	v.OnCreate = func(b project.Box) { drawn = append(drawn, b) }
	*got = nil
	pressDrag(v, fyne.NewPos(100, 98), fyne.NewPos(60, 58))
	if len(*got) != 0 || len(drawn) != 1 {
		t.Errorf("a drag from just above box 1's corner changed %+v and drew %v, want one new box", *got, drawn)
	}
	// The small box is moved by a press near its corner.
	v.Select(0)
	*got = nil
	pressDrag(v, fyne.NewPos(601, 401), fyne.NewPos(621, 411))
	if len(*got) != 1 || (*got)[0] != (change{3, project.Rect(310, 205, 314, 209)}) {
		t.Fatalf("dragging the small box: %+v, want it moved by (10,5)", *got)
	}
}

// A suggestion on top of one of the person's own boxes of about its size
// takes the press (it used to move the own box hidden under it); with
// the suggestion layer hidden (its items not passed) the own box does. A
// covered suggestion, drawn faded, leaves the press to the own box; a
// suggestion much larger than the own box inside it does too.
func TestSuggestionOverOwnBoxOfAboutItsSizeWinsThePress(t *testing.T) {
	v, _ := newTestView(t)
	got := recordChanges(v)
	own := Item{Key: 1, Box: project.Rect(50, 50, 150, 130)}
	sugg := Item{Key: 1 << 40, Box: project.Rect(48, 48, 154, 134), Suggestion: true} // 1.14× the area
	moveInside := func() {
		*got = nil
		v.Select(0)
		pressDrag(v, fyne.NewPos(200, 180), fyne.NewPos(210, 190))
	}
	v.SetItems([]Item{sugg, own})
	moveInside()
	if len(*got) != 1 || (*got)[0].key != sugg.Key {
		t.Errorf("with suggestions shown a drag inside moved %+v, want the suggestion", *got)
	}
	v.SetItems([]Item{own}) // the suggestion layer off
	moveInside()
	if len(*got) != 1 || (*got)[0].key != own.Key {
		t.Errorf("with suggestions hidden a drag inside moved %+v, want the own box", *got)
	}
	covered := sugg
	covered.Covered = true
	v.SetItems([]Item{covered, own})
	moveInside()
	if len(*got) != 1 || (*got)[0].key != own.Key {
		t.Errorf("with a covered suggestion a drag inside moved %+v, want the own box", *got)
	}
	inner := covered
	inner.Box = project.Rect(52, 51, 149, 128) // a little smaller than the own box
	v.SetItems([]Item{inner, own})
	moveInside()
	if len(*got) != 1 || (*got)[0].key != own.Key {
		t.Errorf("with a covered suggestion a little inside the own box a drag moved %+v, want the own box", *got)
	}
	big := sugg
	big.Box = project.Rect(0, 0, 250, 200) // 6× the own box
	v.SetItems([]Item{big, own})
	moveInside()
	if len(*got) != 1 || (*got)[0].key != own.Key {
		t.Errorf("with a large suggestion around it a drag inside moved %+v, want the own box", *got)
	}
	// The covered suggestion can still be selected where it is alone, and
	// with c (cycle under the pointer).
	v.SetItems([]Item{covered, own})
	v.Select(0)
	press(v, 97, 97, desktop.MouseButtonPrimary) // image (48.5,48.5): only the suggestion
	v.MouseUp(&desktop.MouseEvent{Button: desktop.MouseButtonPrimary})
	if v.Selected() != covered.Key {
		t.Errorf("a press on the covered suggestion alone selected %d", v.Selected())
	}
	v.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(200, 180)}})
	v.Select(own.Key)
	v.TypedRune('c')
	if v.Selected() != covered.Key {
		t.Errorf("c from the own box selected %d, want the covered suggestion", v.Selected())
	}
}
