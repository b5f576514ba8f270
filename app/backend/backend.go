// Package backend opens projects. It is the one place above storage that
// knows which storage backend holds a project (today the SQLite file of
// package store); everything else works through the Project interface.
package backend

import (
	"context"
	"errors"
	"time"

	"boxwright/project"
	"boxwright/project/formats"
	"boxwright/store"
	"boxwright/store/postgres"
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
	// ReadOnly says whether the project was opened for reading only.
	ReadOnly() bool
	// Damage says what the check on open found wrong ("" if nothing).
	Damage() string
	// Check runs the storage's full consistency check and returns what
	// it found (nothing when sound).
	Check(ctx context.Context) ([]string, error)
	// UndoIntake takes back an intake of a command that then failed.
	UndoIntake(ctx context.Context, rep project.IntakeReport) error
	// SetWaitNotice routes "waiting for another writer" messages.
	SetWaitNotice(func(string))
}

var _ Project = (*store.Store)(nil)

// connectWithin bounds how long opening a server project may take before
// it is given up with "cannot be reached".
const connectWithin = 30 * time.Second

// server opens (or, with create, makes) a server project.
func server(w Where, create bool) (Project, error) {
	ctx, cancel := context.WithTimeout(context.Background(), connectWithin)
	defer cancel()
	var s *postgres.Store
	var err error
	if create {
		s, err = postgres.Create(ctx, w.Server)
	} else {
		s, err = postgres.Open(ctx, w.Server)
	}
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Open opens an existing project and brings its schema up to date. path
// is a project file, a postgres:// URL or @NAME (see Locate).
func Open(path string) (Project, error) {
	w, err := Locate(path)
	if err != nil {
		return nil, err
	}
	if w.IsServer() {
		return server(w, false)
	}
	s, err := store.Open(path)
	if err != nil {
		return nil, err
	}
	return s, nil
}

// OpenForReading opens an existing project for commands and screens that
// only read: nothing is written, so read-only files and folders work and
// the file is left as it was. A damaged project opens (Damage says what
// is wrong). A project of an older schema is brought up to date first
// when it can be written.
func OpenForReading(path string) (Project, error) {
	w, err := Locate(path)
	if err != nil {
		return nil, err
	}
	if w.IsServer() {
		// A server reads without writing; what a member may not change,
		// its row-level security refuses.
		return server(w, false)
	}
	s, err := store.OpenReadOnly(path)
	if errors.Is(err, store.ErrOlderSchema) {
		if s, err := store.Open(path); err == nil {
			return s, nil
		}
	}
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Create makes a new, empty project; it never overwrites anything. A
// server project is made in an empty database, by a role that may create
// roles (for the project's team role), which becomes its first owner.
func Create(path string) (Project, error) {
	w, err := Locate(path)
	if err != nil {
		return nil, err
	}
	if w.IsServer() {
		return server(w, true)
	}
	s, err := store.Create(path)
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Damaged is the error for a damaged project file: it names the file and
// says how to recover the data.
func Damaged(path, detail string) error { return &store.DamagedError{Path: path, Detail: detail} }

// Recover copies every row still readable from the damaged project at src
// into a new project at dst, and says per table what was lost.
func Recover(ctx context.Context, src, dst string) ([]store.TableRecovery, error) {
	return store.Recover(ctx, src, dst)
}

var _ Project = (*postgres.Store)(nil)
