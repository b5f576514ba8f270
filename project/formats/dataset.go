// Package formats reads and writes the field's common dataset interchange
// layouts, converting their box conventions to and from project.Box in
// exactly one place per layout:
//
//   - corner/size JSON (one file; bbox = [x, y, width, height] in pixels,
//     x,y the top-left corner) and its prediction-list variant;
//   - per-image XML (xmin, ymin, xmax, ymax as 1-based inclusive pixel
//     indices);
//   - centre-normalised text (one .txt per image: class cx cy w h in 0..1,
//     an optional score, and a class-names file).
//
// It is pure Go: no SQL, no GUI.
package formats

import (
	"fmt"

	"boxwright/project"
)

// Layout names an interchange layout.
type Layout string

// The layouts, by the names the command line uses.
const (
	LayoutJSON Layout = "json" // corner/size JSON
	LayoutXML  Layout = "xml"  // per-image XML
	LayoutText Layout = "txt"  // centre-normalised text
)

// Dataset is a layout-neutral set of labelled images, as read from or
// written to an interchange layout.
type Dataset struct {
	// Classes are the class names; their order is the class index of the
	// centre-normalised text layout and the category order of JSON.
	Classes []string
	Images  []ImageRecord
}

// ImageRecord is one image and its boxes.
type ImageRecord struct {
	// Name is the file name or relative path (forward slashes) as the
	// layout records it.
	Name          string
	Width, Height int // pixels, as displayed
	Depth         int // colour channels, when the layout records them (XML)
	Boxes         []BoxRecord
	// Where is the file (and JSON path) the record came from, for messages.
	Where string
}

// BoxRecord is one box of an image.
type BoxRecord struct {
	Class string
	Box   project.Box // continuous pixel coordinates, see project.Box
	// Score is set for predictions (HasScore true).
	Score    float64
	HasScore bool
	// Per-image XML flags; Crowd is corner/size JSON's iscrowd.
	Difficult, Truncated, Crowd bool
	Pose                        string
	// Where is the record's position for messages: "file.json:
	// annotations[41]", "a.xml: object[2]", "a.txt:3".
	Where string
}

// PositionError is a parse error that says where: file, line (text
// layouts) or JSON/XML path, and field.
type PositionError struct {
	File  string // file name as given to the parser
	Line  int    // 1-based; 0 when the layout has no lines that matter
	Path  string // JSON path such as "annotations[41]", or XML element path
	Field string // such as "bbox" or "xmin"; may be empty
	Msg   string // what is wrong, in words a person can act on
}

func (e *PositionError) Error() string {
	s := e.File
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	loc := e.Path
	if e.Field != "" {
		if loc != "" {
			loc += "."
		}
		loc += e.Field
	}
	if loc != "" {
		s += ": " + loc
	}
	return s + ": " + e.Msg
}
