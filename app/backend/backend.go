// Package backend opens projects. It is the one place above storage that
// knows which storage backend holds a project (today the SQLite file of
// package store); everything else works through the Project interface.
package backend

import (
	"context"

	"boxwright/project"
	"boxwright/project/formats"
	"boxwright/store"
)

// Extension is the file name extension of a project file.
const Extension = store.Extension

// Project is an open project: the domain's storage interface and the
// dataset interchange that sits on it.
type Project interface {
	project.Store
	// ImportDataset stores a parsed dataset as one annotator's labels, all
	// or nothing.
	ImportDataset(ctx context.Context, ds *formats.Dataset, opts project.ImportOptions) (project.ImportReport, error)
	// ExportImages gathers one annotator's labels for export, with the
	// project's class names in display order.
	ExportImages(ctx context.Context, annotatorID int64) ([]string, []formats.ExportImage, error)
}

var _ Project = (*store.Store)(nil)

// Open opens an existing project and brings its schema up to date.
func Open(path string) (Project, error) {
	s, err := store.Open(path)
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Create makes a new, empty project; it never overwrites anything.
func Create(path string) (Project, error) {
	s, err := store.Create(path)
	if err != nil {
		return nil, err
	}
	return s, nil
}
