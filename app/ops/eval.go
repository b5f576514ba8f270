package ops

import (
	"context"
	"fmt"
	"math"
	"sort"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/project/eval"
	"boxwright/suggest"
)

// EvalData is what an evaluation reads from a project.
type EvalData struct {
	TruthName  string
	Source     string
	classes    []project.Class
	ClassName  map[int64]string
	ImageName  map[int64]string
	Images     []int64 // the images scored
	Truths     []eval.Truth
	Preds      []eval.Prediction
	SkippedOff int // predictions on images the ground truth does not cover
}

// EvalJob says what to score against what.
type EvalJob struct {
	Truth       string
	Source      string // suggestions of this source, or
	Predictions string // a prediction file
	Layout      suggest.PredictionLayout
}

// LoadEval reads the ground truth and the predictions. Only images the
// ground-truth annotator covered count: those with their labels, or marked
// done or reviewed (checked and empty); predictions elsewhere are left out
// and counted, since nobody said what is there.
func LoadEval(ctx context.Context, st backend.Project, j EvalJob) (EvalData, error) {
	d := EvalData{TruthName: j.Truth, Source: j.Source, ClassName: map[int64]string{}, ImageName: map[int64]string{}}
	a, err := st.AnnotatorByName(ctx, j.Truth)
	if err != nil {
		return d, fmt.Errorf("ground truth (--truth): %w", err)
	}
	if d.classes, err = st.Classes(ctx); err != nil {
		return d, err
	}
	for _, c := range d.classes {
		d.ClassName[c.ID] = c.Name
	}
	ims, err := st.ImagesFor(ctx, a.ID) // the ground truth's own status
	if err != nil {
		return d, err
	}
	covered := map[int64]bool{}
	for _, im := range ims {
		d.ImageName[im.ID] = im.Path
		if im.Status == project.StatusDone || im.Status == project.StatusReviewed {
			covered[im.ID] = true
		}
	}
	ibs, err := st.BoxesByImage(ctx, []int64{a.ID})
	if err != nil {
		return d, err
	}
	for _, ib := range ibs {
		covered[ib.ImageID] = true
		for _, b := range ib.Boxes {
			d.Truths = append(d.Truths, eval.Truth{ImageID: ib.ImageID, ClassID: b.ClassID, Box: b.Box, Ref: int64(len(d.Truths))})
		}
	}
	switch {
	case j.Source != "":
		gs, err := st.Suggestions(ctx, project.SuggestionFilter{Source: j.Source})
		if err != nil {
			return d, err
		}
		if len(gs) == 0 {
			return d, fmt.Errorf("the project has no suggestions of source %q", j.Source)
		}
		for _, g := range gs {
			if !covered[g.ImageID] {
				d.SkippedOff++
				continue
			}
			d.Preds = append(d.Preds, eval.Prediction{ImageID: g.ImageID, ClassID: g.ClassID, Box: g.Box, Score: g.Score, Ref: int64(len(d.Preds))})
		}
	case j.Predictions != "":
		d.Source = j.Predictions
		src := &suggest.FileSource{Source: "predictions", Layout: j.Layout, Path: j.Predictions}
		ps, err := src.Suggest(ctx, ims, d.classes, nil)
		if err != nil {
			return d, err
		}
		for _, p := range ps {
			if p.ClassID == 0 {
				return d, fmt.Errorf("%s: class %q is not a class of the project, so it cannot be scored (at %s)", j.Predictions, p.ClassName, p.Where)
			}
			if !covered[p.ImageID] {
				d.SkippedOff++
				continue
			}
			d.Preds = append(d.Preds, eval.Prediction{ImageID: p.ImageID, ClassID: p.ClassID, Box: p.Box, Score: p.Score, Ref: int64(len(d.Preds))})
		}
	default:
		return d, fmt.Errorf("give the predictions: a source of suggestions or a prediction file")
	}
	for id := range covered {
		d.Images = append(d.Images, id)
	}
	sort.Slice(d.Images, func(i, k int) bool { return d.Images[i] < d.Images[k] })
	return d, nil
}

// ClassIDs is the project's class IDs in display order.
func (d EvalData) ClassIDs() []int64 {
	out := make([]int64, len(d.classes))
	for i, c := range d.classes {
		out[i] = c.ID
	}
	return out
}

// EvalOptions checks and fills the scoring options.
func EvalOptions(protocol string, iou float64, interp string, plusOne bool, threshold float64) (eval.Options, error) {
	var opt eval.Options
	p, err := eval.ParseProtocol(protocol)
	if err != nil {
		return opt, fmt.Errorf("--protocol %q: give voc or coco", protocol)
	}
	if iou <= 0 || iou > 1 || math.IsNaN(iou) {
		return opt, fmt.Errorf("--iou %g: give a number in (0, 1]", iou)
	}
	opt.Protocol, opt.IoU, opt.PlusOne, opt.ScoreThreshold = p, iou, plusOne, threshold
	opt.Interpolation = eval.AllPoint
	if p == eval.COCO {
		opt.Interpolation = eval.Point101
	}
	if interp != "" {
		if opt.Interpolation, err = eval.ParseInterpolation(interp); err != nil {
			return opt, fmt.Errorf("--interpolation %q: give all, 11, 101 or step", interp)
		}
	}
	return opt, nil
}

// InterpName is the name reports give an interpolation.
func InterpName(i eval.Interpolation) string {
	switch i {
	case eval.ElevenPoint:
		return "11-point"
	case eval.Point101:
		return "101-point"
	case eval.Step:
		return "non-interpolated"
	}
	return "all-point"
}

// ProtocolName is the name reports give a matching protocol.
func ProtocolName(p eval.Protocol) string {
	if p == eval.COCO {
		return "COCO-style"
	}
	return "VOC-style"
}
