package cli

import (
	"flag"
	"fmt"
	"image"
	"io"
	"math"
	"strconv"
	"strings"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest/exemplar"
)

// parseCorners reads "x0,y0,x1,y1".
func parseCorners(s string) (project.Box, error) {
	parts := strings.Split(s, ",")
	if len(parts) != 4 {
		return project.Box{}, fmt.Errorf("--exemplar wants x0,y0,x1,y1, got %q", s)
	}
	var v [4]float64
	for i, p := range parts {
		f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return project.Box{}, fmt.Errorf("--exemplar: %q is not a finite number (give x0,y0,x1,y1 in image pixels)", p)
		}
		v[i] = f
	}
	b := project.Rect(v[0], v[1], v[2], v[3])
	if !b.Valid() {
		return b, fmt.Errorf("--exemplar %s has no area (x1 must exceed x0 and y1 y0)", s)
	}
	return b, nil
}

func cmdSimilar(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("similar", flag.ContinueOnError)
	imgName := fs.String("image", "", "the project image to search (its path or file name)")
	ex := fs.String("exemplar", "", "the example box x0,y0,x1,y1 in image pixels")
	className := fs.String("class", "", "the class of the example (needed with --save)")
	threshold := floatAbove(fs, "threshold", exemplar.DefaultThreshold, 0, 1, fmt.Sprintf("lowest score of a match (default by --feature: gray %.2f, gradient %.2f, color %.2f)", exemplar.DefaultGrayThreshold, exemplar.DefaultGradientThreshold, exemplar.DefaultColorThreshold))
	maxResults := intIn(fs, "max-results", exemplar.DefaultMaxResults, 1, exemplar.MaxResultsLimit, "matches kept, best first")
	scales := fs.String("scales", "0.8:1.25:5", "scales FROM:TO:STEPS (geometric)")
	rotations := fs.Bool("rotations", false, "also try the example turned by 90°, 180° and 270°")
	feature := fs.String("feature", "gray", "gray, gradient (robust to lighting) or color")
	save := fs.Bool("save", false, "store the matches as pending suggestions of source \"exemplar\"")
	asJSON := fs.Bool("json", false, "print JSON")
	const synopsis = "similar PROJECT.boxw --image PATH --exemplar x0,y0,x1,y1 [--class NAME] [--threshold S] [--max-results 200] [--scales 0.8:1.25:5] [--rotations] [--feature gray|gradient|color] [--save] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	if *imgName == "" || *ex == "" {
		return usageError("--image and --exemplar are required\nusage: boxwright " + synopsis)
	}
	box, err := parseCorners(*ex)
	if err != nil {
		return usageError(err.Error())
	}
	// A wrong --scales is reported once the example is known, with the
	// scales that make sense for it.
	sc, scalesErr := exemplar.ParseScales(*scales)
	feat, err := exemplar.ParseFeature(*feature)
	if err != nil {
		return usageError(err.Error())
	}
	// Each comparison's score has its own measured default (options.go).
	thresholdSet := false
	fs.Visit(func(f *flag.Flag) { thresholdSet = thresholdSet || f.Name == "threshold" })
	if !thresholdSet {
		*threshold = exemplar.DefaultThresholdFor(feat)
	}
	if *save && *className == "" {
		return usageError("--save needs --class: suggestions belong to a class")
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	ims, err := st.Images(ctx)
	if err != nil {
		return err
	}
	m := project.NewImageMatcher(ims)
	im, ok, reason := m.Match(*imgName)
	if !ok {
		return fmt.Errorf("--image %q: %s", *imgName, reason)
	}
	if box.X1 > float64(im.Width) || box.Y1 > float64(im.Height) || box.X0 < 0 || box.Y0 < 0 {
		return fmt.Errorf("--exemplar %v lies outside %s (%d×%d px)", box, im.Path, im.Width, im.Height)
	}
	size := image.Pt(im.Width, im.Height)
	opt := exemplar.Options{Threshold: *threshold, Scales: sc, Rotations: *rotations, Feature: feat, MaxResults: *maxResults}
	plan, planErr := exemplar.PlanScales(opt, []project.Box{box}, size, size)
	switch {
	case scalesErr != nil && planErr == nil:
		lo, hi := max(plan.Min, 0.8), min(plan.Max, 1.25)
		if lo >= hi {
			lo, hi = plan.Min, plan.Max
		}
		return usageError(fmt.Sprintf("--scales: %v; for this example give %s, for instance %s:%s:5",
			scalesErr, plan.Range(), exemplar.FormatScale(lo), exemplar.FormatScale(hi)))
	case scalesErr != nil:
		return usageError(fmt.Sprintf("--scales: %v", scalesErr))
	case planErr != nil:
		return usageError(fmt.Sprintf("--scales %s: %v", *scales, planErr))
	}
	opt.Scales = plan.Searched
	var class project.Class
	if *className != "" {
		if class, err = st.ClassByName(ctx, *className); err != nil {
			return fmt.Errorf("--class: %w", err)
		}
	}
	img, err := ops.DecodeProjectImage(st, im)
	if err != nil {
		return err
	}
	if note := plan.Summary(); note != "" && *asJSON {
		fmt.Fprintf(stderr, "boxwright similar: %s\n", note) // stdout holds the JSON
	}
	fmt.Fprintf(stderr, "searching %s at %s… (Ctrl+C stops)\n", im.Path, ops.Plural(len(plan.Searched), "scale"))
	matches, err := exemplar.Search(ctx, img, []project.Box{box}, opt)
	if err != nil {
		if ctx.Err() != nil {
			return fmt.Errorf("interrupted (Ctrl+C) while searching %s; nothing was saved: %w", im.Path, ctx.Err())
		}
		return err
	}
	if *save {
		if err := ops.StoreExemplarMatches(ctx, st, class.ID, map[int64][]exemplar.Match{im.ID: matches}); err != nil {
			return err
		}
	}
	full := len(matches) == *maxResults
	if *asJSON {
		out := []map[string]any{}
		for _, mt := range matches {
			out = append(out, map[string]any{"x0": mt.Box.X0, "y0": mt.Box.Y0, "x1": mt.Box.X1, "y1": mt.Box.Y1,
				"score": mt.Score, "scale": mt.Scale, "rotation": mt.Rotation})
		}
		dropped := []map[string]any{}
		for _, d := range plan.Dropped {
			dropped = append(dropped, map[string]any{"scale": d.Scale, "why": d.Why})
		}
		return writeJSON(stdout, map[string]any{"image": im.Path, "exemplar": []float64{box.X0, box.Y0, box.X1, box.Y1}, "matches": out, "saved": *save && len(matches) > 0,
			"scales_searched": plan.Searched, "scales_dropped": dropped, "max_results_reached": full})
	}
	fmt.Fprintf(stdout, "%s in %s at %s ≥ %.2f\n", ops.Plural(len(matches), "match"), im.Path, feat.ScoreName(), *threshold)
	if note := plan.Summary(); note != "" {
		fmt.Fprintf(stdout, "%s\n", note)
	}
	if full {
		fmt.Fprintf(stdout, "these are the best %d (--max-results); more may score above the threshold\n", *maxResults)
	}
	for _, mt := range matches {
		fmt.Fprintf(stdout, "  %.3f  [%.0f,%.0f,%.0f,%.0f]  scale %.3g  rotation %d°\n", mt.Score, mt.Box.X0, mt.Box.Y0, mt.Box.X1, mt.Box.Y1, mt.Scale, mt.Rotation)
	}
	if *save && len(matches) == 0 {
		fmt.Fprintln(stdout, "nothing was stored: no match reached the threshold")
	} else if *save {
		fmt.Fprintf(stdout, "stored as pending suggestions of source %q\n", exemplar.Source)
	}
	return nil
}
