package ops

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/suggest"
)

// Rules for classes a prediction file names that the project lacks.
type UnknownClassRule struct {
	Map    map[string]string // file's name → project class name
	Create bool              // create every unknown class
	Drop   bool              // drop the boxes of every unknown class
	// Per-name choices, as the import dialog asks them.
	CreateNames, DropNames map[string]bool
}

func (r UnknownClassRule) creates(name string) bool { return r.Create || r.CreateNames[name] }
func (r UnknownClassRule) drops(name string) bool   { return r.Drop || r.DropNames[name] }

// SuggestionJob is one import of a prediction file.
type SuggestionJob struct {
	Source, Path, ClassesFile string
	Layout                    suggest.PredictionLayout
	Filter                    suggest.Filter
	Unknown                   UnknownClassRule
	// Probe, when set, receives the unknown class names and stops the
	// import before anything is stored (the dialog asks about them).
	Probe func(map[string]int)
}

// SuggestionResult is what an import did.
type SuggestionResult struct {
	project.SuggestionImportReport
	Read       int `json:"read"`
	BelowScore int `json:"below_min_score"`
	Suppressed int `json:"suppressed_by_nms"`
	Dropped    int `json:"dropped_unknown_class"`
	Clipped    int `json:"clipped_to_image"`
	// Repeats counts predictions identical to an earlier one of the file
	// (image, class, box and score): kept, and said, since a model does
	// not usually emit one box twice and evaluation would count the copy
	// as a false positive.
	Repeats        int      `json:"exact_repeats"`
	ClassesCreated []string `json:"classes_created"`
}

// exactRepeats counts proposals identical to an earlier one.
func exactRepeats(ps []suggest.Proposal) int {
	type key struct {
		image int64
		class string
		box   project.Box
		score float64
	}
	seen := make(map[key]bool, len(ps))
	n := 0
	for _, p := range ps {
		k := key{p.ImageID, p.ClassName, p.Box, p.Score}
		if seen[k] {
			n++
		}
		seen[k] = true
	}
	return n
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

// RunSuggestionImport reads, filters and stores a prediction file: all or
// nothing, and an unknown class without a rule for it stops the import.
func RunSuggestionImport(ctx context.Context, st backend.Project, j SuggestionJob, progress func(done, total int)) (SuggestionResult, error) {
	var res SuggestionResult
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
	res.Read, res.Clipped, res.Repeats = len(ps), src.Clipped(), exactRepeats(ps)
	if j.Probe != nil {
		j.Probe(unknownClasses(ps))
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
			missing = append(missing, fmt.Sprintf("%q (%s)", name, Plural(n, "box")))
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

// LayoutFromPath guesses a prediction file's layout from its extension.
func LayoutFromPath(p string) suggest.PredictionLayout {
	switch strings.ToLower(filepath.Ext(p)) {
	case ".json":
		return suggest.PredictionJSON
	case ".csv":
		return suggest.PredictionCSV
	}
	return suggest.PredictionText
}

// ReviewStats is what "suggestions stats" reports for one source.
type ReviewStats struct {
	Source      string                     `json:"source"`
	Classes     []map[string]any           `json:"classes"`
	Bins        []map[string]any           `json:"reliability"`
	Threshold   map[string]any             `json:"suggested_threshold"`
	Summary     []suggest.SourceClassStats `json:"-"`
	Reliability []suggest.Bin              `json:"-"`
	Suggested   suggest.Threshold          `json:"-"`
}

// reliabilityBins is the number of score bins of the reliability chart.
const reliabilityBins = 10

// KeepRate is the share of kept suggestions the threshold promises.
const KeepRate = 0.95

// MinThresholdDecisions is the fewest decisions a score threshold is
// offered on. Below 20, even a record of nothing but kept suggestions has a
// Wilson 95 % interval reaching under 84 % (20/(20+1.96²) = 0.839), too
// wide to stand behind a promise of KeepRate; 20 is our choice, stated so
// that people can weigh it.
const MinThresholdDecisions = 20

// Decided counts the suggestions of the source that were accepted,
// corrected or rejected, and of them the kept (accepted or corrected).
func (rs ReviewStats) Decided() (decided, kept int) {
	for _, c := range rs.Summary {
		kept += c.Accepted + c.Corrected
		decided += c.Accepted + c.Corrected + c.Rejected
	}
	return decided, kept
}

// EnoughEvidence reports whether the suggested threshold rests on at
// least MinThresholdDecisions decisions.
func (rs ReviewStats) EnoughEvidence() bool {
	return rs.Suggested.OK && rs.Suggested.N >= MinThresholdDecisions
}

// ThresholdAdvice says in a sentence or two what the decisions so far say
// about a score threshold for the source: the threshold only when it rests
// on enough decisions, always the 95 % Wilson interval of the kept share.
func (rs ReviewStats) ThresholdAdvice() string {
	const pending = " Pending suggestions are never counted as right or wrong."
	decided, kept := rs.Decided()
	t := rs.Suggested
	switch {
	case decided == 0:
		return fmt.Sprintf("No suggestion of %s has been decided yet; a score threshold is offered from %s on.", rs.Source, Plural(MinThresholdDecisions, "decision")) + pending
	case !t.OK:
		return fmt.Sprintf("No score of %s keeps %.0f %% of suggestions yet: %d of %s kept (%s).", rs.Source, 100*KeepRate, kept, Plural(decided, "decision"), keptShare(kept, decided)) + pending
	case !rs.EnoughEvidence():
		return fmt.Sprintf("Not enough evidence for a score threshold yet: suggestions of %s scoring %.3f or more were kept in %d of %s (%s); a threshold is offered from %s on.",
			rs.Source, t.Score, t.Kept, Plural(t.N, "decision"), keptShare(t.Kept, t.N), Plural(MinThresholdDecisions, "decision")) + pending
	default:
		return fmt.Sprintf("On the evidence so far, suggestions of %s scoring %.3f or more were kept (accepted or corrected) in %d of %s (%s).",
			rs.Source, t.Score, t.Kept, Plural(t.N, "decision"), keptShare(t.Kept, t.N)) + pending
	}
}

// keptShare is "97.0 %, 95 % Wilson interval 91.6–99.0 %".
func keptShare(kept, n int) string {
	ci := project.WilsonInterval(kept, n, project.Z95)
	return fmt.Sprintf("%s, 95 %% Wilson interval %.1f–%s", Pct(float64(kept)/float64(n)), 100*ci[0], Pct(ci[1]))
}

// CollectReviewStats reads the review decisions of a source ("" for all)
// and summarises them per source and class, with the class names.
func CollectReviewStats(ctx context.Context, st backend.Project, source string) ([]ReviewStats, map[int64]string, error) {
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
	var out []ReviewStats
	for _, src := range order {
		ds := bySource[src]
		rs := ReviewStats{Source: src, Summary: suggest.Summarise(ds), Reliability: suggest.Reliability(ds, reliabilityBins), Suggested: suggest.SuggestThreshold(ds, KeepRate)}
		for _, c := range rs.Summary {
			rs.Classes = append(rs.Classes, map[string]any{"class": names[c.ClassID], "in": c.In, "accepted": c.Accepted, "corrected": c.Corrected,
				"rejected": c.Rejected, "pending": c.Pending, "mean_corrected_iou": Num(c.MeanCorrectedIoU)})
		}
		for _, b := range rs.Reliability {
			rs.Bins = append(rs.Bins, map[string]any{"from": b.Lo, "to": b.Hi, "decided": b.Decided, "kept": b.Kept, "kept_rate": Num(b.Rate)})
		}
		rs.Threshold = map[string]any{"score": nil, "kept_rate": nil, "kept_ci95": nil, "decisions": rs.Suggested.N, "target": KeepRate,
			"min_decisions": MinThresholdDecisions, "enough_evidence": rs.EnoughEvidence()}
		if rs.Suggested.OK {
			rs.Threshold["score"], rs.Threshold["kept_rate"] = rs.Suggested.Score, rs.Suggested.Rate
			rs.Threshold["kept_ci95"] = Interval(project.WilsonInterval(rs.Suggested.Kept, rs.Suggested.N, project.Z95))
		}
		out = append(out, rs)
	}
	return out, names, nil
}
