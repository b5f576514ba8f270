package cli

import (
	"flag"
	"fmt"
	"io"
	"strings"
	"time"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest/detector/nn"
)

func cmdTrain(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("train", flag.ContinueOnError)
	annotator := fs.String("annotator", "", "learn this annotator's labels (for example consensus)")
	classes := fs.String("classes", "", "the classes to learn, comma-separated (default: every class with enough boxes)")
	minutes := floatAbove(fs, "minutes", 0, 0, 7*24*60, "stop after this many minutes (the epoch under way finishes)")
	epochs := intIn(fs, "epochs", 0, 1, 100000, "stop after this many epochs")
	validation := floatIn(fs, "validation", 0.2, 0, 0.9, "share of the images held out for validation")
	seed := unsignedSeedIn(fs, "seed", 1, "seed of the split, the initial weights and the augmentation")
	threads := intIn(fs, "threads", 0, 0, 1024, "threads for the arithmetic (0: every core)")
	turns := fs.Bool("rotations", false, "the objects' orientation does not matter: also learn from quarter turns")
	cont := fs.Bool("continue", false, "train the current model further when it has the same classes")
	asJSON := fs.Bool("json", false, "print JSON")
	const synopsis = "train PROJECT.boxw --annotator NAME [--classes a,b] [--minutes M | --epochs N] [--validation 0.2] [--seed S] [--threads N] [--rotations] [--continue] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	switch {
	case *annotator == "":
		return usageError("--annotator is required: a model learns one annotator's labels\nusage: boxwright " + synopsis)
	case *minutes <= 0 && *epochs <= 0:
		return usageError("give --minutes or --epochs\nusage: boxwright " + synopsis)
	}
	nn.SetThreads(*threads)
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	j := ops.TrainJob{Annotator: *annotator, Epochs: *epochs, Budget: time.Duration(*minutes * float64(time.Minute)),
		Validation: *validation, Seed: *seed, QuarterTurns: *turns, Continue: *cont}
	if *classes != "" {
		j.Classes = splitNames(*classes)
	}
	if !*asJSON {
		j.Epoch = func(e project.Epoch) {
			fmt.Fprintf(stdout, "epoch %3d  loss %.4f  val AP50 %s  %.0f s\n", e.Epoch, e.Loss, ops.F4(e.ValAP50), e.Seconds)
		}
	}
	rep, err := ops.Train(ctx, s, j)
	for _, f := range rep.Failed {
		fmt.Fprintf(stderr, "skipped image %s\n", f)
	}
	if err != nil {
		return err
	}
	if *asJSON {
		var es []map[string]any
		for _, e := range rep.Model.Epochs {
			es = append(es, map[string]any{"epoch": e.Epoch, "loss": ops.Num(e.Loss), "val_ap50": ops.Num(e.ValAP50), "seconds": e.Seconds})
		}
		return writeJSON(stdout, map[string]any{"model": rep.Model.Name, "epochs": es, "val_ap50": ops.Num(rep.Model.ValAP50),
			"train_images": rep.TrainImages, "val_images": rep.ValImages, "classes": rep.Model.Classes, "input_size": rep.Model.InputSize,
			"skipped_classes": nonNil(rep.Skipped), "failed_images": nonNil(rep.Failed), "continued": rep.Continued,
			"cache_bytes": rep.CacheBytes, "reloaded_images": rep.Reloaded, "peak_heap_bytes": rep.PeakHeapBytes,
			"arithmetic": nn.GemmBackend(), "threads": nn.Threads()})
	}
	for _, sk := range rep.Skipped {
		fmt.Fprintf(stdout, "class left out: %s\n", sk)
	}
	verb := "stored"
	if rep.Continued {
		verb = "trained further and stored"
	}
	fmt.Fprintf(stdout, "%s model %s (current): classes %s, input %d px, %d training and %d validation images, val AP50 %s\n",
		verb, rep.Model.Name, strings.Join(rep.Model.Classes, ", "), rep.Model.InputSize, rep.TrainImages, rep.ValImages, ops.F4(rep.Model.ValAP50))
	fmt.Fprintf(stdout, "memory: %s; arithmetic: %s, %d threads\n", ops.TrainMemory(rep), nn.GemmBackend(), nn.Threads())
	fmt.Fprintln(stdout, "A model trained on a few dozen images is a labelling aid, not a validated detector: review what it suggests.")
	return nil
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}

func cmdDetect(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("detect", flag.ContinueOnError)
	model := fs.String("model", "", "the stored model to run (default: the current one), or an ONNX file (FILE.onnx)")
	which := fs.String("images", "unlabelled", "unlabelled (images without labels, not skipped) or all")
	minScore := floatIn(fs, "min-score", 0.3, 0, 1, "keep detections scoring at least this")
	nms := nmsIn(fs, 0.5)
	source := fs.String("source", "", "source name of the suggestions (default: the model's name)")
	save := fs.Bool("save", false, "store the detections as pending suggestions")
	threads := intIn(fs, "threads", 0, 0, 1024, "threads for the arithmetic (0: every core)")
	asJSON := fs.Bool("json", false, "print JSON")
	file := fileModelFlags(fs)
	const synopsis = "detect PROJECT.boxw [--model NAME] [--images unlabelled|all] [--min-score S] [--nms IOU|off] [--source NAME] [--save] [--json]\n" +
		"       boxwright detect PROJECT.boxw --model FILE.onnx [--layout auto|" + onnxLayouts + "] [--input WxH] [--letterbox[=false]] [--names FILE]\n" +
		"              [--onnxruntime LIB] [--describe] [--images unlabelled|all] [--limit N] [--min-score S] [--nms IOU|off]\n" +
		"              [--map FROM=TO]... [--create-classes|--drop-unknown] [--save] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	switch {
	case *which != "unlabelled" && *which != "all":
		return usageError(fmt.Sprintf("--images %q: use unlabelled or all", *which))
	}
	if isModelFile(*model) {
		return detectWithModelFile(fs, pos[0], *model, file, *which == "all", *minScore, *nms, *save, *asJSON, *threads, stdout, stderr)
	}
	if err := file.refuseWithStoredModel(fs); err != nil {
		return err
	}
	if *source != "" {
		if err := project.ValidateName("source", *source); err != nil {
			return usageError("--source: " + err.Error())
		}
	}
	nn.SetThreads(*threads)
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	rep, err := ops.Detect(ctx, s, ops.DetectJob{Model: *model, All: *which == "all", MinScore: *minScore, NMS: *nms, Source: *source, Save: *save})
	for _, f := range rep.Failed {
		fmt.Fprintf(stderr, "skipped image %s\n", f)
	}
	if err != nil {
		return err
	}
	names := map[int64]string{}
	paths := map[int64]string{}
	if cs, err := s.Classes(ctx); err == nil {
		for _, c := range cs {
			names[c.ID] = c.Name
		}
	}
	if ims, err := s.Images(ctx); err == nil {
		for _, im := range ims {
			paths[im.ID] = im.Path
		}
	}
	if *asJSON {
		ds := []map[string]any{}
		for _, d := range rep.Detections {
			ds = append(ds, map[string]any{"image": paths[d.ImageID], "class": names[d.ClassID], "x0": d.Box.X0, "y0": d.Box.Y0, "x1": d.Box.X1, "y1": d.Box.Y1, "score": d.Score})
		}
		out := map[string]any{"model": rep.Model, "source": rep.Source, "images": rep.Images, "detections": ds, "saved": *save}
		if *save {
			out["replaced_pending"] = rep.Saved.ReplacedPending
		}
		return writeJSON(stdout, out)
	}
	for _, d := range rep.Detections {
		fmt.Fprintf(stdout, "%s\t%s\t%.1f,%.1f,%.1f,%.1f\t%.3f\n", paths[d.ImageID], names[d.ClassID], d.Box.X0, d.Box.Y0, d.Box.X1, d.Box.Y1, d.Score)
	}
	fmt.Fprintf(stdout, "model %s: %s on %s", rep.Model, ops.Plural(len(rep.Detections), "detection"), ops.Plural(rep.Images, "image"))
	if *save {
		fmt.Fprintf(stdout, ", stored as pending suggestions of source %q", rep.Source)
	}
	fmt.Fprintln(stdout)
	if rep.Images == 0 && *which == "unlabelled" {
		fmt.Fprintln(stdout, "every image has labels or is skipped: --images all runs the model on all of them")
	}
	return nil
}
