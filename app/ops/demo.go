package ops

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/project"
)

// DemoProjectName is the project file that "boxwright demo DIR" writes.
const DemoProjectName = "harbour" + backend.Extension

// DemoDefaults is the scenario the window's demo button makes.
var DemoDefaults = demo.Config{Seed: 1}

// MakeDemo writes the scenario's images under dir/images and a project
// dir/harbour.boxw holding them, both annotators' labels and the pending
// suggestions. A failure removes the half-made project file.
func MakeDemo(ctx context.Context, dir string, cfg demo.Config, progress func(done, total int)) (err error) {
	// The demo writes images/ and the project into dir: never over files
	// someone else put there.
	if entries, err := os.ReadDir(dir); err == nil && len(entries) > 0 {
		return project.Explained(project.ErrInvalid, "make demo: %s is not empty (the demo writes %s and %s there): give a new or empty folder",
			dir, filepath.Join(dir, "images"), filepath.Join(dir, DemoProjectName))
	}
	sc := demo.Generate(cfg)
	imgDir := filepath.Join(dir, "images")
	if err := os.MkdirAll(imgDir, 0o755); err != nil {
		return fmt.Errorf("make demo folder: %w", err)
	}
	paths, err := sc.WriteImages(ctx, imgDir, progress)
	if err != nil {
		return fmt.Errorf("write demo images: %w", err)
	}
	path := filepath.Join(dir, DemoProjectName)
	s, err := backend.Create(path)
	if err != nil {
		return err
	}
	defer func() {
		s.Close()
		if err != nil {
			os.Remove(path)
		}
	}()
	rep, err := s.AddImages(ctx, paths, project.IntakeOptions{})
	if err != nil {
		return err
	}
	if len(rep.Failed) > 0 {
		return fmt.Errorf("demo image %s: %s", rep.Failed[0].Path, rep.Failed[0].Error)
	}
	return fillDemo(ctx, s, sc, paths)
}

// fillDemo stores the scenario's classes, labels and suggestions for the
// images already added from paths (in frame order).
func fillDemo(ctx context.Context, s backend.Project, sc *demo.Scenario, paths []string) error {
	classID := map[string]int64{}
	for _, name := range demo.Classes {
		c, err := s.AddClass(ctx, project.Class{Name: name})
		if err != nil {
			return err
		}
		classID[name] = c.ID
	}
	imageID := make([]int64, len(paths))
	all, err := s.Images(ctx)
	if err != nil {
		return err
	}
	byPath := map[string]int64{}
	for _, im := range all {
		byPath[filepath.Clean(s.ImagePath(im))] = im.ID
	}
	for i, p := range paths {
		abs, _ := filepath.Abs(p)
		if imageID[i] = byPath[filepath.Clean(abs)]; imageID[i] == 0 {
			return errors.New("demo image " + p + " was not added")
		}
	}
	var labels []project.Label
	var annIDs []int64
	for _, a := range sc.Annotators {
		ann, err := s.AddAnnotator(ctx, a.Name)
		if err != nil {
			return err
		}
		annIDs = append(annIDs, ann.ID)
		for f, objs := range a.Labels {
			for _, o := range objs {
				labels = append(labels, project.Label{ImageID: imageID[f], ClassID: classID[o.Class], AnnotatorID: ann.ID,
					Box: o.Box, Origin: project.OriginDrawn})
			}
		}
	}
	if err := s.AddLabels(ctx, labels); err != nil {
		return err
	}
	var sugs []project.Suggestion
	for f, ss := range sc.Suggestions {
		for _, g := range ss {
			sugs = append(sugs, project.Suggestion{ImageID: imageID[f], ClassID: classID[g.Class], Box: g.Box, Score: g.Score, Source: sc.Source})
		}
	}
	if _, err := s.AddSuggestions(ctx, sugs); err != nil {
		return err
	}
	// A project in mid-course: the first half labelled by everyone and
	// some of it checked by a second annotator, the rest only just begun.
	for f, id := range imageID {
		st := project.StatusStarted
		switch {
		case f < len(imageID)/4:
			st = project.StatusReviewed
		case f < len(imageID)/2:
			st = project.StatusDone
		}
		for i, ann := range annIDs {
			by := ann
			if st == project.StatusReviewed && len(annIDs) > 1 {
				by = annIDs[(i+1)%len(annIDs)] // reviewed by the other one
			}
			if err := s.SetImageStatus(ctx, id, ann, st, by); err != nil {
				return err
			}
		}
	}
	return nil
}
