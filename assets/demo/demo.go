// Package demo generates Boxwright's demo scenario: an invented top-down
// survey of a small harbour, drawn entirely by code, with its ground truth,
// the labels of two annotators who work with different care, and pending
// suggestions from an invented detector. Everything follows from one seed,
// so tests and benchmarks can ask for as many images as they need.
//
// Output is byte-identical for a seed on a given platform. The Go spec lets
// some targets fuse multiply-adds, so another CPU family may differ in the
// last bit of a float and, rarely, by one level in a pixel.
package demo

import (
	"fmt"
	"math"
	"math/rand/v2"

	"boxwright/project"
)

// Defaults used where a Config field is zero (or negative).
const (
	DefaultImages = 40
	DefaultWidth  = 1280
	DefaultHeight = 960
)

// SuggestionSource is the name of the invented detector whose suggestions
// the scenario holds.
const SuggestionSource = "harbour-detector-v1"

// Indexes into Scenario.Annotators.
const (
	Careful = 0 // labels everything, edges within about a pixel
	Hasty   = 1 // loose edges, confuses kayaks and sailboats, misses buoys
)

// Classes are the object classes of the scenario, in the order a project
// should create them.
var Classes = []string{"sailboat", "motorboat", "buoy", "kayak"}

// Config chooses the scenario.
type Config struct {
	Seed          int64 // same seed → byte-identical output
	Images        int   // default 40 when 0
	Width, Height int   // default 1280×960 when 0
}

// withDefaults fills the zero (or meaningless negative) fields.
func (c Config) withDefaults() Config {
	if c.Images <= 0 {
		c.Images = DefaultImages
	}
	if c.Width <= 0 {
		c.Width = DefaultWidth
	}
	if c.Height <= 0 {
		c.Height = DefaultHeight
	}
	return c
}

// Object is one labelled thing: a class name from Classes and its box.
type Object struct {
	Class string
	Box   project.Box
}

// Scored is an object proposed by a model, with the model's score in [0,1].
type Scored struct {
	Object
	Score float64
}

// Frame is one image of the scenario.
type Frame struct {
	Name  string   // file name, e.g. "harbour-007.jpg"
	Truth []Object // what is really there
}

// AnnotatorLabels are the labels one annotator made, frame by frame.
type AnnotatorLabels struct {
	Name   string     // a plain first name
	Labels [][]Object // per frame, indexed like Scenario.Frames
}

// Scenario is a generated demo: frames with ground truth, two annotators'
// labels and a detector's pending suggestions.
type Scenario struct {
	Config      Config            // with defaults filled in
	Frames      []Frame           // one per image
	Annotators  []AnnotatorLabels // exactly two: [Careful] and [Hasty]
	Source      string            // suggestion source name
	Suggestions [][]Scored        // per frame, pending model suggestions

	scenes []*scene // what Render draws
}

// Random streams: each purpose gets its own PCG stream per frame so that
// changing how one is drawn never shifts the others.
const (
	streamLayout uint64 = iota + 1
	streamCareful
	streamHasty
	streamSuggest
	streamRender
)

// newRand returns the generator for one purpose and frame.
func newRand(seed int64, stream uint64, frame int) *rand.Rand {
	return rand.New(rand.NewPCG(uint64(seed), stream<<40^uint64(frame)))
}

// Generate lays out every frame and derives the ground truth, the two
// annotators' labels and the suggestions. It draws no pixels; see Render.
func Generate(cfg Config) *Scenario {
	cfg = cfg.withDefaults()
	w, h := float64(cfg.Width), float64(cfg.Height)
	s := &Scenario{
		Config: cfg,
		Frames: make([]Frame, cfg.Images),
		Annotators: []AnnotatorLabels{
			{Name: "Ines", Labels: make([][]Object, cfg.Images)},
			{Name: "Tomas", Labels: make([][]Object, cfg.Images)},
		},
		Source:      SuggestionSource,
		Suggestions: make([][]Scored, cfg.Images),
		scenes:      make([]*scene, cfg.Images),
	}
	for i := range cfg.Images {
		sc := layout(newRand(cfg.Seed, streamLayout, i), w, h)
		sc.seed = cfg.Seed
		s.scenes[i] = sc
		truth := sc.truth(w, h)
		s.Frames[i] = Frame{Name: fmt.Sprintf("harbour-%03d.jpg", i+1), Truth: truth}
		s.Annotators[Careful].Labels[i] = carefulLabels(newRand(cfg.Seed, streamCareful, i), truth, w, h)
		s.Annotators[Hasty].Labels[i] = hastyLabels(newRand(cfg.Seed, streamHasty, i), sc, truth, w, h)
		s.Suggestions[i] = suggestions(newRand(cfg.Seed, streamSuggest, i), sc, truth, w, h)
	}
	return s
}

// truth lists the visible objects of the scene with their boxes clipped to
// the image. A sliver at the edge is left out: nobody can label it reliably.
func (sc *scene) truth(w, h float64) []Object {
	var out []Object
	for _, o := range sc.objects {
		full := o.box
		b := full.Clamp(w, h)
		if b.Width() < 4 || b.Height() < 4 || b.Area() < 0.25*full.Area() {
			continue
		}
		b = project.Box{X0: round2(b.X0), Y0: round2(b.Y0), X1: round2(b.X1), Y1: round2(b.Y1)}
		out = append(out, Object{Class: Classes[o.kind], Box: b})
	}
	return out
}

// round2 rounds to a hundredth of a pixel, which keeps exported numbers
// short without changing any measure that matters.
func round2(x float64) float64 { return math.Round(x*100) / 100 }
