package ops

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"boxwright/app/backend"
	"boxwright/project"
)

// CopyMarker is what a copy needs of a server project it fills: a mark
// that keeps anyone from opening it until the copy is whole, and a way to
// empty it again when the copy fails. Server projects have it; a project
// file does not need it (it is built under a temporary name instead).
type CopyMarker interface {
	MarkCopying(ctx context.Context, source string) error
	FinishCopying(ctx context.Context) error
	DiscardCopy(ctx context.Context) error
}

// The stages of a copy, as its progress callback names them.
const (
	CopyStageClasses     = "classes"
	CopyStageImages      = "images"
	CopyStageLabels      = "labels"
	CopyStageSuggestions = "suggestions"
	CopyStageStatuses    = "statuses"
	CopyStageModels      = "models"
)

// CopyOptions tunes CopyProject.
type CopyOptions struct {
	// ImageDir is where a project file being filled from a server keeps
	// the image bytes (the images keep their names under it); required
	// then, unused otherwise.
	ImageDir string
	// Progress, when set, hears each stage's progress: done of total.
	Progress func(stage string, done, total int)
}

// CopyReport says what a copy copied.
type CopyReport struct {
	From        string `json:"from"`
	To          string `json:"to"`
	Classes     int    `json:"classes"`
	Annotators  int    `json:"annotators"`
	Images      int    `json:"images"`
	Labels      int    `json:"labels"`
	Suggestions int    `json:"suggestions"`
	Decided     int    `json:"decided"`
	Models      int    `json:"models"`
	// ImageDir is the folder the image bytes were written to ("" when the
	// copy refers to the source's own files or keeps them on a server).
	ImageDir string `json:"image_dir,omitempty"`
}

func (o CopyOptions) progress(stage string, done, total int) {
	if o.Progress != nil {
		o.Progress(stage, done, total)
	}
}

// isServer says whether p is a server project (one a copy marks).
func isServer(p backend.Project) bool {
	_, ok := p.(CopyMarker)
	return ok
}

// CheckCopySource refuses a source that cannot be copied whole: images
// whose files are gone.
func CheckCopySource(ctx context.Context, src backend.Project) error {
	missing, err := src.MissingImages(ctx)
	if err != nil {
		return fmt.Errorf("copy %s: %w", src.Path(), err)
	}
	if len(missing) > 0 {
		names := make([]string, 0, 5)
		for i, im := range missing {
			if i == 5 {
				names = append(names, fmt.Sprintf("and %d more", len(missing)-5))
				break
			}
			names = append(names, im.Path)
		}
		return project.Explained(project.ErrNotFound, "copy %s: the files of %d images are missing (%s); nothing was copied: run boxwright relink %s FOLDER first",
			src.Path(), len(missing), strings.Join(names, ", "), src.Path())
	}
	return nil
}

// CopyProject copies everything of src into dst, a new, empty project:
// classes, annotators, images, labels with their provenance, suggestions
// with their review, each annotator's image statuses and the models, with
// every ID mapped. It works only through the storage interfaces, so any
// two backends work. It does not make dst all-or-nothing by itself:
// CopyTo builds the target so that a failure leaves nothing behind.
// When it is done, it compares the counts of both projects and fails if
// they differ.
func CopyProject(ctx context.Context, src, dst backend.Project, opts CopyOptions) (CopyReport, error) {
	rep := CopyReport{From: src.Path(), To: dst.Path()}
	if err := CheckCopySource(ctx, src); err != nil {
		return rep, err
	}
	c := &copier{src: src, dst: dst, opts: opts, rep: &rep,
		class: map[int64]int64{}, ann: map[int64]int64{}, image: map[int64]int64{}, sug: map[int64]int64{}}
	for _, step := range []func(context.Context) error{c.classes, c.annotators, c.images, c.suggestions, c.labels, c.statuses, c.models, c.verify} {
		if err := ctx.Err(); err != nil {
			return rep, err
		}
		if err := step(ctx); err != nil {
			return rep, err
		}
	}
	return rep, nil
}

type copier struct {
	src, dst backend.Project
	opts     CopyOptions
	rep      *CopyReport
	// source ID → target ID
	class, ann, image, sug map[int64]int64
	srcSugs                map[int64]project.Suggestion // by source ID
}

func (c *copier) classes(ctx context.Context) error {
	cs, err := c.src.Classes(ctx)
	if err != nil {
		return fmt.Errorf("read the classes: %w", err)
	}
	for i, cl := range cs {
		got, err := c.dst.AddClass(ctx, project.Class{Name: cl.Name, Color: cl.Color, HotKey: cl.HotKey})
		if err != nil {
			return fmt.Errorf("copy class %q: %w", cl.Name, err)
		}
		if cl.HotKey == "" && got.HotKey != "" {
			// A class without a key gets a free one when added: take it
			// back at once, before a later class needs it.
			got.HotKey = ""
			if err := c.dst.UpdateClass(ctx, got); err != nil {
				return fmt.Errorf("copy class %q: %w", cl.Name, err)
			}
		}
		c.class[cl.ID] = got.ID
		c.opts.progress(CopyStageClasses, i+1, len(cs))
	}
	c.rep.Classes = len(cs)
	return nil
}

func (c *copier) annotators(ctx context.Context) error {
	as, err := c.src.Annotators(ctx)
	if err != nil {
		return fmt.Errorf("read the annotators: %w", err)
	}
	for _, a := range as {
		got, err := c.dst.EnsureAnnotator(ctx, a.Name)
		if err != nil {
			return fmt.Errorf("copy annotator %q: %w", a.Name, err)
		}
		c.ann[a.ID] = got.ID
	}
	c.rep.Annotators = len(as)
	return nil
}

// images brings the image files into dst. A project file filled from a
// file refers to the source's files; one filled from a server gets the
// bytes written under opts.ImageDir with the images' names; a server gets
// the bytes uploaded under the images' names (relative paths kept, an
// absolute path by its base name), from a temporary folder of links to
// the files (of copies, when they come from another server's bounded
// image cache).
func (c *copier) images(ctx context.Context) error {
	ims, err := c.src.Images(ctx)
	if err != nil {
		return fmt.Errorf("read the images: %w", err)
	}
	sort.Slice(ims, func(i, j int) bool { return ims[i].ID < ims[j].ID })
	if len(ims) == 0 {
		return nil
	}
	toServer, fromServer := isServer(c.dst), isServer(c.src)
	if !toServer && fromServer && c.opts.ImageDir == "" {
		return errors.New("copy images: a project file filled from a server needs a folder for the image files")
	}
	var staging string
	if toServer {
		staging, err = os.MkdirTemp("", "boxwright-copy-")
		if err != nil {
			return fmt.Errorf("copy images: %w", err)
		}
		defer os.RemoveAll(staging)
	}
	taken := map[string]bool{}
	var paths []string
	for i, im := range ims {
		local, err := c.src.FetchImage(ctx, im)
		if err != nil {
			return fmt.Errorf("copy image %s: %w", im.Path, err)
		}
		local, _ = filepath.Abs(local)
		switch {
		case toServer:
			name := uniqueName(imageName(im.Path), im.ID, taken)
			link := filepath.Join(staging, filepath.FromSlash(name))
			if err := os.MkdirAll(filepath.Dir(link), 0o755); err != nil {
				return fmt.Errorf("copy image %s: %w", im.Path, err)
			}
			if fromServer {
				// The image cache is bounded: a copy of the bytes, not a
				// link, so that later fetches cannot evict them first.
				if err := copyFile(local, link); err != nil {
					return fmt.Errorf("copy image %s: %w", im.Path, err)
				}
			} else if err := os.Symlink(local, link); err != nil {
				return fmt.Errorf("copy image %s: %w", im.Path, err)
			}
		case fromServer:
			name := uniqueName(imageName(im.Path), im.ID, taken)
			to := filepath.Join(c.opts.ImageDir, filepath.FromSlash(name))
			if err := copyFile(local, to); err != nil {
				return fmt.Errorf("copy image %s to %s: %w", im.Path, to, err)
			}
			paths = append(paths, to)
		default:
			paths = append(paths, local)
		}
		if fromServer {
			c.opts.progress(CopyStageImages, i+1, len(ims))
		}
	}
	if toServer {
		// Each top-level entry of the staging folder: a folder given to
		// the intake names its files from the folder's own name on.
		entries, err := os.ReadDir(staging)
		if err != nil {
			return fmt.Errorf("copy images: %w", err)
		}
		for _, e := range entries {
			paths = append(paths, filepath.Join(staging, e.Name()))
		}
	}
	intake := project.IntakeOptions{MaxPixels: 1 << 62}
	if !fromServer {
		intake.Progress = func(done, total int) { c.opts.progress(CopyStageImages, done, total) }
	}
	ir, err := c.dst.AddImages(ctx, paths, intake)
	if err != nil {
		return fmt.Errorf("copy images: %w", err)
	}
	if len(ir.Failed) > 0 {
		return fmt.Errorf("copy images: %s: %s", ir.Failed[0].Path, ir.Failed[0].Error)
	}
	got, err := c.dst.Images(ctx)
	if err != nil {
		return fmt.Errorf("copy images: %w", err)
	}
	bySum := map[string]int64{}
	for _, im := range got {
		bySum[im.SHA256] = im.ID
	}
	for _, im := range ims {
		id, ok := bySum[im.SHA256]
		if !ok {
			return fmt.Errorf("copy image %s: the target did not take it", im.Path)
		}
		c.image[im.ID] = id
	}
	c.rep.Images = len(ims)
	return nil
}

// correctedBox is the box to replay the correction of g with, so that the
// suggestion gets back its FinalIoU (its IoU with the box it was corrected
// to, which review statistics read). The label's box is that box unless
// the label was edited after the review or deleted; then the corrected
// box is lost, and one with the same IoU stands in for it: g's box
// narrowed to that share of its width (the IoU of a box with a part of
// itself is the part's share of its area), or beside it for an IoU of 0.
// The label is then brought to its current box.
func correctedBox(g project.Suggestion, label project.Box, hasLabel bool) project.Box {
	if hasLabel && g.Box.IoU(label) == g.FinalIoU {
		return label
	}
	b := g.Box
	switch w := b.X1 - b.X0; {
	case g.FinalIoU > 0 && g.FinalIoU < 1:
		b.X1 = b.X0 + w*g.FinalIoU
	case g.FinalIoU <= 0:
		b.X0, b.X1 = b.X1+1, b.X1+1+w
	case hasLabel:
		return label
	}
	return b
}

// imageName is the name an image keeps in a copy: its relative path, or
// the base name of an absolute one (or of one that climbs out of its
// folder).
func imageName(p string) string {
	p = strings.ReplaceAll(p, "\\", "/")
	clean := path.Clean(p)
	if path.IsAbs(clean) || clean == ".." || strings.HasPrefix(clean, "../") || strings.Contains(clean, ":") {
		return path.Base(clean)
	}
	// Hidden folders are skipped by a folder intake: keep the name flat.
	for _, part := range strings.Split(clean, "/") {
		if strings.HasPrefix(part, ".") {
			return path.Base(clean)
		}
	}
	return clean
}

// uniqueName keeps two images of one name apart with the image's ID.
func uniqueName(name string, id int64, taken map[string]bool) string {
	if taken[name] {
		ext := path.Ext(name)
		name = fmt.Sprintf("%s-%d%s", strings.TrimSuffix(name, ext), id, ext)
	}
	taken[name] = true
	return name
}

func copyFile(from, to string) error {
	if err := os.MkdirAll(filepath.Dir(to), 0o755); err != nil {
		return err
	}
	in, err := os.Open(from)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.OpenFile(to, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return err
	}
	if _, err := io.Copy(out, in); err != nil {
		out.Close()
		return err
	}
	if err := out.Sync(); err != nil {
		out.Close()
		return err
	}
	return out.Close()
}

// suggestions stores every suggestion as pending; labels replays the
// decisions.
func (c *copier) suggestions(ctx context.Context) error {
	gs, err := c.src.Suggestions(ctx, project.SuggestionFilter{})
	if err != nil {
		return fmt.Errorf("read the suggestions: %w", err)
	}
	sort.Slice(gs, func(i, j int) bool { return gs[i].ID < gs[j].ID })
	c.srcSugs = map[int64]project.Suggestion{}
	batch := make([]project.Suggestion, len(gs))
	for i, g := range gs {
		c.srcSugs[g.ID] = g
		batch[i] = project.Suggestion{ImageID: c.image[g.ImageID], ClassID: c.class[g.ClassID], Box: g.Box, Score: g.Score,
			Source: g.Source, State: project.SuggestionPending, Created: g.Created}
	}
	if len(batch) > 0 {
		ids, err := c.dst.AddSuggestions(ctx, batch)
		if err != nil {
			return fmt.Errorf("copy suggestions: %w", err)
		}
		if len(ids) != len(gs) {
			return fmt.Errorf("copy suggestions: the target stored %d of %d", len(ids), len(gs))
		}
		for i, g := range gs {
			c.sug[g.ID] = ids[i]
		}
	}
	c.rep.Suggestions = len(gs)
	c.opts.progress(CopyStageSuggestions, len(gs), len(gs))
	return nil
}

// labels copies the labels in the source's ID order, so that they number
// in the same order: a run of labels not made from suggestions is one
// AddLabels; a label made from a suggestion comes from replaying its
// decision with Decide as the original reviewer, so that it has its link,
// origin, source and score as review made them. Labels edited after the
// decision are then brought to their current box and class, and
// suggestions whose label was deleted lose it again. Rejections are
// replayed last.
func (c *copier) labels(ctx context.Context) error {
	ls, err := c.src.Labels(ctx, project.LabelFilter{})
	if err != nil {
		return fmt.Errorf("read the labels: %w", err)
	}
	sort.Slice(ls, func(i, j int) bool { return ls[i].ID < ls[j].ID })
	made := map[int64]project.Label{} // by source suggestion ID
	for _, l := range ls {
		if l.SuggestionID == 0 {
			continue
		}
		g, ok := c.srcSugs[l.SuggestionID]
		if !ok {
			return fmt.Errorf("copy label %d: its suggestion %d is not in the source", l.ID, l.SuggestionID)
		}
		if g.ReviewerID != l.AnnotatorID {
			return fmt.Errorf("copy label %d: it belongs to annotator %d but its suggestion %d was decided by %d; a copy would change whose it is",
				l.ID, l.AnnotatorID, g.ID, g.ReviewerID)
		}
		made[l.SuggestionID] = l
	}
	var (
		plain     []project.Label
		decisions []project.Decision
		reviewer  int64 // of decisions
		updates   []project.Label
		done      int
		madeLabel = map[int64]int64{} // by target suggestion
	)
	flushPlain := func() error {
		if len(plain) == 0 {
			return nil
		}
		if err := c.dst.AddLabels(ctx, plain); err != nil {
			return fmt.Errorf("copy labels: %w", err)
		}
		done += len(plain)
		plain = nil
		c.opts.progress(CopyStageLabels, done, len(ls))
		return nil
	}
	flushDecisions := func() error {
		if len(decisions) == 0 {
			return nil
		}
		got, err := c.dst.Decide(ctx, c.ann[reviewer], decisions)
		if err != nil {
			return fmt.Errorf("copy decisions: %w", err)
		}
		for _, d := range decisions {
			id, ok := got[d.SuggestionID]
			if !ok {
				return fmt.Errorf("copy decisions: suggestion %d made no label", d.SuggestionID)
			}
			madeLabel[d.SuggestionID] = id
		}
		c.rep.Decided += len(decisions)
		done += len(decisions)
		decisions = nil
		c.opts.progress(CopyStageLabels, done, len(ls))
		return nil
	}
	// Each replayed acceptance with the label it must end as, for the
	// updates after; madeLabel has the labels Decide made, by target
	// suggestion.
	type replay struct {
		target project.Label      // as it must end
		made   project.Decision   // as decided
		g      project.Suggestion // the source suggestion
	}
	var replays []replay
	accept := func(g project.Suggestion, l project.Label, hasLabel bool) {
		d := project.Decision{SuggestionID: c.sug[g.ID], Accept: true}
		if g.State == project.SuggestionCorrected {
			class := g.ClassID
			if hasLabel {
				class = l.ClassID
			}
			d.Box, d.ClassID = correctedBox(g, l.Box, hasLabel), c.class[class]
			if d.Box == g.Box && class == g.ClassID {
				// Corrected, yet box and class are the suggestion's again
				// (edited back since): a box a little off keeps the state;
				// the label is brought back below.
				d.Box.X1 = d.Box.X0 + (d.Box.X1-d.Box.X0)*0.999
			}
		}
		decisions = append(decisions, d)
		replays = append(replays, replay{target: l, made: d, g: g})
	}
	for _, l := range ls {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		if l.SuggestionID == 0 {
			if err := flushDecisions(); err != nil {
				return err
			}
			plain = append(plain, project.Label{ImageID: c.image[l.ImageID], ClassID: c.class[l.ClassID], AnnotatorID: c.ann[l.AnnotatorID],
				Box: l.Box, Origin: l.Origin, Source: l.Source, Score: l.Score, Created: l.Created})
			continue
		}
		if err := flushPlain(); err != nil {
			return err
		}
		g := c.srcSugs[l.SuggestionID]
		if len(decisions) > 0 && reviewer != g.ReviewerID {
			if err := flushDecisions(); err != nil {
				return err
			}
		}
		reviewer = g.ReviewerID
		accept(g, l, true)
	}
	if err := flushPlain(); err != nil {
		return err
	}
	if err := flushDecisions(); err != nil {
		return err
	}
	// Accepted or corrected suggestions whose label was deleted since,
	// and rejections, grouped by reviewer in suggestion order.
	var gone []int64 // target suggestions whose label goes again
	ids := make([]int64, 0, len(c.srcSugs))
	for id := range c.srcSugs {
		ids = append(ids, id)
	}
	sort.Slice(ids, func(i, j int) bool { return ids[i] < ids[j] })
	byReviewer := map[int64][]project.Decision{}
	var order []int64
	for _, id := range ids {
		g := c.srcSugs[id]
		if g.State == project.SuggestionPending {
			continue
		}
		if _, ok := made[id]; ok {
			continue
		}
		if _, ok := c.ann[g.ReviewerID]; !ok {
			return fmt.Errorf("copy suggestion %d: it was decided by annotator %d, who is not in the source", id, g.ReviewerID)
		}
		if _, seen := byReviewer[g.ReviewerID]; !seen {
			order = append(order, g.ReviewerID)
		}
		if g.State == project.SuggestionRejected {
			byReviewer[g.ReviewerID] = append(byReviewer[g.ReviewerID], project.Decision{SuggestionID: c.sug[id]})
			continue
		}
		before := len(decisions)
		accept(g, project.Label{}, false)
		byReviewer[g.ReviewerID] = append(byReviewer[g.ReviewerID], decisions[before:]...)
		decisions = decisions[:before]
		replays = replays[:len(replays)-1]
		gone = append(gone, c.sug[id])
	}
	for _, r := range order {
		got, err := c.dst.Decide(ctx, c.ann[r], byReviewer[r])
		if err != nil {
			return fmt.Errorf("copy decisions: %w", err)
		}
		c.rep.Decided += len(byReviewer[r])
		var del []int64
		for _, s := range gone {
			if id, ok := got[s]; ok {
				del = append(del, id)
			}
		}
		if len(del) > 0 {
			if _, err := c.dst.ApplyLabelChange(ctx, project.LabelChange{Delete: del}); err != nil {
				return fmt.Errorf("copy decisions: remove the %d labels deleted in the source after review: %w", len(del), err)
			}
		}
	}
	// Bring the labels made by review to their current box and class
	// (the box and class of a decision are the suggestion's where zero).
	for _, r := range replays {
		box, class := r.made.Box, r.made.ClassID
		if box == (project.Box{}) {
			box = r.g.Box
		}
		if class == 0 {
			class = c.class[r.g.ClassID]
		}
		want := project.Label{ID: madeLabel[r.made.SuggestionID], Box: r.target.Box, ClassID: c.class[r.target.ClassID]}
		if want.Box != box || want.ClassID != class {
			updates = append(updates, want)
		}
	}
	if len(updates) > 0 {
		if _, err := c.dst.ApplyLabelChange(ctx, project.LabelChange{Update: updates}); err != nil {
			return fmt.Errorf("copy labels edited after review: %w", err)
		}
	}
	c.rep.Labels = len(ls)
	c.opts.progress(CopyStageLabels, len(ls), len(ls))
	return nil
}

// statuses makes each annotator's status of every image what it is in
// the source (after the labels, which start images as they are stored).
func (c *copier) statuses(ctx context.Context) error {
	as, err := c.src.Annotators(ctx)
	if err != nil {
		return fmt.Errorf("read the annotators: %w", err)
	}
	for i, a := range as {
		want, err := c.src.ImagesFor(ctx, a.ID)
		if err != nil {
			return fmt.Errorf("read the images of %s: %w", a.Name, err)
		}
		have, err := c.dst.ImagesFor(ctx, c.ann[a.ID])
		if err != nil {
			return fmt.Errorf("copy the statuses of %s: %w", a.Name, err)
		}
		now := map[int64]project.ImageStatus{}
		for _, im := range have {
			now[im.ID] = im.Status
		}
		for _, im := range want {
			id := c.image[im.ID]
			if now[id] == im.Status {
				continue
			}
			// Who reviewed is not readable through the storage
			// interfaces, so it is not copied.
			if err := c.dst.SetImageStatus(ctx, id, c.ann[a.ID], im.Status, 0); err != nil {
				return fmt.Errorf("copy the status of %s on %s: %w", a.Name, im.Path, err)
			}
		}
		c.opts.progress(CopyStageStatuses, i+1, len(as))
	}
	return nil
}

func (c *copier) models(ctx context.Context) error {
	ms, err := c.src.Models(ctx)
	if err != nil {
		return fmt.Errorf("read the models: %w", err)
	}
	current := ""
	for i, m := range ms {
		full, err := c.src.Model(ctx, m.Name)
		if err != nil {
			return fmt.Errorf("read model %s: %w", m.Name, err)
		}
		if full.Current {
			current = full.Name
		}
		full.ID, full.Current = 0, false
		if _, err := c.dst.AddModel(ctx, full); err != nil {
			return fmt.Errorf("copy model %s: %w", m.Name, err)
		}
		c.opts.progress(CopyStageModels, i+1, len(ms))
	}
	if current != "" {
		if err := c.dst.SetCurrentModel(ctx, current); err != nil {
			return fmt.Errorf("copy models: make %s current: %w", current, err)
		}
	}
	c.rep.Models = len(ms)
	return nil
}

// verify compares the counts of both projects.
func (c *copier) verify(ctx context.Context) error {
	a, err := c.src.Counts(ctx)
	if err != nil {
		return fmt.Errorf("check the copy: %w", err)
	}
	b, err := c.dst.Counts(ctx)
	if err != nil {
		return fmt.Errorf("check the copy: %w", err)
	}
	if d := countsDiffer(a, b); d != "" {
		return fmt.Errorf("check the copy: it does not match its source: %s", d)
	}
	return nil
}

func countsDiffer(a, b project.Counts) string {
	if a.Images != b.Images || a.Labels != b.Labels {
		return fmt.Sprintf("%d images and %d labels, the copy %d and %d", a.Images, a.Labels, b.Images, b.Labels)
	}
	for _, st := range project.SuggestionStates {
		if a.Suggestions[st] != b.Suggestions[st] {
			return fmt.Sprintf("%d suggestions %s, the copy %d", a.Suggestions[st], st, b.Suggestions[st])
		}
	}
	named := func(what string, x, y []project.NamedCount) string {
		if len(x) != len(y) {
			return fmt.Sprintf("%d %s, the copy %d", len(x), what, len(y))
		}
		for i := range x {
			if x[i].Name != y[i].Name || x[i].Count != y[i].Count {
				return fmt.Sprintf("%s %q has %d labels, the copy's %q %d", what, x[i].Name, x[i].Count, y[i].Name, y[i].Count)
			}
		}
		return ""
	}
	if d := named("class", a.LabelsByClass, b.LabelsByClass); d != "" {
		return d
	}
	if d := named("annotator", a.LabelsByAnnotator, b.LabelsByAnnotator); d != "" {
		return d
	}
	for name, by := range a.StatusByAnnotator {
		for st, n := range by {
			if b.StatusByAnnotator[name][st] != n {
				return fmt.Sprintf("%s has %d images %s, the copy %d", name, n, st, b.StatusByAnnotator[name][st])
			}
		}
	}
	return ""
}

// CopyTo copies src into a new project at target (a file path, a
// postgres:// URL or @NAME), all or nothing.
//
// A project file is built at a hidden temporary name in the target's
// folder and linked into place only when whole; the target must not
// exist. When src is on a server, the image files are written to the
// folder beside the target named like it with "-images" for ".boxw"; it
// must not exist either. On any failure, Ctrl+C included, the temporary
// file and that folder are removed.
//
// A server target is made with backend.Create (the database must hold no
// project) and marked unfinished until the copy is whole, so that nobody
// opens a half-made project; on failure the database is emptied again,
// and if even that fails (the connection is gone) the mark stays and
// says what happened to whoever opens it.
func CopyTo(ctx context.Context, src backend.Project, target string, opts CopyOptions) (rep CopyReport, err error) {
	if err := CheckCopySource(ctx, src); err != nil {
		return rep, err
	}
	w, err := backend.Locate(target)
	if err != nil {
		return rep, err
	}
	if w.IsServer() {
		return copyToServer(ctx, src, target, opts)
	}
	return copyToFile(ctx, src, target, opts)
}

// CopyImageDir is the folder beside a target file that holds the image
// files a copy from a server writes.
func CopyImageDir(target string) string {
	return strings.TrimSuffix(target, backend.Extension) + "-images"
}

func copyToFile(ctx context.Context, src backend.Project, target string, opts CopyOptions) (rep CopyReport, err error) {
	if _, err := os.Lstat(target); err == nil {
		return rep, project.Explained(project.ErrDuplicate, "copy to %s: it already exists; nothing was written: give a new name", target)
	}
	dir, base := filepath.Split(target)
	if dir == "" {
		dir = "."
	}
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return rep, project.Explained(project.ErrNotFound, "copy to %s: the folder %s does not exist (make it first)", target, dir)
	}
	opts.ImageDir = ""
	if isServer(src) {
		opts.ImageDir = CopyImageDir(target)
		if _, err := os.Lstat(opts.ImageDir); err == nil {
			return rep, project.Explained(project.ErrDuplicate, "copy to %s: the folder for its image files, %s, already exists; nothing was written: move it or give another name",
				target, opts.ImageDir)
		}
	}
	partial := filepath.Join(dir, fmt.Sprintf(".%s.partial-%d%s", strings.TrimSuffix(base, backend.Extension), os.Getpid(), backend.Extension))
	removePartial := func() {
		for _, suffix := range []string{"", "-wal", "-shm", "-journal"} {
			os.Remove(partial + suffix)
		}
	}
	dst, err := backend.Create(partial)
	if err != nil {
		removePartial()
		return rep, fmt.Errorf("copy to %s: %w", target, err)
	}
	closed := false
	defer func() {
		if !closed {
			dst.Close()
		}
		if err != nil {
			removePartial()
			if opts.ImageDir != "" {
				os.RemoveAll(opts.ImageDir)
			}
		}
	}()
	rep, err = CopyProject(ctx, src, dst, opts)
	if err != nil {
		return rep, fmt.Errorf("copy to %s (nothing was written): %w", target, err)
	}
	closed = true
	if err = dst.Close(); err != nil {
		return rep, fmt.Errorf("copy to %s (nothing was written): %w", target, err)
	}
	if err = ctx.Err(); err != nil {
		return rep, fmt.Errorf("copy to %s (nothing was written): %w", target, err)
	}
	// A link never replaces a file that appeared at target meanwhile.
	if err = os.Link(partial, target); err != nil {
		return rep, fmt.Errorf("copy to %s (nothing was written): %w", target, err)
	}
	os.Remove(partial)
	rep.To, rep.ImageDir = target, opts.ImageDir
	return rep, nil
}

// cleanupWithin bounds the emptying of a failed server copy.
const cleanupWithin = time.Minute

func copyToServer(ctx context.Context, src backend.Project, target string, opts CopyOptions) (rep CopyReport, err error) {
	dst, err := backend.Create(target)
	if err != nil {
		// The error names the server without the password that target
		// may hold.
		return rep, fmt.Errorf("copy: %w", err)
	}
	defer dst.Close()
	mark, ok := dst.(CopyMarker)
	if !ok {
		return rep, fmt.Errorf("copy to %s: this server project cannot be marked while it is filled", dst.Path())
	}
	if err := mark.MarkCopying(ctx, src.Path()); err != nil {
		return rep, fmt.Errorf("copy to %s: %w", dst.Path(), err)
	}
	rep, err = CopyProject(ctx, src, dst, opts)
	if err == nil {
		err = ctx.Err()
	}
	if err == nil {
		if err = mark.FinishCopying(ctx); err == nil {
			return rep, nil
		}
	}
	cctx, cancel := context.WithTimeout(context.Background(), cleanupWithin)
	defer cancel()
	if derr := mark.DiscardCopy(cctx); derr != nil {
		return rep, fmt.Errorf("copy to %s failed, and emptying it again failed too (%v), so it stays marked as an unfinished copy that cannot be opened: %w",
			dst.Path(), derr, err)
	}
	return rep, fmt.Errorf("copy to %s failed; what was written there is dropped again (the database is empty): %w", dst.Path(), err)
}
