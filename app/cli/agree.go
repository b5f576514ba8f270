package cli

import (
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"boxwright/app/ops"
	"boxwright/project/agree"
)

func splitNames(s string) []string {
	var out []string
	for _, n := range strings.Split(s, ",") {
		if n = strings.TrimSpace(n); n != "" {
			out = append(out, n)
		}
	}
	return out
}

func cmdAgree(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("agree", flag.ContinueOnError)
	who := fs.String("annotators", "", "annotators to compare, comma-separated (at least two)")
	iou := floatAbove(fs, "iou", agree.DefaultThreshold, 0, 1, "IoU at which two boxes count as the same object")
	aware := fs.Bool("class-aware", false, "pair only boxes of the same class")
	asJSON := fs.Bool("json", false, "print JSON")
	asCSV := fs.Bool("csv", false, "print the table of annotator pairs as CSV")
	worst := intIn(fs, "worst", 20, 0, 1000000, "how many of the most disputed images to list")
	weights := fs.String("weights", "none", "weighted kappa for ordered classes (in class order): none, linear, quadratic or a k×k CSV of disagreement weights")
	pos, err := parse(fs, args, 1, 1, "agree PROJECT.boxw --annotators A,B[,C…] [--iou 0.5] [--class-aware] [--json|--csv]")
	if err != nil {
		return err
	}
	names := splitNames(*who)
	if err := distinctNames(names); err != nil {
		return err
	}
	if *asJSON && *asCSV {
		return usageError("choose --json or --csv, not both")
	}
	st, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	d, err := ops.LoadAgreement(ctx, st, names)
	if err != nil {
		return err
	}
	opt := agree.Options{Threshold: *iou, ClassAware: *aware, Classes: d.ClassOrder()}
	switch *weights {
	case "none", "":
	case "linear", "quadratic":
		opt.Weights, _ = agree.DisagreementWeights(*weights, len(opt.Classes))
	default:
		wm, err := readWeightsFile(*weights)
		if err != nil {
			return err
		}
		w := wm.Values
		if len(w) != len(opt.Classes) {
			return fmt.Errorf("%s: %d×%d weights for the project's %d classes (%s)", *weights, len(w), len(w), len(opt.Classes), strings.Join(d.Names(opt.Classes), ", "))
		}
		opt.Weights = w
	}
	rep, err := agree.Compare(d.Images, len(d.Annotators), opt, nil)
	if err != nil {
		return err
	}
	switch {
	case *asJSON:
		return writeJSON(stdout, agreementJSON(d, rep, *worst))
	case *asCSV:
		return writePairsCSV(stdout, d, rep)
	}
	printAgreement(stdout, d, rep, *worst)
	return nil
}

func kappaJSON(k agree.Kappa) map[string]any {
	m := map[string]any{"kappa": ops.Num(k.Kappa), "se": ops.Num(k.SE), "ci95": ops.Interval(k.CI95), "se0": ops.Num(k.SE0), "z": ops.Num(k.Z),
		"po": ops.Num(k.Po), "pe": ops.Num(k.Pe), "n": k.N, "band": nil, "notes": k.Notes}
	if !math.IsNaN(k.Kappa) {
		m["band"] = agree.Band(k.Kappa)
	}
	if k.Notes == nil {
		m["notes"] = []string{}
	}
	return m
}

func classJSON(d ops.AgreementData, cs []agree.ClassAgreement, withKappa bool) []map[string]any {
	var out []map[string]any
	for _, c := range cs {
		m := map[string]any{"class": d.Name(c.Class), "a": c.A, "b": c.B, "agreed": c.Agreed, "confused": c.Confused,
			"a_only": c.OnlyA, "b_only": c.OnlyB, "f1": ops.Num(c.F1), "mean_iou": ops.Num(c.MeanIoU)}
		if withKappa {
			m["kappa"] = ops.Num(c.Kappa.Kappa)
			m["se"] = ops.Num(c.Kappa.SE)
			m["ci95"] = ops.Interval(c.Kappa.CI95)
		}
		out = append(out, m)
	}
	return out
}

func agreementJSON(d ops.AgreementData, rep agree.Report, worst int) map[string]any {
	var names []string
	for _, a := range d.Annotators {
		names = append(names, a.Name)
	}
	var pairs []map[string]any
	for _, p := range rep.Pairs {
		counts := p.Confusion
		if counts == nil {
			counts = [][]float64{}
		}
		m := map[string]any{
			"a": names[p.A], "b": names[p.B], "images": p.Images, "a_boxes": p.NA, "b_boxes": p.NB,
			"matched": p.Matched, "a_only": p.OnlyA, "b_only": p.OnlyB, "f1": ops.Num(p.F1),
			"mean_iou": ops.Num(p.IoU.Mean), "median_iou": ops.Num(p.IoU.Median), "p10_iou": ops.Num(p.IoU.P10), "p90_iou": ops.Num(p.IoU.P90),
			"iou_histogram": p.IoU.Histogram,
			"kappa":         ops.Num(p.Kappa.Kappa), "se": ops.Num(p.Kappa.SE), "ci95": ops.Interval(p.Kappa.CI95), "se0": ops.Num(p.Kappa.SE0), "z": ops.Num(p.Kappa.Z),
			"band":                     nil,
			"confusion":                map[string]any{"classes": d.Names(p.Classes), "counts": counts},
			"kappa_with_no_object":     kappaJSON(p.KappaWithNoObject),
			"confusion_with_no_object": map[string]any{"classes": append(d.Names(p.Classes), "no object"), "counts": p.ConfusionWithNoObject},
			"per_class":                classJSON(d, p.PerClass, true),
		}
		if p.WeightedKappa != nil {
			m["weighted_kappa"] = kappaJSON(*p.WeightedKappa)
		}
		if !math.IsNaN(p.Kappa.Kappa) {
			m["band"] = agree.Band(p.Kappa.Kappa)
		}
		pairs = append(pairs, m)
	}
	var fleiss any
	if rep.Fleiss != nil {
		fleiss = ops.Num(rep.Fleiss.Kappa)
	}
	var ws []map[string]any
	for _, w := range rep.Worst(worst) {
		ws = append(ws, map[string]any{"image": w.Name, "image_id": w.ImageID, "errors": w.Errors, "lowest_f1": ops.Num(w.F1)})
	}
	notes := append([]string{}, rep.Notes...)
	notes = append(notes, rep.Alpha.Notes...)
	return map[string]any{
		"annotators": names, "iou_threshold": rep.Threshold, "class_aware": rep.Options.ClassAware,
		"pairs": pairs, "objects": rep.Objects, "fleiss_kappa": fleiss, "krippendorff_alpha": ops.Num(rep.Alpha.Alpha),
		"per_class": classJSON(d, rep.PooledClasses(), len(rep.Pairs) == 1), "worst_images": ws,
		"band_source": agree.BandCitation + "; " + agree.BandRule,
		"notes":       notes,
	}
}

func writePairsCSV(w io.Writer, d ops.AgreementData, rep agree.Report) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"a", "b", "images", "a_boxes", "b_boxes", "matched", "a_only", "b_only", "f1", "mean_iou", "median_iou", "kappa", "se", "ci95_low", "ci95_high", "band"})
	for _, p := range rep.Pairs {
		band := ""
		if !math.IsNaN(p.Kappa.Kappa) {
			band = agree.Band(p.Kappa.Kappa)
		}
		cw.Write([]string{d.Annotators[p.A].Name, d.Annotators[p.B].Name, strconv.Itoa(p.Images), strconv.Itoa(p.NA), strconv.Itoa(p.NB),
			strconv.Itoa(p.Matched), strconv.Itoa(p.OnlyA), strconv.Itoa(p.OnlyB), ops.CSVNum(p.F1), ops.CSVNum(p.IoU.Mean), ops.CSVNum(p.IoU.Median),
			ops.CSVNum(p.Kappa.Kappa), ops.CSVNum(p.Kappa.SE), ops.CSVNum(p.Kappa.CI95[0]), ops.CSVNum(p.Kappa.CI95[1]), band})
	}
	cw.Flush()
	return cw.Error()
}

func printAgreement(w io.Writer, d ops.AgreementData, rep agree.Report, worst int) {
	mode := "class-agnostic"
	if rep.Options.ClassAware {
		mode = "class-aware"
	}
	fmt.Fprintf(w, "Box agreement at IoU ≥ %.2f, %s matching\n", rep.Threshold, mode)
	for _, p := range rep.Pairs {
		fmt.Fprintf(w, "\n%s vs %s: %s, %s, %d only %s, %d only %s, detection F1 %s\n",
			d.Annotators[p.A].Name, d.Annotators[p.B].Name, ops.Plural(p.Images, "image"), ops.Plural(p.Matched, "matched pair"), p.OnlyA, d.Annotators[p.A].Name, p.OnlyB, d.Annotators[p.B].Name, ops.F4(p.F1))
		fmt.Fprintf(w, "  IoU of matched pairs: mean %s, median %s, 10th percentile %s, 90th %s\n", ops.F4(p.IoU.Mean), ops.F4(p.IoU.Median), ops.F4(p.IoU.P10), ops.F4(p.IoU.P90))
		fmt.Fprintf(w, "  Cohen's kappa on the classes of matched pairs: %s, 95 %% CI %s\n", ops.FormatKappa(p.Kappa), ops.CI(p.Kappa.CI95))
		if p.WeightedKappa != nil {
			fmt.Fprintf(w, "  weighted kappa (ordered classes): %s, 95 %% CI %s\n", ops.FormatKappa(*p.WeightedKappa), ops.CI(p.WeightedKappa.CI95))
		}
		fmt.Fprintf(w, "  counting unmatched boxes as \"no object\": %s (biased low, see notes)\n", ops.FormatKappa(p.KappaWithNoObject))
	}
	if rep.Fleiss != nil {
		fmt.Fprintf(w, "\nFleiss' kappa over %d objects: %s\n", rep.Objects, ops.F4(rep.Fleiss.Kappa))
	}
	fmt.Fprintf(w, "Krippendorff's alpha (nominal) over %d objects: %s\n", rep.Objects, ops.F4(rep.Alpha.Alpha))
	fmt.Fprintln(w, "\nPer class (pooled over pairs): class, boxes A, boxes B, agreed, F1, mean IoU")
	for _, c := range rep.PooledClasses() {
		fmt.Fprintf(w, "  %-16s %6d %6d %6d  %s  %s\n", d.Name(c.Class), c.A, c.B, c.Agreed, ops.F4(c.F1), ops.F4(c.MeanIoU))
	}
	if ws := rep.Worst(worst); len(ws) > 0 {
		fmt.Fprintln(w, "\nMost disputed images (unmatched boxes + class disagreements):")
		for _, im := range ws {
			if im.Errors == 0 {
				break
			}
			fmt.Fprintf(w, "  %4d  %s\n", im.Errors, im.Name)
		}
	}
	fmt.Fprintf(w, "\nBands: %s. %s\n", agree.BandCitation, agree.BandRule)
	for _, n := range append(rep.Notes, agree.NoObjectCaveat) {
		fmt.Fprintf(w, "note: %s\n", n)
	}
}

func cmdConsensus(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("consensus", flag.ContinueOnError)
	who := fs.String("annotators", "", "annotators to combine, comma-separated (at least two)")
	iou := floatAbove(fs, "iou", agree.DefaultThreshold, 0, 1, "IoU at which boxes count as the same object")
	minSupport := intIn(fs, "min", 0, 1, 1000000, "keep objects drawn by at least this many annotators (default: a majority)")
	median := fs.Bool("median", false, "use the median of the members' coordinates instead of the mean")
	pos, err := parse(fs, args, 1, 1, "consensus PROJECT.boxw --annotators A,B[,C…] [--iou 0.5] [--min K] [--median]")
	if err != nil {
		return err
	}
	names := splitNames(*who)
	if err := distinctNames(names); err != nil {
		return err
	}
	for _, n := range names {
		if n == ops.ConsensusName {
			return usageError("the consensus cannot be one of its own inputs")
		}
	}
	if *minSupport > len(names) {
		return usageError(fmt.Sprintf("--min %d is more than the %d annotators", *minSupport, len(names)))
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	n, ties, err := ops.StoreConsensus(ctx, st, names, *iou, *minSupport, *median)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "stored %s as annotator %q (%d tied class votes, marked for review in their source)\n", ops.Plural(n, "consensus box"), ops.ConsensusName, ties)
	return nil
}

// distinctNames refuses fewer than two annotators or one named twice, as
// a usage error: nothing is opened for a command line that cannot work.
func distinctNames(names []string) error {
	if len(names) < 2 {
		return usageError("give at least two annotators, comma-separated: --annotators A,B[,C…]")
	}
	for i, n := range names {
		if slices.Contains(names[:i], n) {
			return usageError(fmt.Sprintf("--annotators names %q twice", n))
		}
	}
	return nil
}
