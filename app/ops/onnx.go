package ops

import (
	"context"
	"fmt"
	"image"
	"sort"
	"strings"

	"boxwright/app/backend"
	"boxwright/project"
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
// finds as pending suggestions (classes to create are created only then,
// once every image has been read).
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
	r := &onnx.Runner{Model: m, Load: func(ctx context.Context, im project.Image) (image.Image, error) { return DecodeProjectImage(st, im) }}
	ps, err := r.Suggest(ctx, ims, nil, j.Progress)
	var onImages []int64
	for _, im := range ims {
		if why, bad := r.Failed[im.ID]; bad {
			rep.Failed = append(rep.Failed, why)
		} else {
			onImages = append(onImages, im.ID)
		}
	}
	if err != nil {
		return rep, err
	}
	index := map[string]int{}
	for i, n := range m.Classes {
		index[n] = i
	}
	for _, p := range ps {
		id := ids[index[p.ClassName]]
		if id == 0 {
			rep.Dropped++
			continue
		}
		rep.Detections = append(rep.Detections, project.Suggestion{ImageID: p.ImageID, ClassID: id, Box: p.Box,
			Score: ClampScore(p.Score), Source: rep.Source, State: project.SuggestionPending})
		rep.ClassNames[id] = p.ClassName
		if to, ok := j.Unknown.Map[p.ClassName]; ok {
			rep.ClassNames[id] = to
		}
	}
	rep.Images = len(onImages)
	if !j.Save || len(onImages) == 0 {
		return rep, nil
	}
	created := map[int64]int64{}
	for i, name := range toCreate {
		c, err := st.AddClass(ctx, project.Class{Name: name})
		if err != nil {
			return rep, fmt.Errorf("create class %q: %w", name, err)
		}
		created[-int64(i+1)] = c.ID
		rep.ClassNames[c.ID] = name
		rep.ClassesCreated = append(rep.ClassesCreated, name)
	}
	for i, d := range rep.Detections {
		if d.ClassID < 0 {
			rep.Detections[i].ClassID = created[d.ClassID]
		}
	}
	if rep.Saved, err = st.ReplaceSuggestionsOn(ctx, rep.Source, onImages, rep.Detections); err != nil {
		return rep, err
	}
	return rep, nil
}
