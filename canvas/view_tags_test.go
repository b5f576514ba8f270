package canvas

import (
	"fmt"
	"image/color"
	"math/rand/v2"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/test"

	"boxwright/project"
)

// shownTag is a tag on screen, as the tests see it.
type shownTag struct {
	key  int64
	text string
	r    project.Box // screen
}

// shownTags lists the tags the view shows now, read from its objects.
func shownTags(t *testing.T, v *View) []shownTag {
	t.Helper()
	r := test.WidgetRenderer(v).(*viewRenderer)
	inObjs := map[fyne.CanvasObject]bool{}
	for _, o := range r.Objects() {
		inObjs[o] = true
	}
	var out []shownTag
	for _, c := range r.caps {
		if !inObjs[c.tag] || !inObjs[c.text] || c.tag.Hidden {
			t.Fatalf("tag %q is not among the view's objects", c.text.Text)
		}
		p, s := c.tag.Position(), c.tag.Size()
		out = append(out, shownTag{c.key, c.text.Text, project.Box{X0: float64(p.X), Y0: float64(p.Y), X1: float64(p.X + s.Width), Y1: float64(p.Y + s.Height)}})
	}
	return out
}

func tagOf(tags []shownTag, key int64) (shownTag, bool) {
	for _, s := range tags {
		if s.key == key {
			return s, true
		}
	}
	return shownTag{}, false
}

var (
	orange = color.NRGBA{0xe6, 0x9f, 0x00, 0xff}
	sky    = color.NRGBA{0x56, 0xb4, 0xe9, 0xff}
	green  = color.NRGBA{0x00, 0x9e, 0x73, 0xff}
)

// Tags follow the size of the box on screen: none for a speck, the short
// form for a small box, the caption for a large one; the caption in full
// under the pointer and on the selected box. (They used to be the full
// caption on every box, 100 px and more over a buoy of 6.)
func TestTagsFollowBoxSizeOnScreen(t *testing.T) {
	v, _ := newTestView(t) // scale 2
	speck := Item{Key: 1, Box: project.Rect(20, 20, 23, 23), Color: green, Caption: "buoy · Tomas", Short: "Tomas", ReadOnly: true}
	small := Item{Key: 2, Box: project.Rect(100, 100, 120, 110), Color: orange, Caption: "suggested sailboat 0.86", Short: "0.86", Suggestion: true}
	large := Item{Key: 3, Box: project.Rect(200, 150, 350, 250), Color: sky, Caption: "motorboat"}
	v.SetItems([]Item{speck, small, large})
	tags := shownTags(t, v)
	if s, ok := tagOf(tags, 1); ok {
		t.Errorf("the 6-px box has the tag %q, want none", s.text)
	}
	if s, ok := tagOf(tags, 2); !ok || s.text != "0.86" {
		t.Errorf("the 40×20-px suggestion has the tag %q (shown %v), want the short form 0.86", s.text, ok)
	}
	if s, ok := tagOf(tags, 3); !ok || s.text != "motorboat" {
		t.Errorf("the large box has the tag %q (shown %v), want its caption", s.text, ok)
	}
	// The pointer over the speck shows its caption; leaving hides it.
	v.MouseMoved(&desktop.MouseEvent{PointEvent: fyne.PointEvent{Position: fyne.NewPos(43, 43)}})
	if s, ok := tagOf(shownTags(t, v), 1); !ok || s.text != speck.Caption {
		t.Errorf("under the pointer the speck's tag is %q (shown %v), want %q", s.text, ok, speck.Caption)
	}
	v.MouseOut()
	if s, ok := tagOf(shownTags(t, v), 1); ok {
		t.Errorf("after the pointer left, the speck still has the tag %q", s.text)
	}
	// Selected, the small suggestion shows its caption.
	v.Select(2)
	if s, ok := tagOf(shownTags(t, v), 2); !ok || s.text != small.Caption {
		t.Errorf("selected, the suggestion's tag is %q (shown %v), want %q", s.text, ok, small.Caption)
	}
	// Names off: no tags at all.
	v.SetNames(false)
	if tags := shownTags(t, v); len(tags) != 0 {
		t.Errorf("with names off %d tags are shown", len(tags))
	}
}

// crowd is a harbour of own boxes, suggestions on top of most of them and
// two other annotators' boxes, some small, with long captions.
func crowd(seed uint64) []Item {
	rng := rand.New(rand.NewPCG(seed, 7))
	var items []Item
	key := int64(0)
	for range 60 {
		w, h := 6+rng.Float64()*60, 6+rng.Float64()*40
		x, y := rng.Float64()*(400-w), rng.Float64()*(300-h)
		b := project.Box{X0: x, Y0: y, X1: x + w, Y1: y + h}
		jitter := func() project.Box {
			d := func() float64 { return (rng.Float64() - 0.5) * 6 }
			return project.Box{X0: b.X0 + d(), Y0: b.Y0 + d(), X1: b.X1 + d(), Y1: b.Y1 + d()}.Intersect(project.Box{X1: 400, Y1: 300})
		}
		key++
		switch rng.IntN(3) {
		case 0:
			items = append(items, Item{Key: key, Box: b, Color: orange, Caption: "sailboat"})
		case 1:
			items = append(items, Item{Key: -key, Box: b, Color: sky, Caption: "motorboat · Tomas", Short: "Tomas", ReadOnly: true})
		}
		if rng.IntN(2) == 0 {
			key++
			items = append(items, Item{Key: 1000 + key, Box: jitter(), Color: green, Caption: fmt.Sprintf("suggested buoy 0.%02d", rng.IntN(100)), Short: fmt.Sprintf("0.%02d", rng.IntN(100)), Suggestion: true})
		}
		if rng.IntN(3) == 0 {
			key++
			items = append(items, Item{Key: -key, Box: jitter(), Color: orange, Caption: "sailboat · Ana · unmatched", Short: "Ana", ReadOnly: true, Dash: 3})
		}
	}
	return items
}

// Tags never overlap one another, never cover one of the person's own
// boxes (not even inside a larger own box) and stay in the view, at fit
// zoom and zoomed in, over several crowds.
func TestTagsAvoidEachOtherAndOwnBoxes(t *testing.T) {
	v, _ := newTestView(t)
	for seed := range uint64(6) {
		items := crowd(seed)
		v.SetItems(items)
		for _, zoom := range []float64{1, 2.5} {
			v.FitToWindow()
			v.ZoomBy(zoom, 300, 200)
			tr := v.Transform()
			tags := shownTags(t, v)
			if len(tags) < 10 {
				t.Fatalf("seed %d zoom %g: only %d tags shown of %d boxes", seed, zoom, len(tags), len(items))
			}
			sz := v.Size()
			view := project.Box{X1: float64(sz.Width), Y1: float64(sz.Height)}
			for i, a := range tags {
				if !within(a.r, view) {
					t.Errorf("seed %d zoom %g: tag %q at %v leaves the view", seed, zoom, a.text, a.r)
				}
				for _, b := range tags[i+1:] {
					if overlaps(a.r, b.r) {
						t.Errorf("seed %d zoom %g: tags %q %v and %q %v overlap", seed, zoom, a.text, a.r, b.text, b.r)
					}
				}
				for _, it := range items {
					if it.ReadOnly || it.Suggestion || it.Key == a.key {
						continue
					}
					if o := tr.BoxToScreen(it.Box); overlaps(a.r, o) {
						t.Errorf("seed %d zoom %g: tag %q at %v covers the own box %v", seed, zoom, a.text, a.r, o)
					}
				}
			}
		}
	}
}

// The person's own layer is the most visible: own boxes are drawn over
// suggestions and the others' boxes (whatever the order of the items),
// own tags above the other tags.
func TestOwnLayerOnTop(t *testing.T) {
	v, w := newTestView(t)
	own := Item{Key: 1, Box: project.Rect(50, 50, 150, 130), Color: orange, Caption: "sailboat"}
	sugg := Item{Key: 2, Box: project.Rect(50, 60, 150, 140), Color: green, Caption: "suggested buoy 0.50", Suggestion: true}
	other := Item{Key: -3, Box: project.Rect(50, 40, 150, 120), Color: sky, Caption: "motorboat · Tomas", ReadOnly: true, Dash: -1}
	v.SetItems([]Item{own, sugg, other}) // own first: it used to be drawn under the others
	img := w.Canvas().Capture()
	// Screen x 101 is on the left edge of all three; at y 250 (image 125)
	// all three boxes overlap there.
	if c := color.NRGBAModel.Convert(img.At(101, 250)).(color.NRGBA); c.R != orange.R || c.G != orange.G || c.B != orange.B {
		t.Errorf("where the edges coincide the pixel is %v, want the own box's %v", c, orange)
	}
	r := test.WidgetRenderer(v).(*viewRenderer)
	ownAt, lastOther := -1, -1
	for i, o := range r.Objects() {
		for _, c := range r.caps {
			if o == c.tag && c.own {
				ownAt = i
			}
			if o == c.tag && !c.own {
				lastOther = i
			}
		}
	}
	if ownAt < 0 || lastOther < 0 || ownAt < lastOther {
		t.Errorf("own tag at object %d, last other tag at %d: want the own one above", ownAt, lastOther)
	}
}

// A covered suggestion is drawn faded: a faint outline, no fill, at most
// its short tag; an uncovered one keeps its tint.
func TestCoveredSuggestionDrawnFaded(t *testing.T) {
	v, w := newTestView(t)
	sugg := Item{Key: 2, Box: project.Rect(50, 50, 150, 130), Color: green, Caption: "suggested buoy 0.50", Short: "0.50", Suggestion: true}
	v.SetItems([]Item{sugg})
	tinted := color.NRGBAModel.Convert(w.Canvas().Capture().At(200, 180)).(color.NRGBA)
	covered := sugg
	covered.Covered = true
	v.SetItems([]Item{covered})
	img := w.Canvas().Capture()
	inside := color.NRGBAModel.Convert(img.At(200, 180)).(color.NRGBA)
	if inside.R != 0x40 || inside.G != 0x40 || inside.B != 0x40 {
		t.Errorf("inside the covered suggestion %v, want the image's grey (no fill); uncovered it is %v", inside, tinted)
	}
	if tinted == inside {
		t.Errorf("the uncovered suggestion has no tint either (%v)", tinted)
	}
	// On its top edge the dotted outline is a blend, never the full colour.
	for x := 100; x < 300; x++ {
		if c := color.NRGBAModel.Convert(img.At(x, 100)).(color.NRGBA); c.R == green.R && c.G == green.G && c.B == green.B {
			t.Fatalf("the covered outline has a full-colour pixel at (%d,100)", x)
		}
	}
	if s, ok := tagOf(shownTags(t, v), 2); !ok || s.text != "0.50" {
		t.Errorf("the covered suggestion's tag %q (shown %v), want the short form", s.text, ok)
	}
}
