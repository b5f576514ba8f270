package ops

import (
	"context"
	"errors"
	"fmt"
	"image"
	"os"
	"sort"
	"strings"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/suggest"
	"boxwright/suggest/detector/onnxexport"
	"boxwright/suggest/onnx"
)

// ModelRunJob runs an ONNX model file over project images.
type ModelRunJob struct {
	// Model is the opened model (onnx.Open); the caller closes it.
	Model *onnx.Model
	// Images to run on; nil: unlabelled images (not skipped), or every
	// image with All; Limit keeps the first Limit of them (0: all).
	Images []project.Image
	All    bool
	Limit  int
	// Unknown says what to do with the model's classes the project lacks.
	Unknown UnknownClassRule
	// Save stores the detections as pending suggestions of the model's
	// source, replacing that source's pending ones on those images.
	Save     bool
	Progress func(done, total int)
}

// ModelRunReport is what a run of a model file found.
type ModelRunReport struct {
	Model, Source, Layout string
	Images                int
	Detections            []project.Suggestion
	// ClassNames names Detections' classes, by class ID (classes created
	// for the run have IDs only once stored).
	ClassNames     map[int64]string
	Dropped        int
	ClassesCreated []string
	Failed         []string
	Saved          project.SuggestionImportReport
	// Stored counts the images whose suggestions were stored (all of
	// Images unless the run was cancelled or failed).
	Stored int
}

// UnlabelledImages lists the images without labels that are not skipped,
// or every image with all.
func UnlabelledImages(ctx context.Context, st backend.Project, all bool) ([]project.Image, error) {
	ims, err := st.Images(ctx)
	if err != nil || all {
		return ims, err
	}
	counts, err := st.CountsByImage(ctx)
	if err != nil {
		return nil, err
	}
	var out []project.Image
	for _, im := range ims {
		if im.Status != project.StatusSkipped && counts[im.ID].Labels == 0 {
			out = append(out, im)
		}
	}
	return out, nil
}

// classPlan resolves each of the model's class names to a project class
// by the rules of suggestion import (map, then create or drop, else
// stop), before any image is read: the model's names are known up front.
// ids[i] is the project class of model class i, 0 to drop it, negative
// for a class to create (toCreate[-id-1]).
func classPlan(ctx context.Context, st backend.Project, names []string, rule UnknownClassRule) (ids []int64, toCreate []string, err error) {
	classes, err := st.Classes(ctx)
	if err != nil {
		return nil, nil, err
	}
	byName := map[string]int64{}
	for _, c := range classes {
		byName[c.Name] = c.ID
	}
	ids = make([]int64, len(names))
	var missing []string
	for i, name := range names {
		target := name
		if to, ok := rule.Map[name]; ok {
			target = to
		}
		switch id, known := byName[target]; {
		case known:
			ids[i] = id
		case rule.creates(target):
			if err := project.ValidateName("class", target); err != nil {
				return nil, nil, fmt.Errorf("the model's class %q cannot be created: %w", target, err)
			}
			toCreate = append(toCreate, target)
			byName[target] = -int64(len(toCreate))
			ids[i] = byName[target]
		case target != name:
			return nil, nil, fmt.Errorf("--map %s=%s: the project has no class %q (add it, or use --create-classes)", name, target, target)
		case rule.drops(name):
			ids[i] = 0
		default:
			missing = append(missing, fmt.Sprintf("%q", name))
		}
	}
	if len(missing) > 0 {
		sort.Strings(missing)
		return nil, nil, project.Explained(project.ErrInvalid, "the model names classes the project does not have: %s; map them (--map NAME=CLASS), create them (--create-classes) or drop their boxes (--drop-unknown); no image was read",
			strings.Join(missing, ", "))
	}
	return ids, toCreate, nil
}

// RunModel runs a model file over images and, with Save, stores what it
// finds as pending suggestions as it goes (classes to create are created
// with the first images stored): a cancel keeps every image finished.
func RunModel(ctx context.Context, st backend.Project, j ModelRunJob) (ModelRunReport, error) {
	m := j.Model
	rep := ModelRunReport{Model: m.Path, Source: m.Source(), Layout: m.Desc.Output.Layout, ClassNames: map[int64]string{}}
	ids, toCreate, err := classPlan(ctx, st, m.Classes, j.Unknown)
	if err != nil {
		return rep, err
	}
	ims := j.Images
	if ims == nil {
		if ims, err = UnlabelledImages(ctx, st, j.All); err != nil {
			return rep, err
		}
	}
	if j.Limit > 0 && len(ims) > j.Limit {
		ims = ims[:j.Limit]
	}
	index := map[string]int{}
	for i, n := range m.Classes {
		index[n] = i
	}
	// With Save, what is found is stored every saveEvery images, so that a
	// cancel (or a failure) keeps every image finished before it; the
	// classes to create are created with the first images stored.
	var batch []project.Suggestion
	var batchIDs []int64
	created := map[int64]int64{}
	flush := func(ctx context.Context) error {
		if !j.Save || len(batchIDs) == 0 {
			return nil
		}
		if len(toCreate) > 0 && len(created) == 0 {
			for i, name := range toCreate {
				c, err := st.AddClass(ctx, project.Class{Name: name})
				if err != nil {
					return fmt.Errorf("create class %q: %w", name, err)
				}
				created[-int64(i+1)] = c.ID
				rep.ClassNames[c.ID] = name
				rep.ClassesCreated = append(rep.ClassesCreated, name)
			}
		}
		for i, g := range batch {
			if g.ClassID < 0 {
				batch[i].ClassID = created[g.ClassID]
			}
		}
		saved, err := st.ReplaceSuggestionsOn(ctx, rep.Source, batchIDs, batch)
		if err != nil {
			return err
		}
		rep.Saved.Source = saved.Source
		rep.Saved.Added += saved.Added
		rep.Saved.ReplacedPending += saved.ReplacedPending
		rep.Saved.KeptReviewed += saved.KeptReviewed
		rep.Stored += len(batchIDs)
		batch, batchIDs = nil, nil
		return nil
	}
	r := &onnx.Runner{Model: m, Load: func(ctx context.Context, im project.Image) (image.Image, error) {
		w, h := m.MinSize(im.Width, im.Height)
		return DecodeProjectImageAtLeast(st, im, w, h)
	}}
	r.OnImage = func(im project.Image, ps []suggest.Proposal) error {
		rep.Images++
		for _, p := range ps {
			id := ids[index[p.ClassName]]
			if id == 0 {
				rep.Dropped++
				continue
			}
			g := project.Suggestion{ImageID: p.ImageID, ClassID: id, Box: p.Box, Score: ClampScore(p.Score), Source: rep.Source, State: project.SuggestionPending}
			rep.Detections = append(rep.Detections, g)
			batch = append(batch, g)
			rep.ClassNames[id] = p.ClassName
			if to, ok := j.Unknown.Map[p.ClassName]; ok {
				rep.ClassNames[id] = to
			}
		}
		batchIDs = append(batchIDs, im.ID)
		if len(batchIDs) >= saveEvery {
			return flush(ctx)
		}
		return nil
	}
	_, err = r.Suggest(ctx, ims, nil, j.Progress)
	for _, im := range ims {
		if why, bad := r.Failed[im.ID]; bad {
			rep.Failed = append(rep.Failed, why)
		}
	}
	// What was finished before a cancel is stored all the same.
	if err == nil || errors.Is(err, context.Canceled) {
		if ferr := flush(context.WithoutCancel(ctx)); ferr != nil {
			return rep, ferr
		}
	}
	if err != nil {
		return rep, err
	}
	for i, d := range rep.Detections {
		if d.ClassID < 0 && created[d.ClassID] != 0 {
			rep.Detections[i].ClassID = created[d.ClassID]
		}
	}
	return rep, nil
}

// saveEvery is how many images a model run stores at a time.
const saveEvery = 25

// ModelExport is what an export of a stored model wrote.
type ModelExport struct {
	Model, Path, Description string
	Width, Height            int
	Bytes                    int
	// Frame says where the input size came from.
	Frame string
}

// ExportModel writes a stored model (the current one when name is empty)
// as an ONNX file with its description beside it. The input frame is
// width×height, or, when 0, the frame of the project's most common image
// size, which the model then sees exactly as in its own runs. Nothing is
// written over an existing file, and a failed export leaves neither file.
func ExportModel(ctx context.Context, st backend.Project, name, out string, width, height int) (ModelExport, error) {
	pm, m, _, err := LoadModel(ctx, st, name)
	if err != nil {
		return ModelExport{}, err
	}
	rep := ModelExport{Model: pm.Name, Path: out, Description: onnx.DescriptionPath(out), Width: width, Height: height, Frame: "given"}
	if width == 0 {
		ims, err := st.Images(ctx)
		if err != nil {
			return rep, err
		}
		if len(ims) == 0 {
			return rep, project.Explained(project.ErrInvalid, "the project has no images to take an input size from: give one (--input WxH, multiples of 32)")
		}
		type size struct{ w, h int }
		count := map[size]int{}
		best := size{}
		for _, im := range ims {
			s := size{im.Width, im.Height}
			count[s]++
			if count[s] > count[best] || (count[s] == count[best] && (s.w*s.h > best.w*best.h)) {
				best = s
			}
		}
		rep.Width, rep.Height = onnxexport.Frame(m, best.w, best.h)
		rep.Frame = fmt.Sprintf("the frame of the project's commonest image size, %d×%d (%d of %s)", best.w, best.h, count[best], Plural(len(ims), "image"))
	}
	b, err := onnxexport.Export(m, pm.Name, rep.Width, rep.Height)
	if err != nil {
		return rep, err
	}
	rep.Bytes = len(b)
	for _, p := range []string{out, rep.Description} {
		if _, err := os.Lstat(p); err == nil {
			return rep, project.Explained(project.ErrInvalid, "%s exists already: choose another name or remove it first", p)
		}
	}
	tmp := out + ".partial"
	if err := os.WriteFile(tmp, b, 0o644); err != nil {
		os.Remove(tmp)
		return rep, fmt.Errorf("export model %q: %w", pm.Name, err)
	}
	if err := onnxexport.Describe(m, rep.Width, rep.Height).Write(rep.Description); err != nil {
		os.Remove(tmp)
		return rep, fmt.Errorf("export model %q: %w", pm.Name, err)
	}
	if err := os.Rename(tmp, out); err != nil {
		os.Remove(tmp)
		os.Remove(rep.Description)
		return rep, fmt.Errorf("export model %q: %w", pm.Name, err)
	}
	return rep, nil
}
