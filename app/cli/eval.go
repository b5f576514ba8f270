package cli

import (
	"flag"
	"fmt"
	"io"
	"strings"

	"boxwright/app/ops"
	"boxwright/project/eval"
	"boxwright/suggest"
)

func cmdEval(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("eval", flag.ContinueOnError)
	truth := fs.String("truth", "", "the annotator whose labels are the ground truth (for example consensus)")
	source := fs.String("source", "", "score the suggestions of this source")
	preds := fs.String("predictions", "", "or score a prediction file (JSON list, text folder or CSV)")
	layout := fs.String("layout", "", "layout of --predictions (default from its extension)")
	protocol := fs.String("protocol", "voc", "voc or coco matching")
	iou := floatAbove(fs, "iou", 0.5, 0, 1, "IoU threshold (VOC-style; COCO-style uses 0.50:0.05:0.95)")
	interp := fs.String("interpolation", "", "all, 11 or 101 (default: all for voc, 101 for coco)")
	plusOne := fs.Bool("plus-one", false, "pixel-inclusive areas (x2−x1+1)·(y2−y1+1), as older toolkits")
	threshold := floatIn(fs, "threshold", 0.5, 0, 1, "score at which precision, recall and F1 are given")
	asJSON := fs.Bool("json", false, "print JSON")
	const synopsis = "eval PROJECT.boxw --truth ANNOTATOR (--source NAME | --predictions FILE) [--protocol voc|coco] [--iou 0.5] [--interpolation all|11|101|step] [--plus-one] [--threshold 0.5] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	if *truth == "" || (*source == "") == (*preds == "") {
		return usageError("give --truth and exactly one of --source and --predictions\nusage: boxwright " + synopsis)
	}
	opt, err := ops.EvalOptions(*protocol, *iou, *interp, *plusOne, *threshold)
	if err != nil {
		return usageError(err.Error())
	}
	st, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	j := ops.EvalJob{Truth: *truth, Source: *source, Predictions: *preds}
	if *preds != "" {
		j.Layout = ops.LayoutFromPath(*preds)
		if *layout != "" {
			if j.Layout, err = suggest.ParsePredictionLayout(*layout); err != nil {
				return usageError(err.Error())
			}
		}
	}
	d, err := ops.LoadEval(ctx, st, j)
	if err != nil {
		return err
	}
	res, err := eval.Evaluate(d.Truths, d.Preds, opt)
	if err != nil {
		return err
	}
	conf := eval.ConfusionMatrix(d.Truths, d.Preds, d.ClassIDs(), opt.IoU, opt.PlusOne)
	if *asJSON {
		return writeJSON(stdout, evalJSON(d, res, conf, opt))
	}
	printEval(stdout, d, res, opt)
	return nil
}

func evalJSON(d ops.EvalData, res eval.Result, conf eval.Confusion, opt eval.Options) map[string]any {
	ap := map[string]any{}
	curves := map[string]any{}
	var per []map[string]any
	for _, c := range res.Classes {
		name := d.ClassName[c.ClassID]
		ap[name] = ops.Num(c.AP)
		pts := make([][3]float64, 0, len(c.Curve))
		for _, p := range c.Curve {
			pts = append(pts, [3]float64{p.Recall, p.Precision, p.Score})
		}
		curves[name] = pts
		per = append(per, map[string]any{"class": name, "truths": c.Truths, "predictions": c.Predictions, "tp": c.TP, "fp": c.FP,
			"ap": ops.Num(c.AP), "ap50": ops.Num(c.AP50), "ap75": ops.Num(c.AP75), "precision": ops.Num(c.Precision), "recall": ops.Num(c.Recall),
			"f1": ops.Num(c.F1), "best_f1": ops.Num(c.BestF1), "best_f1_threshold": ops.Num(c.BestF1Threshold)})
	}
	names := make([]string, 0, len(conf.Classes)+1)
	for _, c := range conf.Classes {
		names = append(names, d.ClassName[c])
	}
	return map[string]any{
		"truth": d.TruthName, "predictions": d.Source, "protocol": strings.ToLower(strings.TrimSuffix(ops.ProtocolName(opt.Protocol), "-style")),
		"iou": opt.IoU, "interpolation": ops.InterpName(opt.Interpolation), "plus_one": opt.PlusOne, "score_threshold": opt.ScoreThreshold,
		"images": len(d.Images), "left_out_predictions": d.SkippedOff,
		"ap": ap, "map": ops.Num(res.MAP), "ap50": ops.Num(res.AP50), "ap75": ops.Num(res.AP75), "ap50_95": ops.Num(res.AP50_95),
		"precision": ops.Num(res.Precision), "recall": ops.Num(res.Recall), "f1": ops.Num(res.F1), "best_f1": ops.Num(res.BestF1), "best_f1_threshold": ops.Num(res.BestF1Threshold),
		"per_class": per, "curves": curves,
		"confusion": map[string]any{"rows": append(append([]string{}, names...), "false alarm"), "columns": append(append([]string{}, names...), "missed"), "counts": conf.Counts},
	}
}

func printEval(w io.Writer, d ops.EvalData, res eval.Result, opt eval.Options) {
	iou := fmt.Sprintf("IoU ≥ %.2f", opt.IoU)
	if opt.Protocol == eval.COCO {
		iou = "IoU 0.50:0.05:0.95"
	}
	conv := "continuous IoU"
	if opt.PlusOne {
		conv = "pixel-inclusive (+1) areas"
	}
	fmt.Fprintf(w, "%s against the labels of %s: %s, %s, %s\n", d.Source, d.TruthName, ops.Plural(len(d.Images), "image"), ops.Plural(len(d.Truths), "ground-truth box"), ops.Plural(len(d.Preds), "prediction"))
	fmt.Fprintf(w, "%s matching, %s, %s AP, %s\n", ops.ProtocolName(opt.Protocol), iou, ops.InterpName(opt.Interpolation), conv)
	fmt.Fprintln(w, "  class             truth   pred     TP     FP      AP   best F1 at score")
	for _, c := range res.Classes {
		fmt.Fprintf(w, "  %-14s %8d %6d %6d %6d  %s  %s at %s\n", d.ClassName[c.ClassID], c.Truths, c.Predictions, c.TP, c.FP, ops.F4(c.AP), ops.F4(c.BestF1), ops.F4(c.BestF1Threshold))
	}
	fmt.Fprintf(w, "mAP %s   AP50 %s   AP75 %s   AP[.50:.95] %s\n", ops.F4(res.MAP), ops.F4(res.AP50), ops.F4(res.AP75), ops.F4(res.AP50_95))
	fmt.Fprintf(w, "at score ≥ %.2f: precision %s, recall %s, F1 %s; the best F1 %s is at score %s\n", opt.ScoreThreshold, ops.F4(res.Precision), ops.F4(res.Recall), ops.F4(res.F1), ops.F4(res.BestF1), ops.F4(res.BestF1Threshold))
	if d.SkippedOff > 0 {
		fmt.Fprintf(w, "note: %s on images %s has not labelled or marked done are left out\n", ops.Plural(d.SkippedOff, "prediction"), d.TruthName)
	}
}
