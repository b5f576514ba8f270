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
		what := "not a regular file"
		switch {
		case m.IsDir():
			what = "a folder"
		case m&fs.ModeNamedPipe != 0:
			what = "a named pipe"
		case m&(fs.ModeDevice|fs.ModeCharDevice) != 0:
			what = "a device"
		case m&fs.ModeSocket != 0:
			what = "a socket"
		}
		return nil, fmt.Errorf("%s is %s, not a file to read: give the file itself", path, what)
	}
	return os.Open(path)
}
