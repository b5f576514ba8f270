package formats

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
)

// partialMark is in the name of every folder an export is assembled in
// before it is complete, beside its target: ".TARGET" + partialMark +
// digits. A temporary file of WriteFileAtomic is named the same way.
const partialMark = ".boxwright-partial-"

// ownerFile, inside a partial folder, says which process is writing it
// ("pid N", "host NAME"), so that a later export can tell a folder left by
// a crash from one still being written. It is removed just before the
// folder is renamed into place.
const ownerFile = ".boxwright-owner"

// partialPrefix is the start of the names of target's partial folders.
func partialPrefix(target string) string {
	return "." + shorten(filepath.Base(target), 120) + partialMark
}

// stage is an export being assembled in a hidden folder beside its target;
// commit renames it into place, abort removes it.
type stage struct {
	fs           writeFS
	out          string // the target as the caller named it, for messages
	target       string // absolute, links resolved
	parent       string
	dir          string          // the partial folder
	replaceEmpty bool            // target is an empty folder to replace
	dirs         map[string]bool // folders made inside dir
	files        []string        // files written in dir, to flush at commit
}

// checkTarget resolves out and refuses a target that is not a new or
// empty folder.
func checkTarget(out string) (target string, replaceEmpty bool, err error) {
	target, err = filepath.Abs(out)
	if err != nil {
		return "", false, fmt.Errorf("export folder %s: %w", out, err)
	}
	if st, err := os.Lstat(target); err == nil && st.Mode()&os.ModeSymlink != 0 {
		real, err := filepath.EvalSymlinks(target)
		if err != nil {
			return "", false, fmt.Errorf("export folder %s is a link that leads nowhere (%w): give a new or empty folder", out, err)
		}
		target = real
	}
	st, err := os.Stat(target)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return target, false, nil
	case err != nil:
		return "", false, fmt.Errorf("export folder %s: %w", out, err)
	case !st.IsDir():
		return "", false, fmt.Errorf("export folder %s is %s, not a folder: give the name of a new or empty folder", out, Kind(st.Mode()))
	}
	entries, err := os.ReadDir(target)
	if err != nil {
		return "", false, fmt.Errorf("export folder %s cannot be read: %w", out, err)
	}
	if len(entries) > 0 {
		return "", false, fmt.Errorf("export folder %s is not empty; choose a new folder so that no earlier export is mixed in", out)
	}
	return target, true, nil
}

// beginStage makes the partial folder beside target (checked by
// checkTarget) and says what it found of earlier partial folders there.
func beginStage(fsys writeFS, out, target string, replaceEmpty bool) (*stage, []string, error) {
	parent := filepath.Dir(target)
	if err := fsys.MkdirAll(parent); err != nil {
		return nil, nil, fmt.Errorf("export folder %s: cannot make the folder %s it goes in: %w", out, parent, err)
	}
	notes := sweepPartials(fsys, parent, target)
	dir, err := fsys.MkdirTemp(parent, partialPrefix(target)+"*")
	if err != nil {
		return nil, notes, fmt.Errorf("export folder %s: cannot write in %s, where the export is assembled before it is moved into place: %w; choose a folder you can write to", out, parent, err)
	}
	s := &stage{fs: fsys, out: out, target: target, parent: parent, dir: dir, replaceEmpty: replaceEmpty, dirs: map[string]bool{}}
	host, _ := os.Hostname()
	if err := s.writeFile(ownerFile, func(w io.Writer) error {
		_, err := fmt.Fprintf(w, "pid %d\nhost %s\n", os.Getpid(), host)
		return err
	}); err != nil {
		return nil, notes, s.abort(err)
	}
	return s, notes, nil
}

// sweepPartials removes the partial folders of target that a crashed
// export left (the owner file names a process of this machine that is
// gone) and names those it leaves alone. Nothing else is touched: only
// folders named exactly as beginStage names them.
func sweepPartials(fsys writeFS, parent, target string) []string {
	entries, err := os.ReadDir(parent)
	if err != nil {
		return nil // beginStage's MkdirTemp reports the folder
	}
	prefix := partialPrefix(target)
	host, _ := os.Hostname()
	var notes []string
	for _, e := range entries {
		rest, ok := strings.CutPrefix(e.Name(), prefix)
		if !ok || rest == "" || strings.Trim(rest, "0123456789") != "" || !e.IsDir() {
			continue
		}
		p := filepath.Join(parent, e.Name())
		pid, h, known := readOwner(filepath.Join(p, ownerFile))
		var why string
		switch {
		case !known:
			why = "it does not say which export made it"
		case host == "" || h != host:
			why = fmt.Sprintf("it is written by process %d on the machine %q", pid, h)
		case !processGone(pid):
			why = fmt.Sprintf("process %d, which writes it, is still running", pid)
		default:
			if err := fsys.RemoveAll(p); err != nil {
				why = fmt.Sprintf("removing it failed: %v", err)
				break
			}
			notes = append(notes, fmt.Sprintf("removed %s, left by an earlier export that stopped before it finished (process %d is gone)", p, pid))
			continue
		}
		notes = append(notes, fmt.Sprintf("left %s alone (an unfinished export: %s); delete it once no export into %s is running", p, why, target))
	}
	return notes
}

// readOwner reads a partial folder's owner file.
func readOwner(p string) (pid int, host string, ok bool) {
	st, err := os.Lstat(p)
	if err != nil || !st.Mode().IsRegular() || st.Size() > 4096 {
		return 0, "", false
	}
	b, err := os.ReadFile(p)
	if err != nil {
		return 0, "", false
	}
	for line := range strings.Lines(string(b)) {
		k, v, _ := strings.Cut(strings.TrimRight(line, "\n"), " ")
		switch k {
		case "pid":
			pid, _ = strconv.Atoi(v)
		case "host":
			host = v
		}
	}
	return pid, host, pid > 0 && host != ""
}

// mkdirFor makes the folders that p goes in.
func (s *stage) mkdirFor(p string) error {
	d := filepath.Dir(p)
	if d == s.dir || s.dirs[d] {
		return nil
	}
	if err := s.fs.MkdirAll(d); err != nil {
		return err
	}
	for x := d; len(x) > len(s.dir); x = filepath.Dir(x) {
		s.dirs[x] = true
	}
	return nil
}

// writeFile writes rel (forward slashes) in the stage, refusing any path
// that would leave it, and flushes it to the disk.
func (s *stage) writeFile(rel string, fill func(io.Writer) error) error {
	p, err := JoinInside(s.dir, rel)
	if err != nil {
		return err
	}
	if err := s.mkdirFor(p); err != nil {
		return fmt.Errorf("writing %s: %w", rel, err)
	}
	f, err := s.fs.Create(p)
	if err != nil {
		return fmt.Errorf("writing %s: %w", rel, err)
	}
	if err := fillFile(f, true, false, fill); err != nil {
		return fmt.Errorf("writing %s: %w", rel, err)
	}
	s.files = append(s.files, p)
	return nil
}

// fillFile writes f with fill (through a buffer when buffered), flushes it
// to the disk when flush and closes it.
func fillFile(f writeFile, buffered, flush bool, fill func(io.Writer) error) error {
	var err error
	if buffered {
		w := bufio.NewWriter(f)
		if err = fill(w); err == nil {
			err = w.Flush()
		}
	} else {
		err = fill(f)
	}
	if err == nil && flush {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// readTracker remembers a reader's error, to tell a failed read of the
// source from a failed write of the copy.
type readTracker struct {
	r   io.Reader
	err error
}

func (t *readTracker) Read(p []byte) (int, error) {
	n, err := t.r.Read(p)
	if err != nil && err != io.EOF {
		t.err = err
	}
	return n, err
}

// placeImage links or copies the image file src (the project's image
// name) to rel in the stage and says which it did.
func (s *stage) placeImage(rel, name, src string, mode ImageMode) (ImageMode, error) {
	dst, err := JoinInside(s.dir, rel)
	if err != nil {
		return "", err
	}
	if err := s.mkdirFor(dst); err != nil {
		return "", fmt.Errorf("writing %s: %w", rel, err)
	}
	if mode == ImagesLink {
		if err := s.fs.Link(src, dst); err == nil {
			return ImagesLink, nil
		}
	}
	in, err := OpenFile(src)
	if err != nil {
		return "", &unreadableImagesError{bad: []badImage{{name, src, err}}, total: 1}
	}
	defer in.Close()
	f, err := s.fs.Create(dst)
	if err != nil {
		return "", fmt.Errorf("writing %s: %w", rel, err)
	}
	tr := &readTracker{r: in}
	if err := fillFile(f, false, false, func(w io.Writer) error { _, err := io.Copy(w, tr); return err }); err != nil {
		if tr.err != nil {
			return "", &unreadableImagesError{bad: []badImage{{name, src, tr.err}}, total: 1}
		}
		return "", fmt.Errorf("writing %s (a copy of %s): %w", rel, src, err)
	}
	s.files = append(s.files, dst)
	return ImagesCopy, nil
}

// commit flushes the stage's files and folders to the disk and renames the
// stage into place; the target is replaced only if it is still an empty
// folder.
func (s *stage) commit(ctx context.Context) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if err := syncFiles(s.fs, s.files); err != nil {
		return err
	}
	dirs := make([]string, 0, len(s.dirs))
	for d := range s.dirs {
		dirs = append(dirs, d)
	}
	sort.Slice(dirs, func(i, j int) bool { return len(dirs[i]) > len(dirs[j]) }) // deepest first
	for _, d := range dirs {
		if err := s.fs.SyncDir(d); err != nil {
			return fmt.Errorf("flushing %s to the disk: %w", d, err)
		}
	}
	if err := s.fs.Remove(filepath.Join(s.dir, ownerFile)); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if err := s.fs.SyncDir(s.dir); err != nil {
		return fmt.Errorf("flushing %s to the disk: %w", s.dir, err)
	}
	if s.replaceEmpty {
		if err := s.fs.Remove(s.target); err != nil {
			return fmt.Errorf("replacing the empty folder %s (did something write into it meanwhile?): %w", s.target, err)
		}
	}
	if err := s.fs.Rename(s.dir, s.target); err != nil {
		if s.replaceEmpty {
			s.fs.Mkdir(s.target) // put the empty folder back
		}
		return fmt.Errorf("moving the finished export into place as %s: %w", s.target, err)
	}
	// The export is in place; this only hastens its name to the disk, and
	// a failure would not make the export any less there.
	s.fs.SyncDir(s.parent)
	return nil
}

// syncFiles flushes the files to the disk, several at once: the file
// system's journal then commits many flushes together, where one after
// the other each waits for its own (measured in BenchmarkExportFlush).
func syncFiles(fsys writeFS, files []string) error {
	next := make(chan string)
	errs := make(chan error, 1)
	var wg sync.WaitGroup
	for range min(8, len(files)) {
		wg.Go(func() {
			for p := range next {
				if err := fsys.SyncFile(p); err != nil {
					select {
					case errs <- fmt.Errorf("flushing %s to the disk: %w", p, err):
					default:
					}
				}
			}
		})
	}
feed:
	for _, p := range files {
		select {
		case next <- p:
		case err := <-errs:
			errs <- err
			break feed
		}
	}
	close(next)
	wg.Wait()
	select {
	case err := <-errs:
		return err
	default:
		return nil
	}
}

// abort removes the stage and returns cause, saying what was left.
func (s *stage) abort(cause error) error {
	if err := s.fs.RemoveAll(s.dir); err != nil {
		return fmt.Errorf("export into %s failed: %w (and removing the unfinished copy %s failed: %v; delete it)", s.out, cause, s.dir, err)
	}
	return fmt.Errorf("export into %s failed, nothing was written there: %w", s.out, cause)
}

// badImage is an image file an export cannot read.
type badImage struct {
	name, file string
	err        error
}

// unreadableImagesError names the images an export could not read.
type unreadableImagesError struct {
	bad   []badImage
	total int
}

func (e *unreadableImagesError) Error() string {
	var b strings.Builder
	if len(e.bad) == 1 {
		b.WriteString("an image cannot be read: ")
	} else {
		fmt.Fprintf(&b, "%d of %d images cannot be read: ", len(e.bad), e.total)
	}
	for i, x := range e.bad {
		if i == 10 {
			fmt.Fprintf(&b, "… and %d more; ", len(e.bad)-10)
			break
		}
		why := x.err
		var pe *fs.PathError
		if errors.As(why, &pe) && pe.Path == x.file {
			why = pe.Err // the path is named already
		}
		fmt.Fprintf(&b, "%q (file %s): %v; ", x.name, x.file, why)
	}
	b.WriteString(`restore the files (relink finds moved ones by content), or export with image files "none" (--images none) to refer to the images by path`)
	return b.String()
}

func (e *unreadableImagesError) Unwrap() []error {
	errs := make([]error, len(e.bad))
	for i, x := range e.bad {
		errs[i] = x.err
	}
	return errs
}

// checkImages opens every image file an export will copy or link, so that
// a missing one stops the export before anything is written.
func checkImages(imgs []ExportImage) error {
	var bad []badImage
	for _, im := range imgs {
		f, err := OpenFile(im.File)
		if err != nil {
			bad = append(bad, badImage{im.Record.Name, im.File, err})
			continue
		}
		f.Close()
	}
	if len(bad) > 0 {
		return &unreadableImagesError{bad: bad, total: len(imgs)}
	}
	return nil
}
