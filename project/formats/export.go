package formats

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"path"
	"path/filepath"
	"sort"
	"strings"
)

// ImageMode says how an export provides the image files.
type ImageMode string

// The ways to provide images.
const (
	ImagesCopy ImageMode = "copy" // copy the files into the export
	ImagesLink ImageMode = "link" // hard-link them (copy where linking fails)
	// imagesLinkAndCopy reports a link export that had to copy some files.
	imagesLinkAndCopy ImageMode = "link and copy"
	ImagesNone        ImageMode = "none" // refer to the original files by absolute path
)

// ExportImage is one image to export.
type ExportImage struct {
	Record ImageRecord // Name is the image's path within the project
	File   string      // the image file on this machine
	Key    string      // SHA-256 of the file: identical files share a split
}

// ExportOptions tunes Export.
type ExportOptions struct {
	Layout   Layout
	Ratios   [3]float64 // train, val, test; see ParseRatios
	Seed     int64
	Images   ImageMode
	Progress func(done, total int)

	fs writeFS // nil: the real file system; tests make it fail
}

// SplitReport counts one split of an export.
type SplitReport struct {
	Name    string         `json:"name"`
	Images  int            `json:"images"`
	Boxes   int            `json:"boxes"`
	Classes map[string]int `json:"classes"` // boxes per class, every class listed
}

// ExportReport says what an export wrote; it is also saved as report.json
// in the export folder.
type ExportReport struct {
	Layout Layout `json:"layout"`
	// Images is what was done with the image files: the mode asked for,
	// except that a link export where linking failed (another file system)
	// and files were copied says "copy", or "link and copy" when only some
	// were. Requested keeps what was asked.
	Images    ImageMode     `json:"images"`
	Requested ImageMode     `json:"requested_images"`
	Ratios    [3]float64    `json:"ratios"`
	Seed      int64         `json:"seed"`
	Classes   []string      `json:"classes"`
	Splits    []SplitReport `json:"splits"`
	Copied    int           `json:"copied"`
	Linked    int           `json:"linked"`
	// Notes says what the export found beside its folder: unfinished
	// exports into the same folder that it removed or left alone.
	Notes []string `json:"notes,omitempty"`
}

// Export writes the images' boxes in the chosen layout under out, split
// into train/val/test folders:
//
//	out/report.json                      what was written
//	out/classes.txt                      class names (text layout)
//	out/SPLIT/images/NAME                image files (copy or link)
//	out/SPLIT/annotations.json           corner/size JSON
//	out/SPLIT/annotations/STEM.xml       per-image XML
//	out/SPLIT/labels/STEM.txt            centre-normalised text
//	out/SPLIT.txt                        image list (text layout)
//
// Names are made safe and unique, so nothing is written outside out. The
// folder must be new or empty, so that no earlier export is mixed in.
//
// The export is all-or-nothing: it is assembled in a hidden folder beside
// out (".OUT.boxwright-partial-DIGITS"), every file flushed to the disk,
// and renamed to out only when complete. On any failure or cancellation
// that folder is removed and out is left as it was. Every image to copy
// or link is opened first, so that a missing one stops the export before
// anything is written, with a message naming it. A partial folder that a
// crashed export of this machine left is removed; any other is left alone
// and named in the report's notes.
func Export(ctx context.Context, out string, classes []string, imgs []ExportImage, opts ExportOptions) (ExportReport, error) {
	rep := ExportReport{Layout: opts.Layout, Images: opts.Images, Requested: opts.Images, Ratios: opts.Ratios, Seed: opts.Seed, Classes: classes}
	switch opts.Layout {
	case LayoutJSON, LayoutXML, LayoutText:
	default:
		return rep, fmt.Errorf("export: unknown layout %q (use json, xml or txt)", opts.Layout)
	}
	switch opts.Images {
	case ImagesCopy, ImagesLink, ImagesNone:
	default:
		return rep, fmt.Errorf("export: unknown image mode %q (use copy, link or none)", opts.Images)
	}
	target, replaceEmpty, err := checkTarget(out)
	if err != nil {
		return rep, err
	}
	if opts.Images != ImagesNone {
		if err := checkImages(imgs); err != nil {
			return rep, fmt.Errorf("export into %s: nothing was written: %w", out, err)
		}
	}
	fsys := opts.fs
	if fsys == nil {
		fsys = osFS{}
	}
	st, notes, err := beginStage(fsys, out, target, replaceEmpty)
	rep.Notes = notes
	if err != nil {
		return rep, err
	}
	if err := exportInto(ctx, st, classes, imgs, opts, &rep); err != nil {
		return rep, st.abort(err)
	}
	return rep, nil
}

// exportInto writes the whole export into the stage and commits it.
func exportInto(ctx context.Context, st *stage, classes []string, imgs []ExportImage, opts ExportOptions, rep *ExportReport) error {
	items := make([]SplitItem, len(imgs))
	for i, im := range imgs {
		items[i].Key = im.Key
		for _, b := range im.Record.Boxes {
			items[i].Classes = append(items[i].Classes, b.Class)
		}
	}
	assign := Split(items, opts.Ratios, opts.Seed)
	total, done := len(imgs), 0
	for k, split := range SplitNames {
		var members []ExportImage
		for i, s := range assign {
			if s == k {
				members = append(members, imgs[i])
			}
		}
		sr := SplitReport{Name: split, Images: len(members), Classes: map[string]int{}}
		for _, c := range classes {
			sr.Classes[c] = 0
		}
		if len(members) > 0 {
			if err := exportSplit(ctx, st, split, classes, members, opts, rep, func() {
				done++
				if opts.Progress != nil {
					opts.Progress(done, total)
				}
			}); err != nil {
				return err
			}
		}
		for _, m := range members {
			sr.Boxes += len(m.Record.Boxes)
			for _, b := range m.Record.Boxes {
				sr.Classes[b.Class]++
			}
		}
		rep.Splits = append(rep.Splits, sr)
	}
	if opts.Layout == LayoutText {
		if err := st.writeFile("classes.txt", func(w io.Writer) error { return WriteClassNames(w, classes) }); err != nil {
			return err
		}
	}
	if opts.Images == ImagesLink && rep.Copied > 0 {
		rep.Images = ImagesCopy
		if rep.Linked > 0 {
			rep.Images = imagesLinkAndCopy
		}
	}
	if err := st.writeFile("report.json", func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}); err != nil {
		return err
	}
	return st.commit(ctx)
}

func exportSplit(ctx context.Context, st *stage, split string, classes []string, members []ExportImage, opts ExportOptions, rep *ExportReport, tick func()) error {
	// Output names: safe, and unique by stem so that per-image label
	// files of a.jpg and a.png cannot collide.
	stems := make([]string, len(members))
	exts := make([]string, len(members))
	for i, m := range members {
		safe := SafeRelPath(path.Base(strings.ReplaceAll(m.Record.Name, "\\", "/")))
		exts[i] = path.Ext(safe)
		stems[i] = strings.TrimSuffix(safe, exts[i])
		if stems[i] == "" {
			stems[i] = "unnamed"
		}
	}
	stems = UniqueNames(stems)
	ds := &Dataset{Classes: classes}
	var list []string
	for i, m := range members {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("export: %w", err)
		}
		name := stems[i] + exts[i]
		rec := m.Record
		rec.Name = name
		switch opts.Images {
		case ImagesNone:
			abs, err := filepath.Abs(m.File)
			if err != nil {
				return err
			}
			rec.Name = filepath.ToSlash(abs)
			list = append(list, rec.Name)
		default:
			how, err := st.placeImage(path.Join(split, "images", name), m.Record.Name, m.File, opts.Images)
			if err != nil {
				return err
			}
			if how == ImagesLink {
				rep.Linked++
			} else {
				rep.Copied++
			}
			list = append(list, path.Join(split, "images", name))
			if opts.Layout == LayoutJSON {
				rec.Name = name // relative to SPLIT/images
			}
		}
		switch opts.Layout {
		case LayoutJSON:
			ds.Images = append(ds.Images, rec)
		case LayoutXML:
			if err := st.writeFile(path.Join(split, "annotations", stems[i]+".xml"), func(w io.Writer) error { return WriteImageXML(w, rec) }); err != nil {
				return err
			}
		case LayoutText:
			if err := st.writeFile(path.Join(split, "labels", stems[i]+".txt"), func(w io.Writer) error { return WriteCentreText(w, rec, classes) }); err != nil {
				return err
			}
		}
		tick()
	}
	switch opts.Layout {
	case LayoutJSON:
		return st.writeFile(path.Join(split, "annotations.json"), func(w io.Writer) error { return WriteCornerJSON(w, ds) })
	case LayoutText:
		sort.Strings(list)
		return st.writeFile(split+".txt", func(w io.Writer) error {
			for _, l := range list {
				if _, err := fmt.Fprintln(w, l); err != nil {
					return err
				}
			}
			return nil
		})
	}
	return nil
}
