// Package storetest is the behaviour every storage backend of a project
// promises, written once and run against each backend (the SQLite file of
// package store, the PostgreSQL server of package store/postgres), so that
// a difference between them is a failing test rather than a comment.
//
// It is an ordinary package, not a _test file, so that the tests of each
// backend can import it:
//
//	func TestSuite(t *testing.T) {
//		storetest.Run(t, func(t *testing.T) storetest.Backend { ... a fresh, empty project ... })
//	}
//
// Every check goes through the Backend interface alone. What only one
// backend has (pragmas, file damage, recovery, locks, row-level security)
// stays in that backend's own tests.
//
// A backend that keeps image bytes itself runs RunWith(t, ServerBackend,
// open); open must give each subtest a new, empty project (a new database)
// opened by a role that may do everything (the owner). Images reach it
// only through AddImages of real files under t.TempDir(); their Path must
// end in the file's name (dataset records are matched by it), and lists
// "by name" and "by path" are in code-point order. The suite closes each
// backend when its subtest ends.
package storetest

import (
	"context"
	"errors"
	"fmt"
	"testing"

	"boxwright/project"
	"boxwright/project/formats"
)

// Backend is what the suite needs from a backend: the domain's storage
// interface and the dataset interchange that sits on it (the same methods
// as app/backend.Project has for them).
type Backend interface {
	project.Store
	// ImportDataset stores a parsed dataset as one annotator's labels, all
	// or nothing.
	ImportDataset(ctx context.Context, ds *formats.Dataset, opts project.ImportOptions) (project.ImportReport, error)
	// ExportImages gathers one annotator's labels for export, with the
	// project's class names in display order.
	ExportImages(ctx context.Context, annotatorID int64) ([]string, []formats.ExportImage, error)
}

// Caps are the few points where the domain's promise itself differs
// between backends. Everything else is the same promise and is checked the
// same way on every backend.
type Caps struct {
	// ImagesByReference says the project records where each image's file
	// lies on this machine and reads it from there (the SQLite file): a
	// file removed after intake makes its image missing, Relink finds it
	// again, ImagePath is the file that was added, and an intake of a copy
	// relinks a missing image. A backend that stores the image bytes
	// themselves (a server project) has it false: removing the file given
	// at intake loses nothing, and a copy of it is a duplicate.
	ImagesByReference bool
}

// FileBackend are the capabilities of a file project (package store).
var FileBackend = Caps{ImagesByReference: true}

// ServerBackend are the capabilities of a project whose image bytes live
// in the backend (package store/postgres).
var ServerBackend = Caps{ImagesByReference: false}

// Run runs the suite against a file backend (FileBackend capabilities).
func Run(t *testing.T, open func(t *testing.T) Backend) { RunWith(t, FileBackend, open) }

// RunWith runs every case of the suite as a subtest, each on a fresh,
// empty project from open. open gets the subtest's t (for t.TempDir and
// t.Fatal); the suite closes the backend when the subtest ends.
func RunWith(t *testing.T, caps Caps, open func(t *testing.T) Backend) {
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b := open(t)
			if b == nil {
				t.Fatal("open returned no backend")
			}
			t.Cleanup(func() {
				if err := b.Close(); err != nil {
					t.Errorf("close: %v", err)
				}
			})
			c.run(&env{t: t, b: b, caps: caps, ctx: context.Background()})
		})
	}
}

type testCase struct {
	name string
	run  func(e *env)
}

// cases are all the subtests, by area; each file of the package adds its
// own in an init function.
var cases []testCase

func register(cs ...testCase) { cases = append(cases, cs...) }

// env is one subtest's project with helpers that fail the test on any
// unexpected error.
type env struct {
	t    *testing.T
	b    Backend
	caps Caps
	ctx  context.Context
	seed int // makes every picture of a subtest different
}

func (e *env) fatal(what string, err error) {
	e.t.Helper()
	if err != nil {
		e.t.Fatalf("%s: %v", what, err)
	}
}

func (e *env) class(name string) project.Class {
	e.t.Helper()
	c, err := e.b.AddClass(e.ctx, project.Class{Name: name})
	e.fatal("add class "+name, err)
	return c
}

func (e *env) annotator(name string) project.Annotator {
	e.t.Helper()
	a, err := e.b.AddAnnotator(e.ctx, name)
	e.fatal("add annotator "+name, err)
	return a
}

// insert stores labels through ApplyLabelChange and returns their IDs.
func (e *env) insert(ls ...project.Label) []int64 {
	e.t.Helper()
	ids, err := e.b.ApplyLabelChange(e.ctx, project.LabelChange{Insert: ls})
	e.fatal("insert labels", err)
	if len(ids) != len(ls) {
		e.t.Fatalf("insert of %d labels returned %d IDs", len(ls), len(ids))
	}
	return ids
}

func (e *env) labels(f project.LabelFilter) []project.Label {
	e.t.Helper()
	ls, err := e.b.Labels(e.ctx, f)
	e.fatal("list labels", err)
	return ls
}

func (e *env) suggestions(f project.SuggestionFilter) []project.Suggestion {
	e.t.Helper()
	gs, err := e.b.Suggestions(e.ctx, f)
	e.fatal("list suggestions", err)
	return gs
}

func (e *env) query(q project.SuggestionQuery) []project.Suggestion {
	e.t.Helper()
	gs, err := e.b.QuerySuggestions(e.ctx, q)
	e.fatal("query suggestions", err)
	return gs
}

func (e *env) counts() project.Counts {
	e.t.Helper()
	c, err := e.b.Counts(e.ctx)
	e.fatal("counts", err)
	return c
}

// statusFor is one annotator's status of every image.
func (e *env) statusFor(annotatorID int64) map[int64]project.ImageStatus {
	e.t.Helper()
	ims, err := e.b.ImagesFor(e.ctx, annotatorID)
	e.fatal("images for annotator", err)
	m := map[int64]project.ImageStatus{}
	for _, im := range ims {
		m[im.ID] = im.Status
	}
	return m
}

// snapshot writes down everything a refused call must leave as it was:
// classes, annotators, images with every annotator's status, labels,
// suggestions and models. Times are left out (a backend may round them);
// the rows that carry them are there all the same.
func (e *env) snapshot() string {
	e.t.Helper()
	ctx := e.ctx
	out := ""
	cs, err := e.b.Classes(ctx)
	e.fatal("snapshot classes", err)
	out += fmt.Sprintf("classes %+v\n", cs)
	as, err := e.b.Annotators(ctx)
	e.fatal("snapshot annotators", err)
	for _, a := range as {
		out += fmt.Sprintf("annotator %d %q\n", a.ID, a.Name)
	}
	ims, err := e.b.Images(ctx)
	e.fatal("snapshot images", err)
	for _, im := range ims {
		out += fmt.Sprintf("image %d %s %s %dx%d o%d %s\n", im.ID, im.Path, im.SHA256, im.Width, im.Height, im.Orientation, im.Status)
	}
	for _, a := range as {
		out += fmt.Sprintf("status of %d %v\n", a.ID, e.statusFor(a.ID))
	}
	for _, l := range e.labels(project.LabelFilter{}) {
		out += fmt.Sprintf("label %d im%d c%d a%d %v %s %q %v s%d\n", l.ID, l.ImageID, l.ClassID, l.AnnotatorID, l.Box, l.Origin, l.Source, l.Score, l.SuggestionID)
	}
	for _, g := range e.suggestions(project.SuggestionFilter{}) {
		out += fmt.Sprintf("suggestion %d im%d c%d %v %v %q %s r%d reviewed:%v l%d iou%v\n", g.ID, g.ImageID, g.ClassID, g.Box, g.Score, g.Source, g.State,
			g.ReviewerID, !g.Reviewed.IsZero(), g.LabelID, g.FinalIoU)
	}
	ms, err := e.b.Models(ctx)
	e.fatal("snapshot models", err)
	for _, m := range ms {
		out += fmt.Sprintf("model %d %q current:%v\n", m.ID, m.Name, m.Current)
	}
	return out
}

// unchanged fails the test when the project differs from before.
func (e *env) unchanged(what, before string) {
	e.t.Helper()
	if after := e.snapshot(); after != before {
		e.t.Errorf("%s changed the project:\nbefore:\n%s\nafter:\n%s", what, before, after)
	}
}

// wantErr checks that err is of kind (errors.Is).
func (e *env) wantErr(what string, err, kind error) bool {
	e.t.Helper()
	if err == nil {
		e.t.Errorf("%s: no error, want %v", what, kind)
		return false
	}
	if kind != nil && !errors.Is(err, kind) {
		e.t.Errorf("%s: %v, want an error that is %q", what, err, kind)
		return false
	}
	return true
}

func box(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }
