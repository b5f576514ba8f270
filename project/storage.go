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
	// DeleteClass removes a class as opts say.
	DeleteClass(ctx context.Context, id int64, opts DeleteClassOptions) error
}

// AnnotatorStore keeps the people whose labels are compared.
type AnnotatorStore interface {
	Annotators(ctx context.Context) ([]Annotator, error)
	Annotator(ctx context.Context, id int64) (Annotator, error)
	AnnotatorByName(ctx context.Context, name string) (Annotator, error)
	AddAnnotator(ctx context.Context, name string) (Annotator, error)
	RenameAnnotator(ctx context.Context, id int64, name string) error
	// DeleteAnnotator refuses with ErrInUse while the annotator has labels.
	DeleteAnnotator(ctx context.Context, id int64) error
}

// ImageStore keeps the project's images.
type ImageStore interface {
	Images(ctx context.Context) ([]Image, error)
	Image(ctx context.Context, id int64) (Image, error)
	ImageBySHA256(ctx context.Context, sum string) (Image, error)
	AddImage(ctx context.Context, im Image) (Image, error)
	SetImageStatus(ctx context.Context, id int64, s ImageStatus) error
	// RelinkImage records a new path for an image whose file moved.
	RelinkImage(ctx context.Context, id int64, path string) error
	// DeleteImage removes the image with its labels and suggestions.
	DeleteImage(ctx context.Context, id int64) error
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
	AddLabel(ctx context.Context, l Label) (Label, error)
	// UpdateLabel changes a label's box and class.
	UpdateLabel(ctx context.Context, l Label) error
	DeleteLabel(ctx context.Context, id int64) error
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
	DeleteSuggestion(ctx context.Context, id int64) error
	// AcceptSuggestion turns a pending suggestion into a label of the
	// reviewer, with the given final box and class; the label is
	// "accepted" when they equal the suggestion's and "corrected" otherwise.
	AcceptSuggestion(ctx context.Context, id, reviewerID int64, final Box, classID int64) (Label, error)
	RejectSuggestion(ctx context.Context, id, reviewerID int64) error
}

// NamedCount is a count that belongs to a class or an annotator.
type NamedCount struct {
	ID    int64
	Name  string
	Count int
}

// Counts summarises a project.
type Counts struct {
	Images            int
	Labels            int
	ImagesBy          map[ImageStatus]int
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
	Counts(ctx context.Context) (Counts, error)
	// CountsByImage has an entry for every image that has labels or
	// pending suggestions.
	CountsByImage(ctx context.Context) (map[int64]ImageCounts, error)
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
