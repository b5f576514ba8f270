package imagefile

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"boxwright/project"
	"boxwright/project/formats"
)

// Found is a file an intake takes: Abs is its absolute path, Name its
// path relative to the parent of the folder it was found in (its own
// name when given alone), with forward slashes.
type Found struct{ Abs, Name string }

// Collect expands folders into the image files under them, sorted, for
// an intake: files named explicitly are
// taken whatever their extension, so that a wrong file gets a reason
// rather than silence; hidden folders are not walked; named pipes,
// devices and links to nothing are skipped with a reason, never opened.
func Collect(paths []string) ([]Found, []project.IntakeFailure) {
	var files []Found
	var failed []project.IntakeFailure
	seen := map[string]bool{}
	add := func(p, name string) {
		if abs, err := filepath.Abs(p); err == nil && !seen[abs] {
			seen[abs] = true
			files = append(files, Found{abs, filepath.ToSlash(name)})
		}
	}
	for _, root := range paths {
		st, err := os.Stat(root)
		if err != nil {
			failed = append(failed, project.IntakeFailure{Path: root, Error: describeStatError(err)})
			continue
		}
		if !st.IsDir() {
			if why := notAFile(st.Mode()); why != "" {
				failed = append(failed, project.IntakeFailure{Path: root, Error: why})
				continue
			}
			add(root, filepath.Base(root))
			continue
		}
		absRoot, _ := filepath.Abs(root)
		base := filepath.Dir(absRoot)
		var found []string
		err = filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			if err != nil {
				failed = append(failed, project.IntakeFailure{Path: p, Error: describeStatError(err)})
				if d != nil && d.IsDir() {
					return fs.SkipDir
				}
				return nil
			}
			if d.IsDir() && p != root && strings.HasPrefix(d.Name(), ".") {
				return fs.SkipDir // hidden folders hold caches and version control
			}
			switch t := d.Type(); {
			case t.IsRegular():
				if IsImageName(d.Name()) {
					found = append(found, p)
				}
			case t&fs.ModeSymlink != 0:
				// Followed to a regular file; a link to a folder is not
				// walked (it could loop).
				st, err := os.Stat(p)
				switch {
				case err != nil:
					failed = append(failed, project.IntakeFailure{Path: p, Error: "a link to nothing (its target is missing); skipped"})
				case st.Mode().IsRegular() && IsImageName(d.Name()):
					found = append(found, p)
				case !st.IsDir() && !st.Mode().IsRegular():
					failed = append(failed, project.IntakeFailure{Path: p, Error: notAFile(st.Mode())})
				}
			case !t.IsDir():
				failed = append(failed, project.IntakeFailure{Path: p, Error: notAFile(t)})
			}
			return nil
		})
		if err != nil {
			failed = append(failed, project.IntakeFailure{Path: root, Error: err.Error()})
		}
		sort.Strings(found)
		for _, p := range found {
			abs, _ := filepath.Abs(p)
			name, err := filepath.Rel(base, abs)
			if err != nil {
				name = filepath.Base(abs)
			}
			add(p, name)
		}
	}
	return files, failed
}

// notAFile says why something that is neither a folder nor a regular file
// is not read ("" for a regular file): opening a named pipe would wait
// forever for a writer, and a device has no end.
func notAFile(m fs.FileMode) string {
	if m.IsRegular() {
		return ""
	}
	return formats.Kind(m) + ", not an image file; skipped without reading it"
}

func describeStatError(err error) string {
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return "no such file or folder"
	case errors.Is(err, fs.ErrPermission):
		return "permission denied"
	}
	return err.Error()
}
