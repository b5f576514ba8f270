package formats

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// WriteFileAtomic writes the file path with fill by way of a hidden
// temporary file beside it (".NAME.boxwright-partial-DIGITS"), flushed to
// the disk and renamed over path only when fill and every write have
// succeeded: path then holds either what it held before or the whole new
// content, never a part. On failure the temporary file is removed. A
// symbolic link at path is followed (the file it leads to is replaced); an
// existing file keeps its permissions, a new one gets those of any new
// file (0644 less the umask).
func WriteFileAtomic(path string, fill func(io.Writer) error) error {
	return writeFileAtomic(osFS{}, path, fill)
}

func writeFileAtomic(fsys writeFS, path string, fill func(io.Writer) error) (err error) {
	target := path
	if st, err := os.Lstat(target); err == nil && st.Mode()&os.ModeSymlink != 0 {
		real, err := filepath.EvalSymlinks(target)
		if err != nil {
			return fmt.Errorf("save %s: it is a link that leads nowhere (%w): choose another file name", path, err)
		}
		target = real
	}
	var keep os.FileMode
	st, err := os.Stat(target)
	switch {
	case err == nil && !st.Mode().IsRegular():
		return fmt.Errorf("save %s: it is %s, not a file: choose a file name", path, Kind(st.Mode()))
	case err == nil:
		keep = st.Mode().Perm()
	case !errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("save %s: %w", path, err)
	}
	dir := filepath.Dir(target)
	f, tmp, err := fsys.CreateTemp(dir, "."+shorten(filepath.Base(target), 120)+partialMark+"*", keep)
	if err != nil {
		return fmt.Errorf("save %s: cannot write in %s: %w", path, dir, err)
	}
	defer func() {
		if err != nil {
			fsys.RemoveAll(tmp)
		}
	}()
	if err := fillFile(f, true, true, fill); err != nil {
		return fmt.Errorf("save %s: %w", path, err)
	}
	if err := fsys.Rename(tmp, target); err != nil {
		return fmt.Errorf("save %s: %w", path, err)
	}
	fsys.SyncDir(dir) // the file is in place; this only hastens its name to the disk
	return nil
}
