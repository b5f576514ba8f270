package canvas

import (
	"testing"

	"boxwright/project"
)

func TestChooseTagForm(t *testing.T) {
	cases := []struct {
		bw, bh, full, short float64
		force, covered      bool
		want                tagForm
	}{
		{100, 20, 120, 30, false, false, tagFull}, // 100 ≥ 0.75·120
		{60, 20, 120, 30, false, false, tagShort}, // 60 < 90, ≥ 15
		{8, 8, 120, 30, false, false, tagNone},    // a buoy: 8 < 15
		{8, 8, 120, 30, true, false, tagFull},     // selected or under the pointer
		{200, 90, 120, 30, false, true, tagShort}, // covered: at most short
		{20, 20, 120, 30, false, true, tagNone},   // covered and smaller than its short tag
		{10, 40, 120, 30, false, false, tagShort}, // the longer side counts
	}
	for _, c := range cases {
		if got := chooseTagForm(c.bw, c.bh, c.full, c.short, c.force, c.covered); got != c.want {
			t.Errorf("%+v: form %d, want %d", c, got, c.want)
		}
	}
}

// The placer tries above-left, below-left, inside, right, left, then the
// right-hand corners, and skips a tag with nowhere free.
func TestTagPlacerOrder(t *testing.T) {
	var p tagPlacer
	p.reset(400, 300)
	b := project.Rect(100, 100, 200, 200)
	want := []project.Box{
		project.Rect(100, 86, 150, 100),  // above-left
		project.Rect(100, 200, 150, 214), // below-left
		project.Rect(104, 104, 154, 118), // inside
		project.Rect(202, 100, 252, 114), // right
		project.Rect(48, 100, 98, 114),   // left
	}
	for i, w := range want {
		got, ok := p.place(b, int64(i+1), 50, 14, false)
		if !ok || got != w {
			t.Fatalf("tag %d placed at %v (%v), want %v", i, got, ok, w)
		}
	}
	// An own box right of the box blocks the right-hand places that are
	// left; the next tag is skipped, a forced one still shown in the view.
	p.addOwn(project.Rect(140, 60, 260, 99), 99)
	p.addOwn(project.Rect(140, 201, 260, 240), 98)
	if got, ok := p.place(b, 7, 50, 14, false); ok {
		t.Errorf("a tag with nowhere free was placed at %v", got)
	}
	if got, ok := p.place(project.Rect(380, 0, 400, 20), 8, 50, 14, true); !ok || !within(got, p.view) {
		t.Errorf("a forced tag at the corner went to %v (%v), want inside the view", got, ok)
	}
}
