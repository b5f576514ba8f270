package store

import (
	"context"
	"fmt"

	"boxwright/project"
	"boxwright/project/formats"
)

// ExportImages gathers one annotator's labels for export: every image
// that is not skipped and either carries labels of theirs or is marked
// done or reviewed by them (an image checked and found empty is a useful
// negative example; another annotator's "done" says nothing about this
// one's labels). Classes are all project classes in display order.
func (s *Store) ExportImages(ctx context.Context, annotatorID int64) ([]string, []formats.ExportImage, error) {
	cs, err := s.Classes(ctx)
	if err != nil {
		return nil, nil, err
	}
	names := map[int64]string{}
	classes := make([]string, 0, len(cs))
	for _, c := range cs {
		names[c.ID] = c.Name
		classes = append(classes, c.Name)
	}
	ims, err := s.ImagesFor(ctx, annotatorID) // the exported annotator's status only
	if err != nil {
		return nil, nil, err
	}
	labels, err := s.Labels(ctx, project.LabelFilter{AnnotatorID: annotatorID})
	if err != nil {
		return nil, nil, err
	}
	byImage := map[int64][]formats.BoxRecord{}
	for _, l := range labels {
		byImage[l.ImageID] = append(byImage[l.ImageID], formats.BoxRecord{Class: names[l.ClassID], Box: l.Box,
			Where: fmt.Sprintf("label %d", l.ID)})
	}
	var out []formats.ExportImage
	for _, im := range ims {
		boxes := byImage[im.ID]
		if im.Status == project.StatusSkipped || (len(boxes) == 0 && im.Status != project.StatusDone && im.Status != project.StatusReviewed) {
			continue
		}
		out = append(out, formats.ExportImage{
			Record: formats.ImageRecord{Name: im.Path, Width: im.Width, Height: im.Height, Depth: 3, Boxes: boxes, Where: im.Path},
			File:   s.ImagePath(im),
			Key:    im.SHA256,
		})
	}
	return classes, out, nil
}
