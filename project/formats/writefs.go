package formats

import (
	"errors"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
)

// writeFS is every change Export and WriteFileAtomic make to the file
// system, so that tests can make any one of them fail the way a full or
// read-only disk would.
type writeFS interface {
	MkdirAll(path string) error
	// Mkdir makes one folder back after a failed rename (never faulted).
	Mkdir(path string) error
	MkdirTemp(dir, pattern string) (string, error)
	// Create makes a new file; it fails if the name exists.
	Create(path string) (writeFile, error)
	// CreateTemp makes a new file with a unique name in dir: with the
	// permissions keep, or those of a plain new file when keep is 0.
	CreateTemp(dir, pattern string, keep os.FileMode) (writeFile, string, error)
	Link(oldname, newname string) error
	Rename(oldname, newname string) error
	Remove(path string) error
	// RemoveAll cleans up after a failure (never faulted).
	RemoveAll(path string) error
	// SyncFile flushes a file written earlier to the disk.
	SyncFile(path string) error
	// SyncDir flushes a folder's entries (new names) to the disk.
	SyncDir(path string) error
}

// writeFile is a file being written.
type writeFile interface {
	io.Writer
	Sync() error
	Close() error
}

// osFS is the real file system.
type osFS struct{}

func (osFS) MkdirAll(p string) error { return os.MkdirAll(p, 0o755) }
func (osFS) Mkdir(p string) error    { return os.Mkdir(p, 0o755) }

func (osFS) Create(p string) (writeFile, error) {
	return os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
}

// MkdirTemp makes dir/pattern with the "*" replaced by random digits, with
// the same permissions a plain new folder gets (os.MkdirTemp's 0700 would
// hide the finished export from other users).
func (osFS) MkdirTemp(dir, pattern string) (string, error) {
	return tryNames(dir, pattern, func(p string) error { return os.Mkdir(p, 0o755) })
}

func (osFS) CreateTemp(dir, pattern string, keep os.FileMode) (writeFile, string, error) {
	var f *os.File
	name, err := tryNames(dir, pattern, func(p string) (err error) {
		f, err = os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		return err
	})
	if err != nil {
		return nil, "", err
	}
	if keep != 0 {
		if err := f.Chmod(keep); err != nil {
			f.Close()
			os.Remove(name)
			return nil, "", err
		}
	}
	return f, name, nil
}

// tryNames calls make with dir/pattern, "*" replaced by random digits,
// until a name is free.
func tryNames(dir, pattern string, make func(string) error) (string, error) {
	prefix, suffix, _ := strings.Cut(pattern, "*")
	for range 10000 {
		p := filepath.Join(dir, prefix+strconv.FormatUint(uint64(rand.Uint32()), 10)+suffix)
		err := make(p)
		if errors.Is(err, fs.ErrExist) {
			continue
		}
		if err != nil {
			return "", err
		}
		return p, nil
	}
	return "", &fs.PathError{Op: "create", Path: filepath.Join(dir, pattern), Err: fs.ErrExist}
}

func (osFS) Link(o, n string) error   { return os.Link(o, n) }
func (osFS) Rename(o, n string) error { return os.Rename(o, n) }
func (osFS) Remove(p string) error    { return os.Remove(p) }
func (osFS) RemoveAll(p string) error { return os.RemoveAll(p) }

func (osFS) SyncFile(p string) error {
	// Opened for writing (without truncating): Windows flushes only
	// through a handle that may write.
	f, err := os.OpenFile(p, os.O_WRONLY, 0)
	if err != nil {
		return err
	}
	err = f.Sync()
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

func (osFS) SyncDir(p string) error {
	if runtime.GOOS == "windows" {
		return nil // folders cannot be opened for syncing there; NTFS journals names itself
	}
	d, err := os.Open(p)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	return err
}
