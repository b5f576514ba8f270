package formats

import (
	"fmt"
	"io/fs"
	"os"
)

// OpenFile opens a file to read records from, refusing anything that is
// not a regular file before opening it: a named pipe would wait forever
// for a writer and a device such as /dev/zero never ends, so neither may
// reach a reader that takes the whole input.
func OpenFile(path string) (*os.File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if m := st.Mode(); !m.IsRegular() {
		return nil, fmt.Errorf("%s is %s, not a file to read: give the file itself", path, Kind(m))
	}
	return os.Open(path)
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
