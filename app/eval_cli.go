package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"boxwright/project"
	"boxwright/project/eval"
	"boxwright/store"
	"boxwright/suggest"
)

func init() {
	commands["eval"] = cmdEval
}

// evalData is what an evaluation reads from a project.
type evalData struct {
	truthName  string
	source     string
	classes    []project.Class
	className  map[int64]string
	imageName  map[int64]string
	images     []int64 // the images scored
	truths     []eval.Truth
	preds      []eval.Prediction
	skippedOff int // predictions on images the ground truth does not cover
}

// evalJob says what to score against what.
type evalJob struct {
	Truth       string
	Source      string // suggestions of this source, or
	Predictions string // a prediction file
	Layout      suggest.Layout
}

// loadEval reads the ground truth and the predictions. Only images the
// ground-truth annotator covered count: those with their labels, or marked
// done or reviewed (checked and empty); predictions elsewhere are left out
// and counted, since nobody said what is there.
func loadEval(ctx context.Context, st *store.Store, j evalJob) (evalData, error) {
	d := evalData{truthName: j.Truth, source: j.Source, className: map[int64]string{}, imageName: map[int64]string{}}
	a, err := st.AnnotatorByName(ctx, j.Truth)
	if err != nil {
		return d, fmt.Errorf("ground truth annotator %q: %w", j.Truth, err)
	}
	if d.classes, err = st.Classes(ctx); err != nil {
		return d, err
	}
	for _, c := range d.classes {
		d.className[c.ID] = c.Name
	}
	ims, err := st.Images(ctx)
	if err != nil {
		return d, err
	}
	covered := map[int64]bool{}
	for _, im := range ims {
		d.imageName[im.ID] = im.Path
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
			d.truths = append(d.truths, eval.Truth{ImageID: ib.ImageID, ClassID: b.ClassID, Box: b.Box, Ref: int64(len(d.truths))})
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
				d.skippedOff++
				continue
			}
			d.preds = append(d.preds, eval.Prediction{ImageID: g.ImageID, ClassID: g.ClassID, Box: g.Box, Score: g.Score, Ref: int64(len(d.preds))})
		}
	case j.Predictions != "":
		d.source = j.Predictions
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
				d.skippedOff++
				continue
			}
			d.preds = append(d.preds, eval.Prediction{ImageID: p.ImageID, ClassID: p.ClassID, Box: p.Box, Score: p.Score, Ref: int64(len(d.preds))})
		}
	default:
		return d, fmt.Errorf("give the predictions: a source of suggestions or a prediction file")
	}
	for id := range covered {
		d.images = append(d.images, id)
	}
	sort.Slice(d.images, func(i, k int) bool { return d.images[i] < d.images[k] })
	return d, nil
}

func (d evalData) classIDs() []int64 {
	out := make([]int64, len(d.classes))
	for i, c := range d.classes {
		out[i] = c.ID
	}
	return out
}

func cmdEval(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("eval", flag.ContinueOnError)
	truth := fs.String("truth", "", "the annotator whose labels are the ground truth (for example consensus)")
	source := fs.String("source", "", "score the suggestions of this source")
	preds := fs.String("predictions", "", "or score a prediction file (JSON list, text folder or CSV)")
	layout := fs.String("layout", "", "layout of --predictions (default from its extension)")
	protocol := fs.String("protocol", "voc", "voc or coco matching")
	iou := fs.Float64("iou", 0.5, "IoU threshold (VOC-style; COCO-style uses 0.50:0.05:0.95)")
	interp := fs.String("interpolation", "", "all, 11 or 101 (default: all for voc, 101 for coco)")
	plusOne := fs.Bool("plus-one", false, "pixel-inclusive areas (x2−x1+1)·(y2−y1+1), as older toolkits")
	threshold := fs.Float64("threshold", 0.5, "score at which precision, recall and F1 are given")
	asJSON := fs.Bool("json", false, "print JSON")
	const synopsis = "eval PROJECT.boxw --truth ANNOTATOR (--source NAME | --predictions FILE) [--protocol voc|coco] [--iou 0.5] [--interpolation all|11|101] [--plus-one] [--threshold 0.5] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	if *truth == "" || (*source == "") == (*preds == "") {
		return usageError("give --truth and exactly one of --source and --predictions\nusage: boxwright " + synopsis)
	}
	opt, err := evalOptions(*protocol, *iou, *interp, *plusOne, *threshold)
	if err != nil {
		return usageError(err.Error())
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	j := evalJob{Truth: *truth, Source: *source, Predictions: *preds}
	if *preds != "" {
		j.Layout = layoutFromPath(*preds)
		if *layout != "" {
			if j.Layout, err = suggest.ParseLayout(*layout); err != nil {
				return usageError(err.Error())
			}
		}
	}
	d, err := loadEval(ctx, st, j)
	if err != nil {
		return err
	}
	res, err := eval.Evaluate(d.truths, d.preds, opt)
	if err != nil {
		return err
	}
	conf := eval.ConfusionMatrix(d.truths, d.preds, d.classIDs(), opt.IoU, opt.PlusOne)
	if *asJSON {
		return writeJSON(stdout, evalJSON(d, res, conf, opt))
	}
	printEval(stdout, d, res, opt)
	return nil
}

// evalOptions checks and fills the scoring options.
func evalOptions(protocol string, iou float64, interp string, plusOne bool, threshold float64) (eval.Options, error) {
	var opt eval.Options
	p, err := eval.ParseProtocol(protocol)
	if err != nil {
		return opt, err
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
			return opt, err
		}
	}
	return opt, nil
}

func interpName(i eval.Interpolation) string {
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

func protocolName(p eval.Protocol) string {
	if p == eval.COCO {
		return "COCO-style"
	}
	return "VOC-style"
}

func evalJSON(d evalData, res eval.Result, conf eval.Confusion, opt eval.Options) map[string]any {
	ap := map[string]any{}
	curves := map[string]any{}
	var per []map[string]any
	for _, c := range res.Classes {
		name := d.className[c.ClassID]
		ap[name] = num(c.AP)
		pts := make([][3]float64, 0, len(c.Curve))
		for _, p := range c.Curve {
			pts = append(pts, [3]float64{p.Recall, p.Precision, p.Score})
		}
		curves[name] = pts
		per = append(per, map[string]any{"class": name, "truths": c.Truths, "predictions": c.Predictions, "tp": c.TP, "fp": c.FP,
			"ap": num(c.AP), "ap50": num(c.AP50), "ap75": num(c.AP75), "precision": num(c.Precision), "recall": num(c.Recall),
			"f1": num(c.F1), "best_f1": num(c.BestF1), "best_f1_threshold": num(c.BestF1Threshold)})
	}
	names := make([]string, 0, len(conf.Classes)+1)
	for _, c := range conf.Classes {
		names = append(names, d.className[c])
	}
	return map[string]any{
		"truth": d.truthName, "predictions": d.source, "protocol": strings.ToLower(strings.TrimSuffix(protocolName(opt.Protocol), "-style")),
		"iou": opt.IoU, "interpolation": interpName(opt.Interpolation), "plus_one": opt.PlusOne, "score_threshold": opt.ScoreThreshold,
		"images": len(d.images), "left_out_predictions": d.skippedOff,
		"ap": ap, "map": num(res.MAP), "ap50": num(res.AP50), "ap75": num(res.AP75), "ap50_95": num(res.AP50_95),
		"precision": num(res.Precision), "recall": num(res.Recall), "f1": num(res.F1), "best_f1": num(res.BestF1), "best_f1_threshold": num(res.BestF1Threshold),
		"per_class": per, "curves": curves,
		"confusion": map[string]any{"rows": append(append([]string{}, names...), "false alarm"), "columns": append(append([]string{}, names...), "missed"), "counts": conf.Counts},
	}
}

func printEval(w io.Writer, d evalData, res eval.Result, opt eval.Options) {
	iou := fmt.Sprintf("IoU ≥ %.2f", opt.IoU)
	if opt.Protocol == eval.COCO {
		iou = "IoU 0.50:0.05:0.95"
	}
	conv := "continuous IoU"
	if opt.PlusOne {
		conv = "pixel-inclusive (+1) areas"
	}
	fmt.Fprintf(w, "%s against the labels of %s: %d images, %d ground-truth boxes, %d predictions\n", d.source, d.truthName, len(d.images), len(d.truths), len(d.preds))
	fmt.Fprintf(w, "%s matching, %s, %s AP, %s\n", protocolName(opt.Protocol), iou, interpName(opt.Interpolation), conv)
	fmt.Fprintln(w, "  class             truth   pred     TP     FP      AP   best F1 at score")
	for _, c := range res.Classes {
		fmt.Fprintf(w, "  %-14s %8d %6d %6d %6d  %s  %s at %s\n", d.className[c.ClassID], c.Truths, c.Predictions, c.TP, c.FP, f4(c.AP), f4(c.BestF1), f4(c.BestF1Threshold))
	}
	fmt.Fprintf(w, "mAP %s   AP50 %s   AP75 %s   AP[.50:.95] %s\n", f4(res.MAP), f4(res.AP50), f4(res.AP75), f4(res.AP50_95))
	fmt.Fprintf(w, "at score ≥ %.2f: precision %s, recall %s, F1 %s; the best F1 %s is at score %s\n", opt.ScoreThreshold, f4(res.Precision), f4(res.Recall), f4(res.F1), f4(res.BestF1), f4(res.BestF1Threshold))
	if d.skippedOff > 0 {
		fmt.Fprintf(w, "note: %d predictions lie on images %s has not labelled or marked done; they are left out\n", d.skippedOff, d.truthName)
	}
}
