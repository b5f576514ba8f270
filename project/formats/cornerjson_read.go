package formats

import (
	"fmt"
	"io"
	"math"
	"strconv"

	"boxwright/project"
)

type cjImageIn struct {
	ID       jsonInt `json:"id"`
	FileName string  `json:"file_name"`
	Width    jsonInt `json:"width"`
	Height   jsonInt `json:"height"`
}

type cjCategoryIn struct {
	ID   jsonInt `json:"id"`
	Name string  `json:"name"`
}

type cjAnnotationIn struct {
	ID         jsonInt   `json:"id"`
	ImageID    jsonInt   `json:"image_id"`
	CategoryID jsonInt   `json:"category_id"`
	BBox       jsonBBox  `json:"bbox"`
	IsCrowd    jsonInt   `json:"iscrowd"`
	Score      jsonFloat `json:"score"`
}

// cjAnn is a checked annotation waiting for its references to be resolved.
type cjAnn struct {
	id, imageID, catID int64
	box                project.Box
	score              float64
	hasScore, crowd    bool
	start              int // line
}

type cjImg struct {
	id            int64
	name          string
	width, height int
	start         int // line
}

type cjCat struct {
	id    int64
	name  string
	start int // line
}

// intField checks a required integer field and returns a message on failure.
func intField(n jsonInt) string {
	switch {
	case n.bad:
		return "must be an integer"
	case !n.set:
		return "is missing"
	}
	return ""
}

// ReadCornerJSON reads a corner/size JSON dataset: one object with the
// arrays images, categories and annotations. Boxes go to their image's
// record in file order, and Dataset.Classes lists the categories in file
// order. Boxes are not clipped to their image. The file is read as a
// stream: it must start (after a byte-order mark and white space) with
// '{', one array element may hold MaxRecordBytes and a name MaxNameBytes.
// Every error is a *PositionError naming the file, the line, the JSON
// path and the field.
func ReadCornerJSON(r io.Reader, file string) (*Dataset, error) {
	p := newCJReader(r, file)
	var (
		imgs []cjImg
		cats []cjCat
		anns []cjAnn
		seen = map[string]bool{}
	)
	if err := p.begin('{', "one JSON object with images, categories and annotations", "one JSON object"); err != nil {
		return nil, err
	}
	err := p.object("", func(key string, kline int) error {
		switch key {
		case "images", "categories", "annotations":
			if seen[key] {
				return p.errAt(kline, key, "", "appears twice in the top-level object")
			}
			seen[key] = true
		}
		switch key {
		case "images":
			var in cjImageIn
			fields := in.fastFields()
			return p.array(key, func(k int) error {
				path := func() string { return "images[" + strconv.Itoa(k) + "]" }
				start, err := readElem(p, path, &in, fields)
				if err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if in.FileName == "" {
					return p.errAt(start, path(), "file_name", "is missing or empty")
				}
				if m := nameField(in.FileName, "file name"); m != "" {
					return p.errAt(start, path(), "file_name", m)
				}
				if m := intField(in.Width); m != "" {
					return p.errAt(start, path(), "width", m)
				}
				if m := intField(in.Height); m != "" {
					return p.errAt(start, path(), "height", m)
				}
				if in.Width.v <= 0 || in.Width.v > math.MaxInt32 {
					return p.errAt(start, path(), "width", "must be a positive number of pixels, not "+strconv.FormatInt(in.Width.v, 10))
				}
				if in.Height.v <= 0 || in.Height.v > math.MaxInt32 {
					return p.errAt(start, path(), "height", "must be a positive number of pixels, not "+strconv.FormatInt(in.Height.v, 10))
				}
				imgs = append(imgs, cjImg{in.ID.v, in.FileName, int(in.Width.v), int(in.Height.v), start})
				return nil
			})
		case "categories":
			var in cjCategoryIn
			fields := in.fastFields()
			return p.array(key, func(k int) error {
				path := func() string { return "categories[" + strconv.Itoa(k) + "]" }
				start, err := readElem(p, path, &in, fields)
				if err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if in.Name == "" {
					return p.errAt(start, path(), "name", "is missing or empty")
				}
				if m := nameField(in.Name, "class name"); m != "" {
					return p.errAt(start, path(), "name", m)
				}
				cats = append(cats, cjCat{in.ID.v, in.Name, start})
				return nil
			})
		case "annotations":
			var in cjAnnotationIn
			fields := in.fastFields()
			return p.array(key, func(k int) error {
				path := func() string { return "annotations[" + strconv.Itoa(k) + "]" }
				start, err := readElem(p, path, &in, fields)
				if err != nil {
					return err
				}
				if m := intField(in.ID); m != "" {
					return p.errAt(start, path(), "id", m)
				}
				if m := intField(in.ImageID); m != "" {
					return p.errAt(start, path(), "image_id", m)
				}
				if m := intField(in.CategoryID); m != "" {
					return p.errAt(start, path(), "category_id", m)
				}
				b, m := in.BBox.box()
				if m != "" {
					return p.errAt(start, path(), "bbox", m)
				}
				if in.IsCrowd.bad || (in.IsCrowd.set && in.IsCrowd.v != 0 && in.IsCrowd.v != 1) {
					return p.errAt(start, path(), "iscrowd", "must be 0 or 1")
				}
				if in.Score.bad {
					return p.errAt(start, path(), "score", "must be a finite number")
				}
				if in.Score.set && (in.Score.v < 0 || in.Score.v > 1) {
					return p.errAt(start, path(), "score", "must be between 0 and 1, not "+fmtNum(in.Score.v))
				}
				if len(anns) == cap(anns) {
					// Doubling copies each annotation about once; append's
					// slower growth for big slices copied them several
					// times, a fifth of reading a big file.
					anns = append(make([]cjAnn, 0, 2*cap(anns)+1024), anns...)
				}
				anns = append(anns, cjAnn{
					id: in.ID.v, imageID: in.ImageID.v, catID: in.CategoryID.v,
					box: b, score: in.Score.v, hasScore: in.Score.set,
					crowd: in.IsCrowd.v == 1, start: start,
				})
				return nil
			})
		}
		return p.skip(clip(key), 1)
	})
	if err != nil {
		return nil, err
	}
	if err := p.end(); err != nil {
		return nil, err
	}
	for _, key := range []string{"images", "categories", "annotations"} {
		if !seen[key] {
			return nil, p.errAt(1, key, "", "is missing; the top-level object needs the arrays images, categories and annotations")
		}
	}
	return p.resolve(imgs, cats, anns)
}

// nameField checks the length of a name field and returns a message on
// failure; what is "file name" or "class name".
func nameField(s, what string) string {
	if len(s) > MaxNameBytes {
		return fmt.Sprintf("is %d bytes long, more than the %d a %s may hold", len(s), MaxNameBytes, what)
	}
	return ""
}

// resolve checks uniqueness and references and builds the Dataset.
func (p *cjReader) resolve(imgs []cjImg, cats []cjCat, anns []cjAnn) (*Dataset, error) {
	ds := &Dataset{Classes: make([]string, len(cats)), Images: make([]ImageRecord, len(imgs))}

	catIndex := make(map[int64]int, len(cats))
	catName := make(map[string]int, len(cats))
	for i, c := range cats {
		path := "categories[" + strconv.Itoa(i) + "]"
		if j, dup := catIndex[c.id]; dup {
			return nil, p.errAt(c.start, path, "id", fmt.Sprintf("duplicate category id %d (also categories[%d])", c.id, j))
		}
		if j, dup := catName[c.name]; dup {
			return nil, p.errAt(c.start, path, "name", fmt.Sprintf("duplicate category name %s (also categories[%d])", quote(c.name), j))
		}
		catIndex[c.id], catName[c.name] = i, i
		ds.Classes[i] = c.name
	}

	imgIndex := make(map[int64]int, len(imgs))
	imgName := make(map[string]int, len(imgs))
	var iw whereList
	for i, im := range imgs {
		path := "images[" + strconv.Itoa(i) + "]"
		if j, dup := imgIndex[im.id]; dup {
			return nil, p.errAt(im.start, path, "id", fmt.Sprintf("duplicate image id %d (also images[%d])", im.id, j))
		}
		if j, dup := imgName[im.name]; dup {
			return nil, p.errAt(im.start, path, "file_name", fmt.Sprintf("duplicate file name %s (also images[%d])", quote(im.name), j))
		}
		imgIndex[im.id], imgName[im.name] = i, i
		iw.add(p.file+": images[", i)
	}
	for i, w := range iw.strings() {
		im := imgs[i]
		ds.Images[i] = ImageRecord{Name: im.name, Width: im.width, Height: im.height, Where: w}
	}

	// Check the annotations, replace their ids by indexes and count boxes
	// per image.
	if k, j, dup := duplicateID(anns); dup {
		a := anns[k]
		return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "id", fmt.Sprintf("duplicate annotation id %d (also annotations[%d])", a.id, j))
	}
	counts := make([]int, len(imgs))
	for k := range anns {
		a := &anns[k]
		ii, ok := imgIndex[a.imageID]
		if !ok {
			return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "image_id", fmt.Sprintf("unknown image %d (annotation id %d)", a.imageID, a.id))
		}
		ci, ok := catIndex[a.catID]
		if !ok {
			return nil, p.errAt(a.start, "annotations["+strconv.Itoa(k)+"]", "category_id", fmt.Sprintf("unknown category %d (annotation id %d)", a.catID, a.id))
		}
		a.imageID, a.catID = int64(ii), int64(ci)
		counts[ii]++
	}

	// One backing array for all boxes, cut per image.
	all := make([]BoxRecord, len(anns))
	off := 0
	for i, n := range counts {
		if n > 0 {
			ds.Images[i].Boxes = all[off : off : off+n]
		}
		off += n
	}
	var aw whereList
	aw.buf = make([]byte, 0, len(anns)*(len(p.file)+24))
	aw.ends = make([]int, 0, len(anns))
	for k := range anns {
		aw.add(p.file+": annotations[", k)
	}
	wheres := aw.strings()
	for k, a := range anns {
		im := &ds.Images[a.imageID]
		im.Boxes = append(im.Boxes, BoxRecord{
			Class: ds.Classes[a.catID], Box: a.box,
			Score: a.score, HasScore: a.hasScore, Crowd: a.crowd,
			Where: wheres[k],
		})
	}
	return ds, nil
}

// duplicateID reports the first annotation k whose id repeats that of an
// earlier annotation j. Dense id ranges, the usual case, use a bit set.
func duplicateID(anns []cjAnn) (k, j int, dup bool) {
	if len(anns) == 0 {
		return 0, 0, false
	}
	lo, hi := anns[0].id, anns[0].id
	for _, a := range anns {
		lo, hi = min(lo, a.id), max(hi, a.id)
	}
	if span := uint64(hi - lo); span < uint64(8*len(anns)) {
		bits := make([]uint64, span/64+1)
		for k, a := range anns {
			d := uint64(a.id - lo)
			if bits[d/64]&(1<<(d%64)) != 0 {
				for j := range k {
					if anns[j].id == a.id {
						return k, j, true
					}
				}
			}
			bits[d/64] |= 1 << (d % 64)
		}
		return 0, 0, false
	}
	seen := make(map[int64]int, len(anns))
	for k, a := range anns {
		if j, ok := seen[a.id]; ok {
			return k, j, true
		}
		seen[a.id] = k
	}
	return 0, 0, false
}
