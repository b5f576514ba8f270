package formats

import (
	"errors"
	"fmt"
	"io/fs"
	"os"

	"boxwright/project"
)

// OpenFile opens a file to read records from, refusing anything that is
// not a regular file before opening it: a named pipe would wait forever
// for a writer and a device such as /dev/zero never ends, so neither may
// reach a reader that takes the whole input.
func OpenFile(path string) (*os.File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, missing(path, err)
	}
	if m := st.Mode(); !m.IsRegular() {
		return nil, fmt.Errorf("%s is %s, not a file to read: give the file itself", path, Kind(m))
	}
	return os.Open(path)
}

// missing says in words why path could not be found, keeping err's kind
// for errors.Is: no such file, or a link whose target is gone (the
// system's message, "stat X: no such file or directory", says neither).
func missing(path string, err error) error {
	if !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if target, lerr := os.Readlink(path); lerr == nil {
		return project.Explained(fs.ErrNotExist, "%s is a link to %s, which does not exist", path, target)
	}
	return project.Explained(fs.ErrNotExist, "no such file: %s", path)
}

// Kind names what a file mode is, for messages about files that are not
// regular: "a folder", "a named pipe", "a device", "a socket".
func Kind(m fs.FileMode) string {
	switch {
	case m.IsRegular():
		return "a regular file"
	case m.IsDir():
		return "a folder"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe"
	case m&(fs.ModeDevice|fs.ModeCharDevice) != 0:
		return "a device"
	case m&fs.ModeSocket != 0:
		return "a socket"
	}
	return "not a regular file"
}
