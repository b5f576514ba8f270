package formats

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
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
	if err := emptyFolder(out); err != nil {
		return rep, err
	}
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
			if err := exportSplit(ctx, out, split, classes, members, opts, &rep, func() {
				done++
				if opts.Progress != nil {
					opts.Progress(done, total)
				}
			}); err != nil {
				return rep, err
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
		if err := writeFileInside(out, "classes.txt", func(w io.Writer) error { return WriteClassNames(w, classes) }); err != nil {
			return rep, err
		}
	}
	if opts.Images == ImagesLink && rep.Copied > 0 {
		rep.Images = ImagesCopy
		if rep.Linked > 0 {
			rep.Images = imagesLinkAndCopy
		}
	}
	err := writeFileInside(out, "report.json", func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	})
	return rep, err
}

func exportSplit(ctx context.Context, out, split string, classes []string, members []ExportImage, opts ExportOptions, rep *ExportReport, tick func()) error {
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
			how, err := placeImage(out, path.Join(split, "images", name), m.File, opts.Images)
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
			if err := writeFileInside(out, path.Join(split, "annotations", stems[i]+".xml"), func(w io.Writer) error { return WriteImageXML(w, rec) }); err != nil {
				return err
			}
		case LayoutText:
			if err := writeFileInside(out, path.Join(split, "labels", stems[i]+".txt"), func(w io.Writer) error { return WriteCentreText(w, rec, classes) }); err != nil {
				return err
			}
		}
		tick()
	}
	switch opts.Layout {
	case LayoutJSON:
		return writeFileInside(out, path.Join(split, "annotations.json"), func(w io.Writer) error { return WriteCornerJSON(w, ds) })
	case LayoutText:
		sort.Strings(list)
		return writeFileInside(out, split+".txt", func(w io.Writer) error {
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

// emptyFolder makes out if needed and refuses one that holds anything.
func emptyFolder(out string) error {
	if err := os.MkdirAll(out, 0o755); err != nil {
		return fmt.Errorf("export folder %s: %w", out, err)
	}
	entries, err := os.ReadDir(out)
	if err != nil {
		return fmt.Errorf("export folder %s: %w", out, err)
	}
	if len(entries) > 0 {
		return fmt.Errorf("export folder %s is not empty; choose a new folder so that no earlier export is mixed in", out)
	}
	return nil
}

// writeFileInside writes root/rel (rel with forward slashes), refusing any
// path that would leave root.
func writeFileInside(root, rel string, fill func(io.Writer) error) error {
	p, err := JoinInside(root, rel)
	if err != nil {
		return err
	}
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	f, err := os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	w := bufio.NewWriter(f)
	if err := fill(w); err != nil {
		f.Close()
		return fmt.Errorf("export %s: %w", rel, err)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return fmt.Errorf("export %s: %w", rel, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("export %s: %w", rel, err)
	}
	return nil
}

// placeImage links or copies src to root/rel and says which it did.
func placeImage(root, rel, src string, mode ImageMode) (ImageMode, error) {
	dst, err := JoinInside(root, rel)
	if err != nil {
		return "", err
	}
	if err := os.MkdirAll(filepath.Dir(dst), 0o755); err != nil {
		return "", fmt.Errorf("export: %w", err)
	}
	if mode == ImagesLink {
		if err := os.Link(src, dst); err == nil {
			return ImagesLink, nil
		}
	}
	in, err := os.Open(src)
	if err != nil {
		return "", fmt.Errorf("export image: %w", err)
	}
	defer in.Close()
	outF, err := os.OpenFile(dst, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return "", fmt.Errorf("export image: %w", err)
	}
	if _, err := io.Copy(outF, in); err != nil {
		outF.Close()
		return "", fmt.Errorf("export image %s: %w", src, err)
	}
	if err := outF.Close(); err != nil {
		return "", fmt.Errorf("export image %s: %w", src, err)
	}
	return ImagesCopy, nil
}
