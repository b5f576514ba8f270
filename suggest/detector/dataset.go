package detector

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"

	"boxwright/project"
)

// Example is one image a detector learns from or is checked on: the image
// and its boxes, each with the index of its class in the training set's
// Classes. An example without boxes is a negative (an image marked done on
// which nothing was drawn).
type Example struct {
	Image   project.Image
	Boxes   []project.Box
	Classes []int
}

// DataOptions say what a training run learns from.
type DataOptions struct {
	// Classes to learn, by name; empty means every class that has boxes.
	Classes []string
	// Validation is the share of images held out for validation (0 to 0.9).
	Validation float64
	// Seed fixes the split.
	Seed uint64
	// MinBoxes is the fewest boxes a class needs to be learned; 0 means
	// DefaultMinBoxes.
	MinBoxes int
}

// DefaultMinBoxes is the fewest boxes of a class worth training on: fewer
// give a model that mostly remembers them (common practice, order of
// magnitude).
const DefaultMinBoxes = 10

// TrainingSet is the data of one training run.
type TrainingSet struct {
	Classes   []string // output order of the model
	ClassIDs  []int64  // project class IDs, same order
	Train     []Example
	Val       []Example
	BoxCounts []int // boxes per class over Train and Val
	// Skipped names the classes asked for (or present) that were left out,
	// with the reason.
	Skipped []string
}

// Candidate is an image that may be used: its labels by the chosen
// annotator, and whether someone marked it done or reviewed.
type Candidate struct {
	Image  project.Image
	Labels []project.Label
	Done   bool
}

// Prepare chooses the classes and images of a training run and splits the
// images, seeded, into training and validation. Images that have labels of
// the chosen classes, or are marked done (negatives), are used; skipped
// images never are. A class without boxes is skipped and named; a class
// asked for with too few boxes is an error that says how many it has and
// needs.
func Prepare(cands []Candidate, classes []project.Class, opt DataOptions) (TrainingSet, error) {
	var ts TrainingSet
	if opt.Validation < 0 || opt.Validation > 0.9 || math.IsNaN(opt.Validation) {
		return ts, project.Explained(project.ErrInvalid, "validation share %v: give a number from 0 to 0.9", opt.Validation)
	}
	minBoxes := opt.MinBoxes
	if minBoxes <= 0 {
		minBoxes = DefaultMinBoxes
	}
	count := map[int64]int{}
	for _, c := range cands {
		if c.Image.Status == project.StatusSkipped {
			continue
		}
		for _, l := range c.Labels {
			count[l.ClassID]++
		}
	}
	byName := map[string]project.Class{}
	for _, c := range classes {
		byName[c.Name] = c
	}
	var chosen []project.Class
	if len(opt.Classes) == 0 {
		for _, c := range classes {
			if count[c.ID] == 0 {
				continue
			}
			if count[c.ID] < minBoxes {
				ts.Skipped = append(ts.Skipped, fmt.Sprintf("%s: %d boxes, at least %d needed", c.Name, count[c.ID], minBoxes))
				continue
			}
			chosen = append(chosen, c)
		}
	} else {
		var few []string
		for _, name := range opt.Classes {
			c, ok := byName[name]
			switch {
			case !ok:
				return ts, fmt.Errorf("class %q is not in the project: %w", name, project.ErrNotFound)
			case slices.ContainsFunc(chosen, func(x project.Class) bool { return x.ID == c.ID }):
				return ts, project.Explained(project.ErrInvalid, "class %q is named twice", name)
			case count[c.ID] == 0:
				ts.Skipped = append(ts.Skipped, fmt.Sprintf("%s: no boxes", name))
			case count[c.ID] < minBoxes:
				few = append(few, fmt.Sprintf("%s has %d boxes", name, count[c.ID]))
			default:
				chosen = append(chosen, c)
			}
		}
		if len(few) > 0 {
			return ts, project.Explained(project.ErrInvalid, "too few boxes to train: %s; each class needs at least %d", strings.Join(few, ", "), minBoxes)
		}
	}
	if len(chosen) == 0 {
		why := "no class has boxes"
		if len(ts.Skipped) > 0 {
			why = strings.Join(ts.Skipped, "; ")
		}
		return ts, project.Explained(project.ErrInvalid, "nothing to train on: %s", why)
	}
	index := map[int64]int{}
	for i, c := range chosen {
		ts.Classes = append(ts.Classes, c.Name)
		ts.ClassIDs = append(ts.ClassIDs, c.ID)
		index[c.ID] = i
	}
	ts.BoxCounts = make([]int, len(chosen))
	var all []Example
	for _, c := range cands {
		if c.Image.Status == project.StatusSkipped {
			continue
		}
		ex := Example{Image: c.Image}
		for _, l := range c.Labels {
			if k, ok := index[l.ClassID]; ok {
				ex.Boxes = append(ex.Boxes, l.Box)
				ex.Classes = append(ex.Classes, k)
				ts.BoxCounts[k]++
			}
		}
		// Labels of other classes make an image no negative: an object is
		// there, just not one this run learns.
		if len(ex.Boxes) > 0 || (c.Done && len(c.Labels) == 0) {
			all = append(all, ex)
		}
	}
	sort.Slice(all, func(i, j int) bool { return all[i].Image.ID < all[j].Image.ID })
	r := rand.New(rand.NewPCG(opt.Seed, 0x626f7877))
	r.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	nVal := int(math.Round(opt.Validation * float64(len(all))))
	if opt.Validation > 0 && nVal == 0 && len(all) >= 2 {
		nVal = 1
	}
	if nVal >= len(all) {
		nVal = len(all) - 1
	}
	ts.Val, ts.Train = all[:nVal], all[nVal:]
	sortByID := func(es []Example) {
		sort.Slice(es, func(i, j int) bool { return es[i].Image.ID < es[j].Image.ID })
	}
	sortByID(ts.Val)
	sortByID(ts.Train)
	return ts, nil
}

// InputSizes are the long sides the network input may have; multiples of
// 32 so that every stride-2 stage halves evenly.
var InputSizes = []int{256, 320, 384, 448, 512, 576, 640}

// minObjectInput is the side, in input pixels, that the smaller objects
// should keep: at stride 4 that is 2 cells of the heat map, enough for a
// peak of their own.
const minObjectInput = 8

// ChooseInputSize picks the long side of the network input from the boxes:
// the smallest of InputSizes at which the 10th percentile of the boxes'
// shorter sides is still minObjectInput pixels, and no larger than the
// first size that reaches the images' own long side.
func ChooseInputSize(examples []Example) int {
	var sides []float64
	longest := 0
	for _, e := range examples {
		longest = max(longest, e.Image.Width, e.Image.Height)
		for _, b := range e.Boxes {
			sides = append(sides, min(b.Width(), b.Height())/float64(max(e.Image.Width, e.Image.Height)))
		}
	}
	if len(sides) == 0 || longest == 0 {
		return InputSizes[0]
	}
	sort.Float64s(sides)
	small := sides[len(sides)/10]
	for _, s := range InputSizes {
		if s >= longest {
			return s
		}
		if small*float64(s) >= minObjectInput {
			return s
		}
	}
	return InputSizes[len(InputSizes)-1]
}
