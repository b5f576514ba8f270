package project

import "context"

// DeleteClassOptions says what happens to the labels and suggestions of a
// class being deleted. With neither field set, deleting a class that is in
// use fails with ErrInUse.
type DeleteClassOptions struct {
	// MoveTo, when non-zero, is the class that takes over the labels and
	// suggestions (a merge).
	MoveTo int64
	// DeleteLabels deletes the labels and suggestions with the class.
	DeleteLabels bool
}

// The storage interfaces below are what the program above the storage
// backend uses, split by role so that a screen or command can say which part
// it needs; Store is all of them. Each backend (the SQLite file; later a
// database server) implements Store, and nothing above the backends knows
// which one it has. Methods list only what a caller above the backend needs.

// ClassStore keeps the project's classes.
type ClassStore interface {
	Classes(ctx context.Context) ([]Class, error)
	Class(ctx context.Context, id int64) (Class, error)
	ClassByName(ctx context.Context, name string) (Class, error)
	// AddClass stores a new class; a zero Color takes the next palette
	// colour. It returns the class as stored.
	AddClass(ctx context.Context, c Class) (Class, error)
	// UpdateClass renames, recolours or re-keys a class; labels keep it.
	UpdateClass(ctx context.Context, c Class) error
	// RenameClass gives the class named oldName a new name.
	RenameClass(ctx context.Context, oldName, newName string) error
	// MergeClass moves every label and suggestion of class from into class
	// into, then deletes from.
	MergeClass(ctx context.Context, from, into string) error
	// DeleteClass removes a class as opts say.
	DeleteClass(ctx context.Context, id int64, opts DeleteClassOptions) error
}

// AnnotatorStore keeps the people whose labels are compared.
type AnnotatorStore interface {
	Annotators(ctx context.Context) ([]Annotator, error)
	AnnotatorByName(ctx context.Context, name string) (Annotator, error)
	AddAnnotator(ctx context.Context, name string) (Annotator, error)
	// EnsureAnnotator returns the annotator of that name, adding it if new.
	EnsureAnnotator(ctx context.Context, name string) (Annotator, error)
}

// ImageStore keeps the project's images and finds their files.
type ImageStore interface {
	// Images lists the images with Status the furthest any annotator has
	// come; ImagesFor with one annotator's status.
	Images(ctx context.Context) ([]Image, error)
	ImagesFor(ctx context.Context, annotatorID int64) ([]Image, error)
	Image(ctx context.Context, id int64) (Image, error)
	// SetImageStatus records an annotator's status on an image; by is who
	// says so (the reviewer, for "reviewed").
	SetImageStatus(ctx context.Context, imageID, annotatorID int64, s ImageStatus, by int64) error
	// AddImages adds files and the image files in folders (recursively);
	// unreadable files are skipped with their reason in the report.
	AddImages(ctx context.Context, paths []string, opts IntakeOptions) (IntakeReport, error)
	// Relink finds the files of missing images under dir by content.
	Relink(ctx context.Context, dir string, opts IntakeOptions) (IntakeReport, error)
	// MissingImages lists the images whose files are not where the
	// project says.
	MissingImages(ctx context.Context) ([]Image, error)
	// ImagePath is the image's file on this machine.
	ImagePath(im Image) string
	// FetchImage makes sure the image's file is on this machine and
	// returns its path: a server project fetches the bytes first (call it
	// off the window's event thread); a file project only says where.
	FetchImage(ctx context.Context, im Image) (string, error)
}

// LabelFilter selects labels; zero fields select everything.
type LabelFilter struct {
	ImageID     int64
	AnnotatorID int64
	ClassID     int64
}

// LabelStore keeps the labels.
type LabelStore interface {
	Labels(ctx context.Context, f LabelFilter) ([]Label, error)
	Label(ctx context.Context, id int64) (Label, error)
	// ApplyLabelChange makes one edit all or nothing and returns the IDs
	// of the inserted labels in order.
	ApplyLabelChange(ctx context.Context, c LabelChange) ([]int64, error)
	// AddLabels stores a batch of labels all or nothing.
	AddLabels(ctx context.Context, ls []Label) error
	// ReplaceAnnotatorLabels swaps all labels of an annotator for new
	// ones all or nothing (derived annotators such as the consensus).
	ReplaceAnnotatorLabels(ctx context.Context, annotatorID int64, labels []Label) error
	// LabelTallies counts labels by image, class and annotator.
	LabelTallies(ctx context.Context) ([]LabelTally, error)
	// BoxesByImage reads the boxes of the given annotators (all when none
	// are given), grouped by image in image order.
	BoxesByImage(ctx context.Context, annotatorIDs []int64) ([]ImageBoxes, error)
}

// SuggestionFilter selects suggestions; zero fields select everything.
type SuggestionFilter struct {
	ImageID int64
	Source  string
	State   SuggestionState
}

// SuggestionStore keeps model suggestions and their review.
type SuggestionStore interface {
	Suggestions(ctx context.Context, f SuggestionFilter) ([]Suggestion, error)
	Suggestion(ctx context.Context, id int64) (Suggestion, error)
	// AddSuggestions stores a batch all-or-nothing, returning their IDs.
	AddSuggestions(ctx context.Context, s []Suggestion) ([]int64, error)
	// ImportSuggestions replaces a source's pending suggestions with gs,
	// leaving decided ones alone, all or nothing.
	ImportSuggestions(ctx context.Context, source string, gs []Suggestion) (SuggestionImportReport, error)
	// ReplaceSuggestionsOn is ImportSuggestions limited to some images.
	ReplaceSuggestionsOn(ctx context.Context, source string, imageIDs []int64, gs []Suggestion) (SuggestionImportReport, error)
	CountSuggestions(ctx context.Context, q SuggestionQuery) (int, error)
	// QuerySuggestions lists what q selects, best score first.
	QuerySuggestions(ctx context.Context, q SuggestionQuery) ([]Suggestion, error)
	// Decide applies one reviewer's decisions all or nothing (the rule is
	// Decision.Final) and returns the new label IDs by suggestion ID.
	Decide(ctx context.Context, reviewerID int64, ds []Decision) (map[int64]int64, error)
	// Undecide returns decided suggestions to pending and deletes the
	// labels made from them, all or nothing.
	Undecide(ctx context.Context, suggestionIDs []int64) error
	// ReviewRows lists every suggestion of a source ("" for all) as the
	// review statistics read them.
	ReviewRows(ctx context.Context, source string) ([]ReviewRow, error)
	SuggestionSources(ctx context.Context) ([]string, error)
}

// NamedCount is a count that belongs to a class or an annotator.
type NamedCount struct {
	ID    int64
	Name  string
	Count int
}

// Counts summarises a project.
type Counts struct {
	Images   int
	Labels   int
	ImagesBy map[ImageStatus]int // by the furthest status any annotator has
	// StatusByAnnotator counts each annotator's images by their status
	// (images they never touched count as new).
	StatusByAnnotator map[string]map[ImageStatus]int
	Suggestions       map[SuggestionState]int
	LabelsByClass     []NamedCount // every class, in class order
	LabelsByAnnotator []NamedCount // every annotator, in name order
}

// ImageCounts are the per-image figures shown in image lists.
type ImageCounts struct {
	Labels  int // labels of every annotator
	Pending int // suggestions awaiting review
}

// Store is everything the program needs from a project's storage.
type Store interface {
	ClassStore
	AnnotatorStore
	ImageStore
	LabelStore
	SuggestionStore
	ModelStore
	Counts(ctx context.Context) (Counts, error)
	// CountsByImage has an entry for every image that has labels or
	// pending suggestions.
	CountsByImage(ctx context.Context) (map[int64]ImageCounts, error)
	// SchemaVersion is the schema version of the open project.
	SchemaVersion(ctx context.Context) (int, error)
	// Path names the project (the file of a file-based project).
	Path() string
	// Dir is the folder that relative image paths are relative to.
	Dir() string
	Close() error
}

// LabelChange is one edit of labels that must happen as a whole: a
// person's drag, nudge, deletion or bulk change, or the undoing of one.
type LabelChange struct {
	Delete []int64 // labels to remove
	Update []Label // labels whose box or class change (by ID)
	Insert []Label // new labels (ID ignored)
}

// Empty says whether the change does nothing.
func (c LabelChange) Empty() bool { return len(c.Delete)+len(c.Update)+len(c.Insert) == 0 }

// LabelTally counts the labels of one class by one annotator on one image.
type LabelTally struct {
	ImageID, ClassID, AnnotatorID int64
	N                             int
}
