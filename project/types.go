package project

import (
	"fmt"
	"image/color"
	"slices"
	"strings"
	"time"
)

// Class is an object category that boxes are labelled with.
type Class struct {
	ID    int64
	Name  string
	Color color.NRGBA
	// HotKey is the key that picks this class on the labelling screen
	// ("1".."9", "0" or a letter); empty means none.
	HotKey string
}

// Annotator is a person (or a named import) whose labels are kept apart from
// everyone else's so that they can be compared.
type Annotator struct {
	ID      int64
	Name    string
	Created time.Time
}

// ImageStatus tells how far the labelling of an image has come.
type ImageStatus string

// The statuses an image moves through.
const (
	StatusNew      ImageStatus = "new"      // no work done yet
	StatusStarted  ImageStatus = "started"  // someone has begun labelling
	StatusDone     ImageStatus = "done"     // labelling finished
	StatusReviewed ImageStatus = "reviewed" // checked by a second person
	StatusSkipped  ImageStatus = "skipped"  // left out of the dataset
)

// ImageStatuses lists every status in workflow order.
var ImageStatuses = []ImageStatus{StatusNew, StatusStarted, StatusDone, StatusReviewed, StatusSkipped}

// Valid reports whether s is one of the known statuses.
func (s ImageStatus) Valid() bool { return slices.Contains(ImageStatuses, s) }

// Image is one picture of the project. Width and Height are those of the
// image as displayed, after its EXIF orientation is applied.
type Image struct {
	ID int64
	// Path is relative to the project file's folder when the image lies
	// under it, absolute otherwise, always with forward slashes.
	Path   string
	SHA256 string // hex digest of the file bytes; identifies the image
	Width  int
	Height int
	// Orientation is the EXIF orientation tag, 1 (as stored) to 8.
	Orientation int
	Status      ImageStatus
	Added       time.Time
}

// Origin records how a label came to be.
type Origin string

// The ways a label can be made.
const (
	OriginDrawn     Origin = "drawn"     // drawn by hand
	OriginImported  Origin = "imported"  // read from a dataset file
	OriginAccepted  Origin = "accepted"  // a suggestion accepted as it was
	OriginCorrected Origin = "corrected" // a suggestion edited, then accepted
)

// Valid reports whether o is one of the known origins.
func (o Origin) Valid() bool {
	switch o {
	case OriginDrawn, OriginImported, OriginAccepted, OriginCorrected:
		return true
	}
	return false
}

// Label is one bounding box that an annotator asserts: this class is here.
type Label struct {
	ID          int64
	ImageID     int64
	ClassID     int64
	AnnotatorID int64
	Box         Box
	Origin      Origin
	// Source names where the label came from beyond its origin: the
	// imported file, or the suggestion source ("detector-v7").
	Source string
	// Score is the suggestion's score for accepted or corrected labels.
	Score float64
	// SuggestionID links an accepted or corrected label to its suggestion;
	// 0 when there is none.
	SuggestionID int64
	Created      time.Time
	Updated      time.Time
}

// SuggestionState is where a suggestion stands in review.
type SuggestionState string

// The states of a suggestion.
const (
	SuggestionPending   SuggestionState = "pending"
	SuggestionAccepted  SuggestionState = "accepted"
	SuggestionRejected  SuggestionState = "rejected"
	SuggestionCorrected SuggestionState = "corrected"
)

// SuggestionStates lists every state.
var SuggestionStates = []SuggestionState{SuggestionPending, SuggestionAccepted, SuggestionRejected, SuggestionCorrected}

// Valid reports whether s is one of the known states.
func (s SuggestionState) Valid() bool { return slices.Contains(SuggestionStates, s) }

// Suggestion is a box proposed by a model or matcher, waiting for, or
// having had, a person's decision.
type Suggestion struct {
	ID      int64
	ImageID int64
	ClassID int64
	Box     Box
	Score   float64
	Source  string // for example "detector-v7" or "exemplar"
	State   SuggestionState
	// ReviewerID, Reviewed and LabelID are set once a person decided;
	// LabelID only when the suggestion became a label.
	ReviewerID int64
	Reviewed   time.Time
	LabelID    int64
	Created    time.Time
	FinalIoU   float64 // IoU of the suggestion with the label it became; 0 until accepted or corrected
}

// ValidateName checks a class or annotator name: not blank, at most 100
// characters, no control characters.
func ValidateName(kind, name string) error {
	if strings.TrimSpace(name) == "" {
		return fmt.Errorf("%s name is empty", kind)
	}
	if len([]rune(name)) > 100 {
		return fmt.Errorf("%s name %.20q... is longer than 100 characters", kind, name)
	}
	for _, r := range name {
		if r < 0x20 || r == 0x7f {
			return fmt.Errorf("%s name %q holds a control character", kind, name)
		}
	}
	if name != strings.TrimSpace(name) {
		return fmt.Errorf("%s name %q starts or ends with a space", kind, name)
	}
	return nil
}
