package suggest

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path"
	"path/filepath"
	"strings"

	"boxwright/project"
	"boxwright/project/formats"
)

// PredictionLayout names the layout of a prediction file.
type PredictionLayout string

// The prediction layouts, by the names the command line uses.
const (
	PredictionJSON PredictionLayout = "json" // corner/size JSON prediction list
	PredictionText PredictionLayout = "txt"  // centre-normalised text folder with a score column and a class-names file
	PredictionCSV  PredictionLayout = "csv"  // prediction CSV: image,class,x0,y0,x1,y1,score
)

// ParsePredictionLayout reads a layout name, ignoring case and surrounding space.
func ParsePredictionLayout(s string) (PredictionLayout, error) {
	switch l := PredictionLayout(strings.ToLower(strings.TrimSpace(s))); l {
	case PredictionJSON, PredictionText, PredictionCSV:
		return l, nil
	}
	return "", fmt.Errorf("unknown prediction layout %q; want json, txt or csv", s)
}

// FileSource reads predictions from a file or folder. Reading is
// all-or-nothing: a record that names an image or class the project does not
// have, or a box entirely outside its image, fails the whole read. A
// FileSource is not safe for concurrent use.
type FileSource struct {
	Source string // the source name; default the file's base name without extension
	Layout PredictionLayout
	Path   string // the file (json, csv) or the folder or single file (txt)
	// ClassesFile is the class-names file of the txt layout; default
	// classes.txt in Path (a folder) or beside it (a file).
	ClassesFile string
	// ImageSize gives an image's size by its project path; when nil or not
	// ok, the Width and Height of the project image are used. The txt layout
	// needs sizes to denormalise; all layouts need them to clip.
	ImageSize func(name string) (w, h int, ok bool)

	clipped int
}

// Name returns the source name stored with every suggestion.
func (f *FileSource) Name() string {
	if f.Source != "" {
		return f.Source
	}
	b := filepath.Base(f.Path)
	return strings.TrimSuffix(b, filepath.Ext(b))
}

// Clipped returns how many boxes of the last Suggest lay partly outside
// their image and were clipped to it.
func (f *FileSource) Clipped() int { return f.clipped }

// record is one prediction in a layout-neutral form.
type record struct {
	image   int // index into images; -1 until matched
	imageID int64
	name    string
	classID int64
	class   string
	box     project.Box
	score   float64
	where   string
}

// Suggest reads the predictions and resolves them against the project's
// images and classes. Records are matched to images by image_id (JSON) or
// by file name: the image whose path equals the name, else the one whose
// path ends with "/"+name, else the one whose base name is the name's base
// name, each only when unique. Progress counts images, estimated from the
// share of records resolved.
func (f *FileSource) Suggest(ctx context.Context, images []project.Image, classes []project.Class, progress func(done, total int)) ([]Proposal, error) {
	f.clipped = 0
	if progress == nil {
		progress = func(int, int) {}
	}
	total := len(images)
	progress(0, total)
	var (
		recs []record
		err  error
	)
	switch f.Layout {
	case PredictionJSON, PredictionCSV:
		recs, err = f.readFile()
	case PredictionText:
		recs, err = f.readText(ctx, images, progress)
	default:
		return nil, fmt.Errorf("reading predictions from %s: unknown layout %q; want json, txt or csv", f.Path, f.Layout)
	}
	if cerr := ctx.Err(); cerr != nil {
		return nil, cerr
	}
	if err != nil {
		return nil, err
	}

	idx := newImageIndex(images, false)
	classByName := make(map[string]int64, len(classes))
	classByID := make(map[int64]string, len(classes))
	for _, c := range classes {
		classByName[c.Name] = c.ID
		classByID[c.ID] = c.Name
	}
	out := make([]Proposal, 0, len(recs))
	for i, r := range recs {
		if i%256 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			if f.Layout != PredictionText && len(recs) > 0 {
				progress(i*total/len(recs), total)
			}
		}
		if r.image < 0 {
			if r.imageID != 0 {
				k, ok := idx.byID[r.imageID]
				if !ok {
					return nil, fmt.Errorf("%s: image_id %d is not in the project", r.where, r.imageID)
				}
				r.image = k
			} else {
				k, err := idx.find(r.name)
				if err != nil {
					return nil, fmt.Errorf("%s: image %q %w", r.where, r.name, err)
				}
				r.image = k
			}
		}
		im := images[r.image]
		p := Proposal{ImageID: im.ID, Box: r.box, Score: r.score, Where: r.where}
		if r.classID != 0 {
			name, ok := classByID[r.classID]
			if !ok {
				return nil, fmt.Errorf("%s: category_id %d is not a class of the project", r.where, r.classID)
			}
			p.ClassID, p.ClassName = r.classID, name
		} else {
			p.ClassID, p.ClassName = classByName[r.class], r.class
		}
		if w, h, ok := f.size(im); ok {
			c := p.Box.Clamp(float64(w), float64(h))
			if c.Empty() {
				return nil, fmt.Errorf("%s: box %v lies entirely outside the %dx%d image %s", r.where, p.Box, w, h, im.Path)
			}
			if c != p.Box {
				f.clipped++
				p.Box = c
			}
		}
		out = append(out, p)
	}
	progress(total, total)
	return out, nil
}

// size returns the displayed size of a project image.
func (f *FileSource) size(im project.Image) (w, h int, ok bool) {
	if f.ImageSize != nil {
		if w, h, ok := f.ImageSize(im.Path); ok && w > 0 && h > 0 {
			return w, h, true
		}
	}
	return im.Width, im.Height, im.Width > 0 && im.Height > 0
}

// readFile reads a JSON prediction list or a prediction CSV.
func (f *FileSource) readFile() ([]record, error) {
	fh, err := formats.OpenFile(f.Path)
	if err != nil {
		return nil, fmt.Errorf("reading predictions: %w", err)
	}
	defer fh.Close()
	if st, err := fh.Stat(); err == nil && st.IsDir() {
		return nil, fmt.Errorf("reading predictions: %s is a folder; the %s layout is one file", f.Path, f.Layout)
	}
	var preds []formats.Prediction
	if f.Layout == PredictionJSON {
		preds, err = formats.ReadPredictionList(fh, filepath.Base(f.Path))
	} else {
		preds, err = formats.ReadPredictionCSV(fh, filepath.Base(f.Path))
	}
	if err != nil {
		return nil, err
	}
	recs := make([]record, len(preds))
	for i, p := range preds {
		recs[i] = record{image: -1, imageID: p.ImageID, name: p.FileName, classID: p.CategoryID, class: p.Category,
			box: p.Box, score: p.Score, where: p.Where}
	}
	return recs, nil
}

// readText reads a centre-normalised text folder, matching each label file
// to its image by path without the extension.
func (f *FileSource) readText(ctx context.Context, images []project.Image, progress func(done, total int)) ([]record, error) {
	classesFile := f.ClassesFile
	if classesFile == "" {
		dir := f.Path
		if st, err := os.Stat(f.Path); err == nil && !st.IsDir() {
			dir = filepath.Dir(f.Path)
		}
		classesFile = filepath.Join(dir, "classes.txt")
	}
	idx := newImageIndex(images, true)
	byPath := make(map[string]int, len(images))
	for i, im := range images {
		byPath[im.Path] = i
	}
	done := 0
	size := func(rel string) (string, int, int, bool, string) {
		if ctx.Err() != nil {
			return "", 0, 0, false, "cancelled"
		}
		k, err := idx.find(rel)
		if err != nil {
			return "", 0, 0, false, err.Error()
		}
		w, h, ok := f.size(images[k])
		if !ok {
			return "", 0, 0, false, "the size of image " + images[k].Path + " is not known"
		}
		done++
		progress(min(done, len(images)), len(images))
		return images[k].Path, w, h, true, ""
	}
	ds, unmatched, err := formats.LoadCentreTextFolder(f.Path, classesFile, size)
	if err != nil {
		return nil, err
	}
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	if len(unmatched) > 0 {
		more := ""
		if len(unmatched) > 1 {
			more = fmt.Sprintf(" (and %d more files)", len(unmatched)-1)
		}
		return nil, fmt.Errorf("reading predictions from %s: %s%s", f.Path, unmatched[0], more)
	}
	var recs []record
	for _, im := range ds.Images {
		k := byPath[im.Name]
		for _, b := range im.Boxes {
			if !b.HasScore {
				return nil, fmt.Errorf("%s: score: the line has no score column; predictions need one", b.Where)
			}
			// The reader lets values stray 1e-6 beyond 0..1.
			s := math.Min(1, math.Max(0, b.Score))
			recs = append(recs, record{image: k, name: im.Name, class: b.Class, box: b.Box, score: s, where: b.Where})
		}
	}
	return recs, nil
}

// imageIndex finds project images by ID or by the name a prediction file
// gives them.
type imageIndex struct {
	images  []project.Image
	noExt   bool // compare paths without their extensions (label files)
	byID    map[int64]int
	byKey   map[string][]int
	byBase  map[string][]int
	keyPath []string
}

func newImageIndex(images []project.Image, noExt bool) *imageIndex {
	x := &imageIndex{images: images, noExt: noExt, byID: make(map[int64]int, len(images)),
		byKey: make(map[string][]int, len(images)), byBase: make(map[string][]int, len(images)),
		keyPath: make([]string, len(images))}
	for i, im := range images {
		x.byID[im.ID] = i
		k := x.key(im.Path)
		x.keyPath[i] = k
		x.byKey[k] = append(x.byKey[k], i)
		x.byBase[path.Base(k)] = append(x.byBase[path.Base(k)], i)
	}
	return x
}

// key normalises a path: forward slashes, cleaned, and without the
// extension when the index compares label files.
func (x *imageIndex) key(p string) string {
	p = path.Clean(strings.ReplaceAll(p, `\`, "/"))
	if x.noExt {
		p = strings.TrimSuffix(p, path.Ext(p))
	}
	return p
}

// find returns the index of the image the name refers to; the error
// completes a sentence whose subject is the name.
func (x *imageIndex) find(name string) (int, error) {
	k := x.key(name)
	pick := func(c []int) (int, error) {
		if len(c) == 1 {
			return c[0], nil
		}
		return -1, fmt.Errorf("matches more than one project image: %s and %s", x.images[c[0]].Path, x.images[c[1]].Path)
	}
	if c := x.byKey[k]; len(c) > 0 {
		return pick(c)
	}
	cands := x.byBase[path.Base(k)]
	var suffix []int
	for _, i := range cands {
		if strings.HasSuffix(x.keyPath[i], "/"+k) {
			suffix = append(suffix, i)
		}
	}
	if len(suffix) > 0 {
		return pick(suffix)
	}
	if len(cands) > 0 {
		return pick(cands)
	}
	if x.noExt {
		return -1, errors.New("has no image in the project")
	}
	return -1, errors.New("is not in the project")
}
