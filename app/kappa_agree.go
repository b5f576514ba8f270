package main

import (
	"context"
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"boxwright/project"
	"boxwright/project/agree"
	"boxwright/store"
)

// consensusName is the derived annotator that holds the consensus.
const consensusName = "consensus"

// agreementData is what a comparison reads from a project.
type agreementData struct {
	annotators []project.Annotator
	classes    []project.Class
	className  map[int64]string
	images     []agree.ImageLabels
}

// loadAgreement reads the boxes of the named annotators, grouped by image.
func loadAgreement(ctx context.Context, st *store.Store, names []string) (agreementData, error) {
	var d agreementData
	if len(names) < 2 {
		return d, errNoAnnotators
	}
	pos := map[int64]int{}
	var ids []int64
	for i, n := range names {
		a, err := st.AnnotatorByName(ctx, n)
		if err != nil {
			return d, fmt.Errorf("annotator %q: %w", n, err)
		}
		if _, dup := pos[a.ID]; dup {
			return d, fmt.Errorf("annotator %q is named twice", n)
		}
		pos[a.ID] = i
		ids = append(ids, a.ID)
		d.annotators = append(d.annotators, a)
	}
	cs, err := st.Classes(ctx)
	if err != nil {
		return d, err
	}
	d.classes, d.className = cs, map[int64]string{}
	for _, c := range cs {
		d.className[c.ID] = c.Name
	}
	ims, err := st.Images(ctx)
	if err != nil {
		return d, err
	}
	names2 := map[int64]string{}
	for _, im := range ims {
		names2[im.ID] = filepath.ToSlash(im.Path)
	}
	ibs, err := st.BoxesByImage(ctx, ids)
	if err != nil {
		return d, err
	}
	d.images = make([]agree.ImageLabels, len(ibs))
	for i, ib := range ibs {
		im := agree.ImageLabels{ImageID: ib.ImageID, Name: names2[ib.ImageID], By: make([]agree.Labels, len(names))}
		for _, b := range ib.Boxes {
			l := &im.By[pos[b.AnnotatorID]]
			l.Boxes = append(l.Boxes, b.Box)
			l.Classes = append(l.Classes, b.ClassID)
		}
		d.images[i] = im
	}
	return d, ctx.Err()
}

func (d agreementData) classOrder() []int64 {
	var out []int64
	for _, c := range d.classes {
		out = append(out, c.ID)
	}
	return out
}

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
	iou := fs.Float64("iou", agree.DefaultThreshold, "IoU at which two boxes count as the same object")
	aware := fs.Bool("class-aware", false, "pair only boxes of the same class")
	asJSON := fs.Bool("json", false, "print JSON")
	asCSV := fs.Bool("csv", false, "print the table of annotator pairs as CSV")
	worst := fs.Int("worst", 20, "how many of the most disputed images to list")
	weights := fs.String("weights", "none", "weighted kappa for ordered classes (in class order): none, linear, quadratic or a k×k CSV of disagreement weights")
	pos, err := parse(fs, args, 1, 1, "agree PROJECT.boxw --annotators A,B[,C…] [--iou 0.5] [--class-aware] [--json|--csv]")
	if err != nil {
		return err
	}
	if *iou <= 0 || *iou > 1 {
		return usageError(fmt.Sprintf("--iou %g: give a number in (0, 1]", *iou))
	}
	if *asJSON && *asCSV {
		return usageError("choose --json or --csv, not both")
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	d, err := loadAgreement(ctx, st, splitNames(*who))
	if err != nil {
		return err
	}
	opt := agree.Options{Threshold: *iou, ClassAware: *aware, Classes: d.classOrder()}
	switch *weights {
	case "none", "":
	case "linear", "quadratic":
		opt.Weights, _ = agree.DisagreementWeights(*weights, len(opt.Classes))
	default:
		w, _, err := readMatrix(*weights, "weights")
		if err != nil {
			return err
		}
		if len(w) != len(opt.Classes) {
			return fmt.Errorf("%s: %d×%d weights for the project's %d classes (%s)", *weights, len(w), len(w), len(opt.Classes), strings.Join(d.names(opt.Classes), ", "))
		}
		opt.Weights = w
	}
	rep, err := agree.Compare(d.images, len(d.annotators), opt, nil)
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

func (d agreementData) name(class int64) string {
	if n, ok := d.className[class]; ok {
		return n
	}
	return fmt.Sprintf("class %d", class)
}

func (d agreementData) names(classes []int64) []string {
	out := make([]string, len(classes))
	for i, c := range classes {
		out[i] = d.name(c)
	}
	return out
}

func kappaJSON(k agree.Kappa) map[string]any {
	m := map[string]any{"kappa": num(k.Kappa), "se": num(k.SE), "ci95": interval(k.CI95), "se0": num(k.SE0), "z": num(k.Z),
		"po": num(k.Po), "pe": num(k.Pe), "n": k.N, "band": nil, "notes": k.Notes}
	if !math.IsNaN(k.Kappa) {
		m["band"] = agree.Band(k.Kappa)
	}
	if k.Notes == nil {
		m["notes"] = []string{}
	}
	return m
}

func classJSON(d agreementData, cs []agree.ClassAgreement, withKappa bool) []map[string]any {
	var out []map[string]any
	for _, c := range cs {
		m := map[string]any{"class": d.name(c.Class), "a": c.A, "b": c.B, "agreed": c.Agreed, "confused": c.Confused,
			"a_only": c.OnlyA, "b_only": c.OnlyB, "f1": num(c.F1), "mean_iou": num(c.MeanIoU)}
		if withKappa {
			m["kappa"] = num(c.Kappa.Kappa)
			m["se"] = num(c.Kappa.SE)
			m["ci95"] = interval(c.Kappa.CI95)
		}
		out = append(out, m)
	}
	return out
}

func agreementJSON(d agreementData, rep agree.Report, worst int) map[string]any {
	var names []string
	for _, a := range d.annotators {
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
			"matched": p.Matched, "a_only": p.OnlyA, "b_only": p.OnlyB, "f1": num(p.F1),
			"mean_iou": num(p.IoU.Mean), "median_iou": num(p.IoU.Median), "p10_iou": num(p.IoU.P10), "p90_iou": num(p.IoU.P90),
			"iou_histogram": p.IoU.Histogram,
			"kappa":         num(p.Kappa.Kappa), "se": num(p.Kappa.SE), "ci95": interval(p.Kappa.CI95), "se0": num(p.Kappa.SE0), "z": num(p.Kappa.Z),
			"band":                     nil,
			"confusion":                map[string]any{"classes": d.names(p.Classes), "counts": counts},
			"kappa_with_no_object":     kappaJSON(p.KappaWithNoObject),
			"confusion_with_no_object": map[string]any{"classes": append(d.names(p.Classes), "no object"), "counts": p.ConfusionWithNoObject},
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
		fleiss = num(rep.Fleiss.Kappa)
	}
	var ws []map[string]any
	for _, w := range rep.Worst(worst) {
		ws = append(ws, map[string]any{"image": w.Name, "image_id": w.ImageID, "errors": w.Errors, "lowest_f1": num(w.F1)})
	}
	notes := append([]string{}, rep.Notes...)
	notes = append(notes, rep.Alpha.Notes...)
	return map[string]any{
		"annotators": names, "iou_threshold": rep.Threshold, "class_aware": rep.Options.ClassAware,
		"pairs": pairs, "objects": rep.Objects, "fleiss_kappa": fleiss, "krippendorff_alpha": num(rep.Alpha.Alpha),
		"per_class": classJSON(d, rep.PooledClasses(), len(rep.Pairs) == 1), "worst_images": ws,
		"band_source": agree.BandCitation + "; " + agree.BandRule,
		"notes":       notes,
	}
}

func writePairsCSV(w io.Writer, d agreementData, rep agree.Report) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"a", "b", "images", "a_boxes", "b_boxes", "matched", "a_only", "b_only", "f1", "mean_iou", "median_iou", "kappa", "se", "ci95_low", "ci95_high", "band"})
	for _, p := range rep.Pairs {
		band := ""
		if !math.IsNaN(p.Kappa.Kappa) {
			band = agree.Band(p.Kappa.Kappa)
		}
		cw.Write([]string{d.annotators[p.A].Name, d.annotators[p.B].Name, strconv.Itoa(p.Images), strconv.Itoa(p.NA), strconv.Itoa(p.NB),
			strconv.Itoa(p.Matched), strconv.Itoa(p.OnlyA), strconv.Itoa(p.OnlyB), csvNum(p.F1), csvNum(p.IoU.Mean), csvNum(p.IoU.Median),
			csvNum(p.Kappa.Kappa), csvNum(p.Kappa.SE), csvNum(p.Kappa.CI95[0]), csvNum(p.Kappa.CI95[1]), band})
	}
	cw.Flush()
	return cw.Error()
}

func csvNum(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 10, 64)
}

func printAgreement(w io.Writer, d agreementData, rep agree.Report, worst int) {
	mode := "class-agnostic"
	if rep.Options.ClassAware {
		mode = "class-aware"
	}
	fmt.Fprintf(w, "Box agreement at IoU ≥ %.2f, %s matching\n", rep.Threshold, mode)
	for _, p := range rep.Pairs {
		fmt.Fprintf(w, "\n%s vs %s: %d images, %d matched pairs, %d only %s, %d only %s, detection F1 %s\n",
			d.annotators[p.A].Name, d.annotators[p.B].Name, p.Images, p.Matched, p.OnlyA, d.annotators[p.A].Name, p.OnlyB, d.annotators[p.B].Name, f4(p.F1))
		fmt.Fprintf(w, "  IoU of matched pairs: mean %s, median %s, 10th percentile %s, 90th %s\n", f4(p.IoU.Mean), f4(p.IoU.Median), f4(p.IoU.P10), f4(p.IoU.P90))
		fmt.Fprintf(w, "  Cohen's kappa on the classes of matched pairs: %s, 95 %% CI %s\n", fmtKappa(p.Kappa), ci(p.Kappa.CI95))
		if p.WeightedKappa != nil {
			fmt.Fprintf(w, "  weighted kappa (ordered classes): %s, 95 %% CI %s\n", fmtKappa(*p.WeightedKappa), ci(p.WeightedKappa.CI95))
		}
		fmt.Fprintf(w, "  counting unmatched boxes as \"no object\": %s (biased low, see notes)\n", fmtKappa(p.KappaWithNoObject))
	}
	if rep.Fleiss != nil {
		fmt.Fprintf(w, "\nFleiss' kappa over %d objects: %s\n", rep.Objects, f4(rep.Fleiss.Kappa))
	}
	fmt.Fprintf(w, "Krippendorff's alpha (nominal) over %d objects: %s\n", rep.Objects, f4(rep.Alpha.Alpha))
	fmt.Fprintln(w, "\nPer class (pooled over pairs): class, boxes A, boxes B, agreed, F1, mean IoU")
	for _, c := range rep.PooledClasses() {
		fmt.Fprintf(w, "  %-16s %6d %6d %6d  %s  %s\n", d.name(c.Class), c.A, c.B, c.Agreed, f4(c.F1), f4(c.MeanIoU))
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

// consensusLabels derives the consensus of the loaded annotators: per
// image, objects seen by at least minSupport of them.
func consensusLabels(d agreementData, threshold float64, minSupport int, median bool) ([]project.Label, int) {
	n := len(d.annotators)
	var out []project.Label
	ties := 0
	var who []string
	for _, a := range d.annotators {
		who = append(who, a.Name)
	}
	support := minSupport
	if support <= 0 {
		support = n/2 + 1
	}
	how := "mean"
	if median {
		how = "median"
	}
	source := fmt.Sprintf("consensus of %s (IoU ≥ %.2f, seen by ≥ %d, %s box)", strings.Join(who, ", "), threshold, support, how)
	for _, im := range d.images {
		boxes := make([][]project.Box, n)
		classes := make([][]int64, n)
		for i := 0; i < n; i++ {
			l := im.By[i]
			boxes[i], classes[i] = l.Boxes, l.Classes
		}
		objs := agree.GroupObjects(boxes, classes, threshold, false)
		for _, c := range agree.Consensus(objs, boxes, classes, n, minSupport, median) {
			src := source
			if c.Tie {
				ties++
				src += "; class vote tied: review"
			}
			out = append(out, project.Label{ImageID: im.ImageID, ClassID: c.Class, Box: c.Box, Origin: project.OriginImported,
				Source: src, Score: float64(c.Support) / float64(n)})
		}
	}
	return out, ties
}

func cmdConsensus(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("consensus", flag.ContinueOnError)
	who := fs.String("annotators", "", "annotators to combine, comma-separated (at least two)")
	iou := fs.Float64("iou", agree.DefaultThreshold, "IoU at which boxes count as the same object")
	minSupport := fs.Int("min", 0, "keep objects drawn by at least this many annotators (default: a majority)")
	median := fs.Bool("median", false, "use the median of the members' coordinates instead of the mean")
	pos, err := parse(fs, args, 1, 1, "consensus PROJECT.boxw --annotators A,B[,C…] [--iou 0.5] [--min K] [--median]")
	if err != nil {
		return err
	}
	names := splitNames(*who)
	for _, n := range names {
		if n == consensusName {
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
	n, ties, err := storeConsensus(ctx, st, names, *iou, *minSupport, *median)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "stored %s as annotator %q (%d tied class votes, marked for review in their source)\n", plural(n, "consensus box"), consensusName, ties)
	return nil
}

// storeConsensus recomputes the consensus annotator's labels.
func storeConsensus(ctx context.Context, st *store.Store, names []string, iou float64, minSupport int, median bool) (int, int, error) {
	d, err := loadAgreement(ctx, st, names)
	if err != nil {
		return 0, 0, err
	}
	labels, ties := consensusLabels(d, iou, minSupport, median)
	a, err := st.EnsureAnnotator(ctx, consensusName)
	if err != nil {
		return 0, 0, err
	}
	if err := st.ReplaceAnnotatorLabels(ctx, a.ID, labels); err != nil {
		return 0, 0, fmt.Errorf("store the consensus: %w", err)
	}
	return len(labels), ties, nil
}
