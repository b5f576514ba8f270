package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"boxwright/project"
	"boxwright/store"
	"boxwright/suggest"
)

func init() {
	commands["suggestions"] = cmdSuggestions
}

// Rules for classes a prediction file names that the project lacks.
type unknownClassRule struct {
	Map    map[string]string // file's name → project class name
	Create bool              // create every unknown class
	Drop   bool              // drop the boxes of every unknown class
	// Per-name choices, as the import dialog asks them.
	CreateNames, DropNames map[string]bool
}

func (r unknownClassRule) creates(name string) bool { return r.Create || r.CreateNames[name] }
func (r unknownClassRule) drops(name string) bool   { return r.Drop || r.DropNames[name] }

// suggestionJob is one import of a prediction file.
type suggestionJob struct {
	Source, Path, ClassesFile string
	Layout                    suggest.Layout
	Filter                    suggest.Filter
	Unknown                   unknownClassRule
	// probe, when set, receives the unknown class names and stops the
	// import before anything is stored (the dialog asks about them).
	probe func(map[string]int)
}

// suggestionResult is what an import did.
type suggestionResult struct {
	project.SuggestionImportReport
	Read           int      `json:"read"`
	BelowScore     int      `json:"below_min_score"`
	Suppressed     int      `json:"suppressed_by_nms"`
	Dropped        int      `json:"dropped_unknown_class"`
	Clipped        int      `json:"clipped_to_image"`
	ClassesCreated []string `json:"classes_created"`
}

// unknownClasses lists the class names proposals use that the project
// lacks, with how many proposals use each.
func unknownClasses(ps []suggest.Proposal) map[string]int {
	out := map[string]int{}
	for _, p := range ps {
		if p.ClassID == 0 {
			out[p.ClassName]++
		}
	}
	return out
}

// runSuggestionImport reads, filters and stores a prediction file: all or
// nothing, and an unknown class without a rule for it stops the import.
func runSuggestionImport(ctx context.Context, st *store.Store, j suggestionJob, progress func(done, total int)) (suggestionResult, error) {
	var res suggestionResult
	if strings.TrimSpace(j.Source) == "" {
		return res, fmt.Errorf("give the suggestions a source name (for example the model's name and version)")
	}
	ims, err := st.Images(ctx)
	if err != nil {
		return res, err
	}
	classes, err := st.Classes(ctx)
	if err != nil {
		return res, err
	}
	sizes := map[string][2]int{}
	for _, im := range ims {
		sizes[filepath.Base(im.Path)] = [2]int{im.Width, im.Height}
		sizes[filepath.ToSlash(im.Path)] = [2]int{im.Width, im.Height}
	}
	src := &suggest.FileSource{Source: j.Source, Layout: j.Layout, Path: j.Path, ClassesFile: j.ClassesFile,
		ImageSize: func(name string) (int, int, bool) {
			s, ok := sizes[filepath.ToSlash(name)]
			if !ok {
				s, ok = sizes[filepath.Base(name)]
			}
			return s[0], s[1], ok
		}}
	ps, err := src.Suggest(ctx, ims, classes, progress)
	if err != nil {
		return res, err
	}
	res.Read, res.Clipped = len(ps), src.Clipped()
	if j.probe != nil {
		j.probe(unknownClasses(ps))
		return res, nil
	}
	byName := map[string]int64{}
	for _, c := range classes {
		byName[c.Name] = c.ID
	}
	// Unknown classes: map, then create or drop, else stop.
	unknown := unknownClasses(ps)
	var missing []string
	for name, n := range unknown {
		if to, ok := j.Unknown.Map[name]; ok {
			if _, known := byName[to]; !known && !j.Unknown.creates(to) {
				return res, fmt.Errorf("--map %s=%s: the project has no class %q (add it, or use --create-classes)", name, to, to)
			}
			continue
		}
		if !j.Unknown.creates(name) && !j.Unknown.drops(name) {
			missing = append(missing, fmt.Sprintf("%q (%d boxes)", name, n))
		}
	}
	if len(missing) > 0 {
		sort.Strings(missing)
		return res, fmt.Errorf("the file names classes the project does not have: %s; map them (--map NAME=CLASS), create them (--create-classes) or drop their boxes (--drop-unknown); nothing was imported", strings.Join(missing, ", "))
	}
	kept := ps[:0:0]
	var toCreate []string
	for _, p := range ps {
		if p.ClassID == 0 {
			name := p.ClassName
			if to, ok := j.Unknown.Map[name]; ok {
				name = to
			}
			if id, ok := byName[name]; ok {
				p.ClassID = id
			} else if j.Unknown.creates(name) {
				// A stand-in ID until the class is created, once the file has
				// passed every check; NMS still keeps classes apart.
				toCreate = append(toCreate, name)
				byName[name] = -int64(len(toCreate))
				p.ClassID = byName[name]
			} else {
				res.Dropped++
				continue
			}
		}
		kept = append(kept, p)
	}
	kept, res.BelowScore, res.Suppressed = j.Filter.Apply(kept)
	created := map[int64]int64{}
	for i, name := range toCreate {
		c, err := st.AddClass(ctx, project.Class{Name: name})
		if err != nil {
			return res, fmt.Errorf("create class %q: %w", name, err)
		}
		created[-int64(i+1)] = c.ID
		res.ClassesCreated = append(res.ClassesCreated, name)
	}
	gs := make([]project.Suggestion, 0, len(kept))
	for _, p := range kept {
		id := p.ClassID
		if id < 0 {
			id = created[id]
		}
		gs = append(gs, project.Suggestion{ImageID: p.ImageID, ClassID: id, Box: p.Box, Score: p.Score, Source: j.Source, State: project.SuggestionPending})
	}
	rep, err := st.ImportSuggestions(ctx, j.Source, gs)
	if err != nil {
		return res, err
	}
	res.SuggestionImportReport = rep
	return res, nil
}

func layoutFromPath(p string) suggest.Layout {
	switch strings.ToLower(filepath.Ext(p)) {
	case ".json":
		return "json"
	case ".csv":
		return "csv"
	}
	return "txt"
}

func cmdSuggestions(args []string, stdout, stderr io.Writer) error {
	const synopsis = "suggestions import PROJECT.boxw FILE --source NAME [--layout json|txt|csv] [--classes FILE] [--min-score S] [--nms IOU] [--map FROM=TO]... [--create-classes|--drop-unknown] [--json]\n       boxwright suggestions stats PROJECT.boxw [--source NAME] [--json]"
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
	minScore := fs.Float64("min-score", 0, "")
	nms := fs.Float64("nms", 0, "")
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
	if *create && *drop {
		return usageError("choose --create-classes or --drop-unknown, not both")
	}
	if *minScore < 0 || *minScore > 1 || *nms < 0 || *nms > 1 || math.IsNaN(*minScore) || math.IsNaN(*nms) {
		return usageError("--min-score and --nms take numbers from 0 to 1")
	}
	lay := suggest.Layout(*layout)
	if *layout == "" {
		lay = layoutFromPath(pos[1])
	} else if lay, err = suggest.ParseLayout(*layout); err != nil {
		return usageError(err.Error())
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	res, err := runSuggestionImport(ctx, st, suggestionJob{Source: *source, Path: pos[1], ClassesFile: *classes, Layout: lay,
		Filter: suggest.Filter{MinScore: *minScore, NMS: *nms}, Unknown: unknownClassRule{Map: classMap, Create: *create, Drop: *drop}}, nil)
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, res)
	}
	fmt.Fprintf(stdout, "source %s: read %d, below the minimum score %d, suppressed by NMS %d, unknown class dropped %d, clipped to their image %d\n",
		res.Source, res.Read, res.BelowScore, res.Suppressed, res.Dropped, res.Clipped)
	fmt.Fprintf(stdout, "added %d pending suggestions; replaced %d still pending from an earlier import; kept %d already reviewed\n", res.Added, res.ReplacedPending, res.KeptReviewed)
	if len(res.ClassesCreated) > 0 {
		fmt.Fprintf(stdout, "new classes: %s\n", strings.Join(res.ClassesCreated, ", "))
	}
	return nil
}

// reviewStats is what "suggestions stats" reports for one source.
type reviewStats struct {
	Source    string           `json:"source"`
	Classes   []map[string]any `json:"classes"`
	Bins      []map[string]any `json:"reliability"`
	Threshold map[string]any   `json:"suggested_threshold"`
	raw       []suggest.SourceClassStats
	bins      []suggest.Bin
	threshold suggest.Threshold
}

// reliabilityBins is the number of score bins of the reliability chart.
const reliabilityBins = 10

// keepRate is the share of kept suggestions the threshold promises.
const keepRate = 0.95

func collectReviewStats(ctx context.Context, st *store.Store, source string) ([]reviewStats, map[int64]string, error) {
	rows, err := st.ReviewRows(ctx, source)
	if err != nil {
		return nil, nil, err
	}
	cs, err := st.Classes(ctx)
	if err != nil {
		return nil, nil, err
	}
	names := map[int64]string{}
	for _, c := range cs {
		names[c.ID] = c.Name
	}
	bySource := map[string][]suggest.Decision{}
	var order []string
	for _, r := range rows {
		if _, ok := bySource[r.Source]; !ok {
			order = append(order, r.Source)
		}
		iou := math.NaN()
		if r.State == project.SuggestionAccepted || r.State == project.SuggestionCorrected {
			iou = r.FinalIoU
		}
		bySource[r.Source] = append(bySource[r.Source], suggest.Decision{Source: r.Source, ClassID: r.ClassID, Score: r.Score, State: r.State, IoU: iou})
	}
	sort.Strings(order)
	var out []reviewStats
	for _, src := range order {
		ds := bySource[src]
		rs := reviewStats{Source: src, raw: suggest.Summarise(ds), bins: suggest.Reliability(ds, reliabilityBins), threshold: suggest.SuggestThreshold(ds, keepRate)}
		for _, c := range rs.raw {
			rs.Classes = append(rs.Classes, map[string]any{"class": names[c.ClassID], "in": c.In, "accepted": c.Accepted, "corrected": c.Corrected,
				"rejected": c.Rejected, "pending": c.Pending, "mean_corrected_iou": num(c.MeanCorrectedIoU)})
		}
		for _, b := range rs.bins {
			rs.Bins = append(rs.Bins, map[string]any{"from": b.Lo, "to": b.Hi, "decided": b.Decided, "kept": b.Kept, "kept_rate": num(b.Rate)})
		}
		rs.Threshold = map[string]any{"score": nil, "kept_rate": nil, "decisions": rs.threshold.N, "target": keepRate}
		if rs.threshold.OK {
			rs.Threshold["score"], rs.Threshold["kept_rate"] = rs.threshold.Score, rs.threshold.Rate
		}
		out = append(out, rs)
	}
	return out, names, nil
}

func cmdSuggestionsStats(args []string, stdout io.Writer, synopsis string) error {
	fs := flag.NewFlagSet("suggestions stats", flag.ContinueOnError)
	source := fs.String("source", "", "")
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	st, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	stats, names, err := collectReviewStats(ctx, st, *source)
	if err != nil {
		return err
	}
	if *asJSON {
		if stats == nil {
			stats = []reviewStats{}
		}
		return writeJSON(stdout, map[string]any{"sources": stats, "note": "Pending suggestions are never counted as right or wrong."})
	}
	if len(stats) == 0 {
		fmt.Fprintln(stdout, "no suggestions in this project")
		return nil
	}
	for _, s := range stats {
		fmt.Fprintf(stdout, "%s\n  class             in  accepted  corrected  rejected  pending  mean IoU of corrections\n", s.Source)
		for _, c := range s.raw {
			fmt.Fprintf(stdout, "  %-14s %6d %9d %10d %9d %8d  %s\n", names[c.ClassID], c.In, c.Accepted, c.Corrected, c.Rejected, c.Pending, f4(c.MeanCorrectedIoU))
		}
		fmt.Fprintln(stdout, "  score bin    decided  kept")
		for _, b := range s.bins {
			fmt.Fprintf(stdout, "  %.1f–%.1f %9d  %s\n", b.Lo, b.Hi, b.Decided, pct(b.Rate))
		}
		if s.threshold.OK {
			fmt.Fprintf(stdout, "  at or above score %.3f, %s of %d decided suggestions were kept (target %.0f %%)\n", s.threshold.Score, pct(s.threshold.Rate), s.threshold.N, 100*keepRate)
		} else {
			fmt.Fprintf(stdout, "  no score threshold keeps %.0f %% yet (%d decisions)\n", 100*keepRate, s.threshold.N)
		}
	}
	fmt.Fprintln(stdout, "Pending suggestions are never counted as right or wrong.")
	return nil
}
