package project

// Records that storage takes and returns beyond the domain types: options
// and reports of intake and imports, review queries and decisions, and the
// lean rows that agreement, evaluation and review statistics read.

// IntakeOptions tunes AddImages.
type IntakeOptions struct {
	// MaxPixels refuses larger images; 0 means the default limit (100 megapixels).
	MaxPixels int64
	// RelinkOnly looks for the files of known images and adds nothing new.
	RelinkOnly bool
	// Progress, when set, is called after each file with the counts so far.
	Progress func(done, total int)
}

// IntakeFailure is one file that was skipped, with the reason.
type IntakeFailure struct {
	Path  string `json:"path"`
	Error string `json:"error"`
}

// IntakeReport says what an intake did.
type IntakeReport struct {
	Added      int             `json:"added"`
	Duplicates int             `json:"duplicates"`
	Relinked   int             `json:"relinked"`
	Failed     []IntakeFailure `json:"failed"`
	// AddedIDs and Relinks let a caller undo the intake when the command
	// it belongs to fails.
	AddedIDs []int64  `json:"-"`
	Relinks  []Relink `json:"-"`
}

// Relink is one image whose file was found at a new path.
type Relink struct {
	ImageID int64
	OldPath string
}

// ImportOptions tunes ImportDataset.
type ImportOptions struct {
	// Annotator owns the imported labels; added if new. Required.
	Annotator string
	// CreateClasses adds classes the project lacks; without it an unknown
	// class name fails the import.
	CreateClasses bool
	// Strict refuses boxes that reach outside their image instead of
	// clipping them.
	Strict bool
	// Source is recorded on every label (usually the imported file's name).
	Source string
	// ClassMap renames the file's class names to project class names
	// before they are looked up ("boat" → "motorboat").
	ClassMap map[string]string
	// SkipUnmatched imports the records whose image is in the project
	// and reports the others; without it a record whose image is not in
	// the project fails the whole import.
	SkipUnmatched bool
	// Again says what to do when boxes of the file are stored already for
	// the annotator (same image, class and corners): refuse (the default,
	// since importing a file twice doubles every box), "replace" the
	// annotator's imported labels on the file's images, or "append".
	Again string
}

// What ImportOptions.Again may say.
const (
	ImportAgainRefuse  = ""
	ImportAgainReplace = "replace"
	ImportAgainAppend  = "append"
)

// ImportReport says what an import did.
type ImportReport struct {
	Annotator      string   `json:"annotator"`
	Images         int      `json:"images"` // records matched to project images
	Labels         int      `json:"labels"`
	Clipped        int      `json:"clipped"` // boxes cut back to their image
	ClassesCreated []string `json:"classes_created"`
	// Unmatched are the image records that match no project image.
	Unmatched []string `json:"unmatched"`
	// Replaced counts the annotator's imported labels on the file's
	// images that this import replaced (Again "replace").
	Replaced int `json:"replaced"`
}

// SuggestionImportReport says what an import of suggestions did.
type SuggestionImportReport struct {
	Source          string `json:"source"`
	Added           int    `json:"added"`
	ReplacedPending int    `json:"replaced_pending"` // pending suggestions of the source deleted first
	KeptReviewed    int    `json:"kept_reviewed"`    // decided suggestions of the source left as they were
}

// SuggestionQuery selects suggestions for bulk actions and review queues.
// Zero fields select everything, except State, which defaults to pending.
type SuggestionQuery struct {
	Source  string
	ImageID int64
	ClassID int64
	// MinScore is inclusive and MaxScore exclusive; a zero bound is no
	// bound, so that suggestions with negative scores are not lost to it.
	MinScore, MaxScore float64
	State              SuggestionState
	// Limit caps what QuerySuggestions returns (a queue needs only its
	// head); 0 is no limit. CountSuggestions ignores it.
	Limit int
}

// Decision is one person's verdict on a pending suggestion.
type Decision struct {
	SuggestionID int64
	Accept       bool
	// Box and ClassID are the final box and class of an accepted
	// suggestion; a zero Box or ClassID keeps the suggestion's own.
	Box     Box
	ClassID int64
}

// Final is what accepting g with this decision makes: the final box and
// class (a zero Box or ClassID keeps the suggestion's own), the state the
// suggestion takes and the origin of the new label. It is accepted when box
// and class are the suggestion's, corrected otherwise. Every backend uses
// this one rule.
func (d Decision) Final(g Suggestion) (box Box, classID int64, state SuggestionState, origin Origin) {
	box, classID = d.Box, d.ClassID
	if box == (Box{}) {
		box = g.Box
	}
	if classID == 0 {
		classID = g.ClassID
	}
	state, origin = SuggestionAccepted, OriginAccepted
	if box != g.Box || classID != g.ClassID {
		state, origin = SuggestionCorrected, OriginCorrected
	}
	return box, classID, state, origin
}

// ReviewRow is one suggestion as the review statistics read it.
type ReviewRow struct {
	Source   string
	ClassID  int64
	Score    float64
	State    SuggestionState
	FinalIoU float64
}

// BoxRow is one box as agreement and evaluation read it.
type BoxRow struct {
	AnnotatorID, ClassID int64
	Box                  Box
}

// ImageBoxes are the boxes on one image.
type ImageBoxes struct {
	ImageID int64
	Boxes   []BoxRow
}
