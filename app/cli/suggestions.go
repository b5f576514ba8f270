package cli

import (
	"flag"
	"fmt"
	"io"
	"strings"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest"
)

func cmdSuggestions(args []string, stdout, stderr io.Writer) error {
	const synopsis = "suggestions import PROJECT.boxw FILE --source NAME [--layout json|txt|csv] [--classes FILE] [--min-score S] [--nms IOU|off] [--map FROM=TO]... [--create-classes|--drop-unknown] [--json]\n       boxwright suggestions stats PROJECT.boxw [--source NAME] [--json]"
	if len(args) == 0 {
		return usageError("usage: boxwright " + synopsis)
	}
	switch args[0] {
	case "import":
		return cmdSuggestionsImport(args[1:], stdout, stderr, synopsis)
	case "stats":
		return cmdSuggestionsStats(args[1:], stdout, synopsis)
	}
	return usageError(fmt.Sprintf("unknown suggestions command %q\nusage: boxwright %s", args[0], synopsis))
}

func cmdSuggestionsImport(args []string, stdout, stderr io.Writer, synopsis string) error {
	fs := flag.NewFlagSet("suggestions import", flag.ContinueOnError)
	source := fs.String("source", "", "")
	layout := fs.String("layout", "", "")
	classes := fs.String("classes", "", "")
	minScore := floatIn(fs, "min-score", 0, 0, 1, "")
	nms := nmsIn(fs, 0)
	create := fs.Bool("create-classes", false, "")
	drop := fs.Bool("drop-unknown", false, "")
	asJSON := fs.Bool("json", false, "")
	classMap := classMapFlag{}
	fs.Var(classMap, "map", "")
	pos, err := parse(fs, args, 2, 2, synopsis)
	if err != nil {
		return err
	}
	if *source == "" {
		return usageError("--source NAME is required: every suggestion records where it came from\nusage: boxwright " + synopsis)
	}
	if err := project.ValidateName("source", *source); err != nil {
		return usageError("--source: " + err.Error())
	}
	if *create && *drop {
		return usageError("choose --create-classes or --drop-unknown, not both")
	}
	lay := suggest.PredictionLayout(*layout)
	if *layout == "" {
		lay = ops.LayoutFromPath(pos[1])
	} else if lay, err = suggest.ParsePredictionLayout(*layout); err != nil {
		return usageError(err.Error())
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	res, err := ops.RunSuggestionImport(ctx, st, ops.SuggestionJob{Source: *source, Path: pos[1], ClassesFile: *classes, Layout: lay,
		Filter: suggest.Filter{MinScore: *minScore, NMS: *nms}, Unknown: ops.UnknownClassRule{Map: classMap, Create: *create, Drop: *drop}}, nil)
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, res)
	}
	fmt.Fprintf(stdout, "source %s: read %d, below the minimum score %d, suppressed by NMS %d, unknown class dropped %d, clipped to their image %d\n",
		res.Source, res.Read, res.BelowScore, res.Suppressed, res.Dropped, res.Clipped)
	fmt.Fprintf(stdout, "added %s; replaced %d still pending from an earlier import; kept %d already reviewed\n", ops.Plural(res.Added, "pending suggestion"), res.ReplacedPending, res.KeptReviewed)
	if res.Repeats > 0 && *nms <= 0 {
		fmt.Fprintf(stderr, "boxwright: warning: %s repeat an earlier one exactly (same image, class, box and score) and were kept; --nms 0.99 drops such copies\n", ops.Plural(res.Repeats, "prediction"))
	}
	if len(res.ClassesCreated) > 0 {
		fmt.Fprintf(stdout, "new classes: %s\n", strings.Join(res.ClassesCreated, ", "))
	}
	return nil
}

func cmdSuggestionsStats(args []string, stdout io.Writer, synopsis string) error {
	fs := flag.NewFlagSet("suggestions stats", flag.ContinueOnError)
	source := fs.String("source", "", "")
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	st, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	stats, names, err := ops.CollectReviewStats(ctx, st, *source)
	if err != nil {
		return err
	}
	if *asJSON {
		if stats == nil {
			stats = []ops.ReviewStats{}
		}
		return writeJSON(stdout, map[string]any{"sources": stats, "note": "Pending suggestions are never counted as right or wrong."})
	}
	if len(stats) == 0 {
		fmt.Fprintln(stdout, "no suggestions in this project")
		return nil
	}
	for _, s := range stats {
		fmt.Fprintf(stdout, "%s\n  class             in  accepted  corrected  rejected  pending  mean IoU of corrections\n", s.Source)
		for _, c := range s.Summary {
			fmt.Fprintf(stdout, "  %-14s %6d %9d %10d %9d %8d  %s\n", names[c.ClassID], c.In, c.Accepted, c.Corrected, c.Rejected, c.Pending, ops.F4(c.MeanCorrectedIoU))
		}
		fmt.Fprintln(stdout, "  score bin    decided  kept")
		for _, b := range s.Reliability {
			fmt.Fprintf(stdout, "  %.1f–%.1f %9d  %s\n", b.Lo, b.Hi, b.Decided, ops.Pct(b.Rate))
		}
		// The window's advice, with its minimum of decisions and the
		// Wilson interval; the closing line below says the pending rule.
		advice := strings.TrimSpace(strings.Replace(s.ThresholdAdvice(), "Pending suggestions are never counted as right or wrong.", "", 1))
		fmt.Fprintf(stdout, "  %s\n", advice)
	}
	fmt.Fprintln(stdout, "Pending suggestions are never counted as right or wrong.")
	return nil
}
