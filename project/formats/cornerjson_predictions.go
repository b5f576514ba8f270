package formats

import (
	"fmt"
	"io"
	"strconv"

	"boxwright/project"
)

// Prediction is one record of a corner/size JSON prediction list: a box a
// model proposed for an image, with its class and score. The image is named
// by ImageID or by FileName, the class by CategoryID or by Category; the
// importer resolves them against the project.
type Prediction struct {
	ImageID    int64  // 0 when FileName is used; never both
	FileName   string // "" when ImageID is used
	CategoryID int64  // 0 when Category (a name) is used; never both
	Category   string // "" when CategoryID is used
	Box        project.Box
	Score      float64 // in [0,1]
	Where      string  // position for messages, e.g. "preds.json: [17]"
}

type cjPredictionIn struct {
	ImageID    jsonInt   `json:"image_id"`
	FileName   string    `json:"file_name"`
	CategoryID jsonInt   `json:"category_id"`
	Category   string    `json:"category"`
	BBox       jsonBBox  `json:"bbox"`
	Score      jsonFloat `json:"score"`
}

// ReadPredictionList reads a corner/size JSON prediction list: a JSON array
// of objects {image_id | file_name, category_id | category,
// bbox: [x, y, width, height], score}. A record names its image by
// image_id or by file_name and its class by category_id or by category,
// never both ways: the reader cannot tell which of two that disagree is
// right, so such a record is refused with both values. Ids, when given,
// must be positive (0 means "not given" in Prediction). Scores must be
// finite and within [0,1]. Boxes are not clipped. The file is read as a
// stream: it must start (after a byte-order mark and white space) with
// '[', one record may hold MaxRecordBytes and a name MaxNameBytes. Every
// error is a *PositionError whose Path is the record's index, such as
// "[17]".
func ReadPredictionList(r io.Reader, file string) ([]Prediction, error) {
	p := newCJReader(r, file)
	if err := p.begin('[', "a JSON array of predictions", "one JSON array of predictions"); err != nil {
		return nil, err
	}
	var (
		preds []Prediction
		wl    whereList
		in    cjPredictionIn
	)
	fields := in.fastFields()
	err := p.array("", func(k int) error {
		path := func() string { return "[" + strconv.Itoa(k) + "]" }
		start, err := readElem(p, path, &in, fields)
		if err != nil {
			return err
		}
		if in.ImageID.bad || (in.ImageID.set && in.ImageID.v <= 0) {
			return p.errAt(start, path(), "image_id", "must be a positive integer")
		}
		if !in.ImageID.set && in.FileName == "" {
			return p.errAt(start, path(), "", "names no image: want image_id or file_name")
		}
		if in.ImageID.set && in.FileName != "" {
			return p.errAt(start, path(), "", fmt.Sprintf("names its image twice, as image_id %d and as file_name %s; a reader cannot tell whether they agree, so give only one of them", in.ImageID.v, quote(in.FileName)))
		}
		if m := nameField(in.FileName, "file name"); m != "" {
			return p.errAt(start, path(), "file_name", m)
		}
		if in.CategoryID.bad || (in.CategoryID.set && in.CategoryID.v <= 0) {
			return p.errAt(start, path(), "category_id", "must be a positive integer")
		}
		if !in.CategoryID.set && in.Category == "" {
			return p.errAt(start, path(), "", "names no class: want category_id or category")
		}
		if in.CategoryID.set && in.Category != "" {
			return p.errAt(start, path(), "", fmt.Sprintf("names its class twice, as category_id %d and as category %s; a reader cannot tell whether they agree, so give only one of them", in.CategoryID.v, quote(in.Category)))
		}
		if m := nameField(in.Category, "class name"); m != "" {
			return p.errAt(start, path(), "category", m)
		}
		b, m := in.BBox.box()
		if m != "" {
			return p.errAt(start, path(), "bbox", m)
		}
		switch {
		case in.Score.bad:
			return p.errAt(start, path(), "score", "must be a finite number")
		case !in.Score.set:
			return p.errAt(start, path(), "score", "is missing")
		case in.Score.v < 0 || in.Score.v > 1:
			return p.errAt(start, path(), "score", "must be between 0 and 1, not "+fmtNum(in.Score.v))
		}
		preds = append(preds, Prediction{
			ImageID: in.ImageID.v, FileName: in.FileName,
			CategoryID: in.CategoryID.v, Category: in.Category,
			Box: b, Score: in.Score.v,
		})
		wl.add(p.file+": [", k)
		return nil
	})
	if err != nil {
		return nil, err
	}
	if err := p.end(); err != nil {
		return nil, err
	}
	for i, w := range wl.strings() {
		preds[i].Where = w
	}
	return preds, nil
}
