//go:build linux

package formats

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// A named pipe, a device and a folder are refused before anything is
// opened (a pipe would block and /dev/zero never ends), by name and kind;
// a regular file opens.
func TestOpenFileRefusesWhatIsNotAFile(t *testing.T) {
	dir := t.TempDir()
	pipe := filepath.Join(dir, "labels.json")
	if err := syscall.Mkfifo(pipe, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	for path, kind := range map[string]string{pipe: "named pipe", "/dev/zero": "device", dir: "folder"} {
		f, err := OpenFile(path)
		if err == nil {
			f.Close()
			t.Errorf("%s opened", path)
			continue
		}
		if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), kind) {
			t.Errorf("%s: %v, want the path and %q", path, err, kind)
		}
	}
	if _, err := LoadCornerJSON(pipe); err == nil || !strings.Contains(err.Error(), "named pipe") || strings.Count(err.Error(), pipe) != 1 {
		t.Errorf("LoadCornerJSON on a pipe: %v", err)
	}
	plain := filepath.Join(dir, "plain.json")
	os.WriteFile(plain, []byte("{}"), 0o644)
	f, err := OpenFile(plain)
	if err != nil {
		t.Fatal(err)
	}
	f.Close()
}

// A missing file and a link to nothing are said in words ("stat X: no
// such file or directory" said neither which), and stay fs.ErrNotExist.
func TestOpenFileSaysWhatIsMissing(t *testing.T) {
	dir := t.TempDir()
	gone := filepath.Join(dir, "gone.txt")
	link := filepath.Join(dir, "link.txt")
	if err := os.Symlink(gone, link); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	for path, want := range map[string]string{gone: "no such file: " + gone, link: link + " is a link to " + gone + ", which does not exist"} {
		_, err := OpenFile(path)
		if err == nil || err.Error() != want || !errors.Is(err, fs.ErrNotExist) {
			t.Errorf("OpenFile(%s): %v, want %q", path, err, want)
		}
	}
}

// The text layout names a pipe given as its label folder as a pipe, not
// as a class-names file missing beside it.
func TestCentreTextFolderRefusesAPipe(t *testing.T) {
	dir := t.TempDir()
	pipe := filepath.Join(dir, "labels")
	if err := syscall.Mkfifo(pipe, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	_, _, err := LoadCentreTextFolder(pipe, filepath.Join(dir, "classes.txt"), nil)
	if err == nil || !strings.Contains(err.Error(), pipe+" is a named pipe") {
		t.Errorf("LoadCentreTextFolder on a pipe: %v", err)
	}
}
