package formats

import (
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// LoadCornerJSON reads a corner/size JSON file.
func LoadCornerJSON(file string) (*Dataset, error) {
	f, err := OpenFile(file)
	if err != nil {
		return nil, err // it names the file
	}
	defer f.Close()
	return ReadCornerJSON(f, filepath.Base(file))
}

// filesWithExt lists the files under root (recursively, or root itself
// when it is a file) whose extension is ext, sorted, as paths relative to
// root with forward slashes.
func filesWithExt(root, ext string) ([]string, error) {
	st, err := os.Stat(root)
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", root, err)
	}
	if !st.IsDir() {
		return []string{""}, nil
	}
	var out []string
	err = filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.Type().IsRegular() && strings.EqualFold(filepath.Ext(p), ext) {
			rel, _ := filepath.Rel(root, p)
			out = append(out, filepath.ToSlash(rel))
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", root, err)
	}
	sort.Strings(out)
	if len(out) == 0 {
		return nil, fmt.Errorf("read %s: no %s files found", root, ext)
	}
	return out, nil
}

func joinRel(root, rel string) string {
	if rel == "" {
		return root
	}
	return filepath.Join(root, filepath.FromSlash(rel))
}

// LoadImageXMLFolder reads every per-image XML file under root (or root
// itself when it is a file). The class list is the names met, in order.
func LoadImageXMLFolder(root string) (*Dataset, error) {
	rels, err := filesWithExt(root, ".xml")
	if err != nil {
		return nil, err
	}
	ds := &Dataset{}
	seen := map[string]bool{}
	for _, rel := range rels {
		p := joinRel(root, rel)
		f, err := OpenFile(p)
		if err != nil {
			return nil, err // it names the file
		}
		name := rel
		if name == "" {
			name = filepath.Base(root)
		}
		rec, err := ReadImageXML(f, name)
		f.Close()
		if err != nil {
			return nil, err
		}
		for _, b := range rec.Boxes {
			if !seen[b.Class] {
				seen[b.Class] = true
				ds.Classes = append(ds.Classes, b.Class)
			}
		}
		ds.Images = append(ds.Images, rec)
	}
	return ds, nil
}

// ImageSize finds the displayed size of the image a label file belongs to
// (the centre-normalised text layout records no sizes); ok false, with a
// reason, when there is none.
type ImageSize func(rel string) (name string, width, height int, ok bool, reason string)

// LoadCentreTextFolder reads every .txt under root except the class-names
// file, resolving each to its image through size. Files without an image
// are returned as unmatched (with the reason), not read.
func LoadCentreTextFolder(root, classNamesFile string, size ImageSize) (*Dataset, []string, error) {
	// The labels first: a pipe or device given as the folder is named as
	// such, not reported as a class-names file missing beside it.
	if st, err := os.Stat(root); err != nil {
		return nil, nil, missing(root, err)
	} else if m := st.Mode(); !m.IsDir() && !m.IsRegular() {
		return nil, nil, fmt.Errorf("%s is %s, not a folder or file of labels", root, Kind(m))
	}
	cf, err := OpenFile(classNamesFile)
	if err != nil {
		return nil, nil, fmt.Errorf("read class names: %w", err)
	}
	classes, err := ReadClassNames(cf, filepath.Base(classNamesFile))
	cf.Close()
	if err != nil {
		return nil, nil, err
	}
	rels, err := filesWithExt(root, ".txt")
	if err != nil {
		return nil, nil, err
	}
	absClasses, _ := filepath.Abs(classNamesFile)
	ds := &Dataset{Classes: classes}
	var unmatched []string
	for _, rel := range rels {
		p := joinRel(root, rel)
		if abs, _ := filepath.Abs(p); abs == absClasses {
			continue
		}
		if rel == "" {
			rel = filepath.Base(root)
		}
		name, w, h, ok, reason := size(rel)
		if !ok {
			unmatched = append(unmatched, rel+": "+reason)
			continue
		}
		f, err := OpenFile(p)
		if err != nil {
			return nil, nil, err // it names the file
		}
		boxes, err := ReadCentreText(f, rel, w, h, classes)
		f.Close()
		if err != nil {
			return nil, nil, err
		}
		ds.Images = append(ds.Images, ImageRecord{Name: name, Width: w, Height: h, Boxes: boxes, Where: rel})
	}
	return ds, unmatched, nil
}
