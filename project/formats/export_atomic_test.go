package formats

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"syscall"
	"testing"

	"boxwright/project"
)

// faultFS is the real file system except that its Nth change (a folder
// made, a file created, written, flushed or closed, a link, a rename, a
// removal) fails with err; a write that fails writes half its bytes first,
// as a disk that fills up does. Flushes to the disk are counted but not
// done, to keep the tests quick.
type faultFS struct {
	osFS
	mu     sync.Mutex // files are flushed from several goroutines
	failAt int        // 1-based; 0 never
	err    error
	n      int
	failed string // the change that failed
}

func (f *faultFS) hit(what string) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.n++
	if f.n == f.failAt {
		f.failed = what
		return &fs.PathError{Op: "test", Path: what, Err: f.err}
	}
	return nil
}

func (f *faultFS) MkdirAll(p string) error {
	if err := f.hit("mkdir " + p); err != nil {
		return err
	}
	return f.osFS.MkdirAll(p)
}

func (f *faultFS) MkdirTemp(dir, pattern string) (string, error) {
	if err := f.hit("mkdtemp " + dir); err != nil {
		return "", err
	}
	return f.osFS.MkdirTemp(dir, pattern)
}

func (f *faultFS) Create(p string) (writeFile, error) {
	if err := f.hit("create " + p); err != nil {
		return nil, err
	}
	w, err := f.osFS.Create(p)
	if err != nil {
		return nil, err
	}
	return &faultFile{fs: f, f: w.(*os.File)}, nil
}

func (f *faultFS) CreateTemp(dir, pattern string, keep os.FileMode) (writeFile, string, error) {
	if err := f.hit("createtemp " + dir); err != nil {
		return nil, "", err
	}
	w, name, err := f.osFS.CreateTemp(dir, pattern, keep)
	if err != nil {
		return nil, "", err
	}
	return &faultFile{fs: f, f: w.(*os.File)}, name, nil
}

func (f *faultFS) Link(o, n string) error {
	if err := f.hit("link " + n); err != nil {
		return err
	}
	return f.osFS.Link(o, n)
}

func (f *faultFS) Rename(o, n string) error {
	if err := f.hit("rename " + n); err != nil {
		return err
	}
	return f.osFS.Rename(o, n)
}

func (f *faultFS) Remove(p string) error {
	if err := f.hit("remove " + p); err != nil {
		return err
	}
	return f.osFS.Remove(p)
}

func (f *faultFS) SyncFile(p string) error { return f.hit("syncfile " + p) }
func (f *faultFS) SyncDir(p string) error  { return f.hit("syncdir " + p) }

type faultFile struct {
	fs *faultFS
	f  *os.File
}

func (w *faultFile) Write(b []byte) (int, error) {
	if err := w.fs.hit("write " + w.f.Name()); err != nil {
		n, _ := w.f.Write(b[:len(b)/2])
		return n, err
	}
	return w.f.Write(b)
}

func (w *faultFile) Sync() error { return w.fs.hit("sync " + w.f.Name()) }

func (w *faultFile) Close() error {
	err := w.fs.hit("close " + w.f.Name())
	if cerr := w.f.Close(); err == nil {
		err = cerr
	}
	return err
}

// listTree lists every file and folder under dir, relative, sorted.
func listTree(t *testing.T, dir string) []string {
	t.Helper()
	var got []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || p == dir {
			return nil
		}
		rel, _ := filepath.Rel(dir, p)
		got = append(got, filepath.ToSlash(rel))
		return nil
	})
	sort.Strings(got)
	return got
}

// A full disk at any point of an export (every change to the file system
// in turn: each layout with copied images, the corner/size JSON with
// linked and referenced images and into an empty folder) leaves nothing
// beside or in the target, and the next try into the same target writes
// the whole export: the same files as an export that never failed.
func TestExportFullDiskAtEveryStepLeavesNothing(t *testing.T) {
	classes, imgs := exportFixture(t)
	imgs = imgs[6:] // three images, twins among them, keep the test quick
	type run struct {
		layout Layout
		mode   ImageMode
		empty  bool
	}
	runs := []run{{LayoutJSON, ImagesCopy, false}, {LayoutXML, ImagesCopy, false}, {LayoutText, ImagesCopy, false},
		{LayoutJSON, ImagesLink, false}, {LayoutJSON, ImagesNone, false}, {LayoutJSON, ImagesCopy, true}}
	for _, r := range runs {
		layout, mode, empty := r.layout, r.mode, r.empty
		name := fmt.Sprintf("%s/%s/empty=%v", layout, mode, empty)
		opts := ExportOptions{Layout: layout, Ratios: [3]float64{0.5, 0.25, 0.25}, Seed: 2, Images: mode}
		ref := filepath.Join(t.TempDir(), "ref")
		if _, err := Export(context.Background(), ref, classes, imgs, opts); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		want := listTree(t, ref)
		parent := t.TempDir()
		out := filepath.Join(parent, "out")
		if empty {
			os.Mkdir(out, 0o755)
		}
		failures, inBigFile := 0, false
		for n := 1; ; n++ {
			ff := &faultFS{failAt: n, err: syscall.ENOSPC}
			opts.fs = ff
			_, err := Export(context.Background(), out, classes, imgs, opts)
			if ff.failed == "" || err == nil {
				// Past the last change (or a fault the export gets
				// round: a failed link is copied instead, the last
				// flush of the parent only hastens a name): done.
				if err != nil {
					t.Fatalf("%s: no fault, yet: %v", name, err)
				}
				if got := listTree(t, out); strings.Join(got, "\n") != strings.Join(want, "\n") {
					t.Errorf("%s: after %d failures the export holds\n%v\nwant\n%v", name, failures, got, want)
				}
				if ff.failed == "" {
					break
				}
				os.RemoveAll(out)
				if empty {
					os.Mkdir(out, 0o755)
				}
				continue
			}
			failures++
			if strings.Contains(ff.failed, "write ") && strings.Contains(ff.failed, "annotations.json") {
				inBigFile = true
			}
			if !errors.Is(err, syscall.ENOSPC) {
				t.Errorf("%s: fault at %s: error %v does not say the disk is full", name, ff.failed, err)
			}
			entries, _ := os.ReadDir(parent)
			switch {
			case !empty && len(entries) != 0:
				t.Fatalf("%s: fault at %s left %v in the parent folder", name, ff.failed, entries)
			case empty && (len(entries) != 1 || entries[0].Name() != "out" || len(listTree(t, out)) != 0):
				t.Fatalf("%s: fault at %s left %v in the parent folder, %v in the target", name, ff.failed, entries, listTree(t, out))
			}
		}
		t.Logf("%s: %d faults", name, failures)
		if failures < 20 {
			t.Errorf("%s: only %d faults tried", name, failures)
		}
		if layout == LayoutJSON && !inBigFile {
			t.Errorf("%s: no fault fell in the writing of annotations.json", name)
		}
	}
}

// A missing image file stops the export before anything is written; the
// message names the image, its file and what to do; once the file is
// back, the same command succeeds.
func TestExportMissingImageNamesItAndLeavesNothing(t *testing.T) {
	classes, imgs := exportFixture(t)
	gone := imgs[3].File
	os.Rename(gone, gone+".away")
	for _, mode := range []ImageMode{ImagesCopy, ImagesLink} {
		for _, empty := range []bool{false, true} {
			parent := t.TempDir()
			out := filepath.Join(parent, "out")
			if empty {
				os.Mkdir(out, 0o755)
			}
			_, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: mode})
			if err == nil {
				t.Fatalf("%s: export without an image file succeeded", mode)
			}
			msg := err.Error()
			for _, part := range []string{`"sub/dup.jpg"`, gone, "no such file", "restore", "--images none"} {
				if !strings.Contains(msg, part) {
					t.Errorf("%s: message lacks %q: %s", mode, part, msg)
				}
			}
			if !errors.Is(err, fs.ErrNotExist) {
				t.Errorf("%s: error does not wrap the missing file: %v", mode, err)
			}
			entries, _ := os.ReadDir(parent)
			if (!empty && len(entries) != 0) || (empty && (len(entries) != 1 || len(listTree(t, out)) != 0)) {
				t.Errorf("%s: a failed export left %v beside, %v inside", mode, entries, listTree(t, out))
			}
		}
	}
	// The same file gone during the export (after the check) is named too.
	st := &stage{fs: osFS{}, dir: t.TempDir(), dirs: map[string]bool{}}
	if _, err := st.placeImage("train/images/dup.jpg", "sub/dup.jpg", gone, ImagesCopy); err == nil || !strings.Contains(err.Error(), `"sub/dup.jpg" (file `+gone+`): no such file`) {
		t.Errorf("copying a missing image: %v", err)
	}
	os.Rename(gone+".away", gone)
	out := filepath.Join(t.TempDir(), "out")
	if _, err := Export(context.Background(), out, classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesCopy}); err != nil {
		t.Fatalf("retry with the file back: %v", err)
	}
	if _, err := os.Stat(filepath.Join(out, "report.json")); err != nil {
		t.Errorf("retry wrote no report: %v", err)
	}
}

// Cancelling (Ctrl+C, the window's Cancel) at any image, or after the last
// one, leaves nothing.
func TestExportCancelledLeavesNothing(t *testing.T) {
	classes, imgs := exportFixture(t)
	for at := 1; at <= len(imgs); at++ {
		parent := t.TempDir()
		ctx, cancel := context.WithCancel(context.Background())
		_, err := Export(ctx, filepath.Join(parent, "out"), classes, imgs, ExportOptions{Layout: LayoutXML, Ratios: [3]float64{1, 0, 0}, Images: ImagesCopy,
			Progress: func(done, total int) {
				if done == at {
					cancel()
				}
			}})
		cancel()
		if !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled at image %d: %v", at, err)
		}
		if entries, _ := os.ReadDir(parent); len(entries) != 0 {
			t.Errorf("cancelled at image %d: left %v", at, entries)
		}
	}
}

// The target folder's own troubles get a message a person can act on, and
// nothing of theirs is touched.
func TestExportTargetProblems(t *testing.T) {
	classes, imgs := exportFixture(t)
	opts := ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesNone}
	parent := t.TempDir()

	file := filepath.Join(parent, "file")
	os.WriteFile(file, []byte("mine"), 0o644)
	if _, err := Export(context.Background(), file, classes, imgs, opts); err == nil || !strings.Contains(err.Error(), "is a regular file, not a folder") {
		t.Errorf("target is a file: %v", err)
	}
	if b, _ := os.ReadFile(file); string(b) != "mine" {
		t.Errorf("the file became %q", b)
	}
	if _, err := Export(context.Background(), filepath.Join(file, "out"), classes, imgs, opts); err == nil {
		t.Errorf("target inside a file: accepted")
	}

	// A folder that cannot be written in (read-only disk, no permission).
	ff := &faultFS{err: syscall.EROFS}
	ff.failAt = 2 // 1 is making sure the parent exists
	opts.fs = ff
	ro := filepath.Join(parent, "ro")
	_, err := Export(context.Background(), filepath.Join(ro, "out"), classes, imgs, opts)
	if err == nil || !errors.Is(err, syscall.EROFS) || !strings.Contains(err.Error(), "cannot write in "+ro) || !strings.Contains(err.Error(), "choose a folder you can write to") {
		t.Errorf("read-only parent: %v", err)
	}
	opts.fs = nil
	if os.Geteuid() != 0 { // permissions do not stop root
		os.Mkdir(ro, 0o555)
		_, err := Export(context.Background(), filepath.Join(ro, "out"), classes, imgs, opts)
		if !errors.Is(err, fs.ErrPermission) || !strings.Contains(err.Error(), "cannot write in "+ro) {
			t.Errorf("unwritable parent: %v", err)
		}
		os.Chmod(ro, 0o755)
	}

	// A link to an empty folder: the export lands in the folder it leads to.
	real := filepath.Join(parent, "real")
	os.Mkdir(real, 0o755)
	link := filepath.Join(parent, "link")
	if err := os.Symlink(real, link); err != nil {
		t.Skip(err)
	}
	if _, err := Export(context.Background(), link, classes, imgs, opts); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(real, "report.json")); err != nil {
		t.Errorf("export through a link: %v", err)
	}
	if st, err := os.Lstat(link); err != nil || st.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link was replaced: %v %v", st, err)
	}
}

// Partial folders left beside the target: one a crashed export of this
// machine left is removed, one still being written (its process lives),
// one of another machine and one that says nothing are left alone and
// named; folders that only look alike are not touched. None blocks the
// export.
func TestExportStalePartialFolders(t *testing.T) {
	classes, imgs := exportFixture(t)
	parent := t.TempDir()
	host, err := os.Hostname()
	if err != nil {
		t.Skip(err)
	}
	dead := exec.Command("true")
	if err := dead.Run(); err != nil {
		t.Skip(err)
	}
	mk := func(name, owner string) string {
		p := filepath.Join(parent, name)
		os.MkdirAll(filepath.Join(p, "train"), 0o755)
		os.WriteFile(filepath.Join(p, "train", "annotations.json"), []byte("{\"imag"), 0o644)
		if owner != "" {
			os.WriteFile(filepath.Join(p, ownerFile), []byte(owner), 0o644)
		}
		return p
	}
	crashed := mk(".out.boxwright-partial-11", fmt.Sprintf("pid %d\nhost %s\n", dead.Process.Pid, host))
	running := mk(".out.boxwright-partial-22", fmt.Sprintf("pid %d\nhost %s\n", os.Getpid(), host))
	elsewhere := mk(".out.boxwright-partial-33", fmt.Sprintf("pid %d\nhost %s-not\n", dead.Process.Pid, host))
	silent := mk(".out.boxwright-partial-44", "")
	others := []string{
		mk(".out.boxwright-partial-5x", fmt.Sprintf("pid %d\nhost %s\n", dead.Process.Pid, host)),
		mk(".outer.boxwright-partial-66", fmt.Sprintf("pid %d\nhost %s\n", dead.Process.Pid, host)),
		mk("out.boxwright-partial-77", fmt.Sprintf("pid %d\nhost %s\n", dead.Process.Pid, host)),
	}
	rep, err := Export(context.Background(), filepath.Join(parent, "out"), classes, imgs, ExportOptions{Layout: LayoutJSON, Ratios: [3]float64{1, 0, 0}, Images: ImagesNone})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(crashed); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("the crashed export's folder is still there: %v", err)
	}
	for _, p := range append([]string{running, elsewhere, silent}, others...) {
		if _, err := os.Stat(filepath.Join(p, "train", "annotations.json")); err != nil {
			t.Errorf("%s was touched: %v", p, err)
		}
	}
	notes := strings.Join(rep.Notes, "\n")
	if len(rep.Notes) != 4 || !strings.Contains(notes, "removed "+crashed) || !strings.Contains(notes, "left "+running+" alone") ||
		!strings.Contains(notes, "still running") || !strings.Contains(notes, "left "+elsewhere+" alone") || !strings.Contains(notes, "left "+silent+" alone") {
		t.Errorf("notes:\n%s", notes)
	}
	if _, err := os.Stat(filepath.Join(parent, "out", ownerFile)); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("the owner file went into the export: %v", err)
	}
}

// A single file is replaced whole or not at all, whatever change fails.
func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "table.csv")
	os.WriteFile(p, []byte("old\n"), 0o600)
	body := strings.Repeat("a,b,c\n", 3000) // several buffer fills
	fill := func(w io.Writer) error {
		_, err := io.WriteString(w, body)
		return err
	}
	failures := 0
	for n := 1; ; n++ {
		ff := &faultFS{failAt: n, err: syscall.ENOSPC}
		err := writeFileAtomic(ff, p, fill)
		got, _ := os.ReadFile(p)
		if entries, _ := os.ReadDir(dir); len(entries) != 1 {
			t.Fatalf("fault at %q: %v in the folder", ff.failed, entries)
		}
		if ff.failed == "" || err == nil {
			if err != nil || string(got) != body {
				t.Fatalf("no fault: %v, %d bytes", err, len(got))
			}
			if ff.failed == "" {
				break
			}
			os.WriteFile(p, []byte("old\n"), 0o600)
			continue
		}
		failures++
		if !errors.Is(err, syscall.ENOSPC) || string(got) != "old\n" {
			t.Errorf("fault at %q: %v, file holds %d bytes", ff.failed, err, len(got))
		}
	}
	if failures < 4 {
		t.Errorf("only %d faults tried", failures)
	}
	if st, _ := os.Stat(p); st.Mode().Perm() != 0o600 {
		t.Errorf("permissions became %v", st.Mode().Perm())
	}
	if err := WriteFileAtomic(p, func(w io.Writer) error { return errors.New("encoder broke") }); err == nil || !strings.Contains(err.Error(), "encoder broke") {
		t.Errorf("failing fill: %v", err)
	}
	if got, _ := os.ReadFile(p); string(got) != body {
		t.Errorf("a failed fill changed the file")
	}
	if err := WriteFileAtomic(dir, func(w io.Writer) error { return nil }); err == nil || !strings.Contains(err.Error(), "a folder, not a file") {
		t.Errorf("saving over a folder: %v", err)
	}
	link := filepath.Join(t.TempDir(), "link.csv")
	if os.Symlink(p, link) == nil {
		if err := WriteFileAtomic(link, func(w io.Writer) error { _, err := w.Write([]byte("new\n")); return err }); err != nil {
			t.Fatal(err)
		}
		if got, _ := os.ReadFile(p); string(got) != "new\n" {
			t.Errorf("through a link: the file holds %q", got)
		}
		if st, _ := os.Lstat(link); st.Mode()&os.ModeSymlink == 0 {
			t.Errorf("the link was replaced by a file")
		}
	}
}

// BenchmarkExportFlush measures what flushing every file to the disk costs
// an export (200 images of 20 kB, copied, per-image XML): "flushed" is the
// real export, "unflushed" the same through a file system whose flushes do
// nothing. Compare the two in one run.
func BenchmarkExportFlush(b *testing.B) {
	src := b.TempDir()
	var imgs []ExportImage
	body := make([]byte, 20000)
	for i := range 200 {
		f := filepath.Join(src, fmt.Sprintf("img%03d.jpg", i))
		os.WriteFile(f, body, 0o644)
		imgs = append(imgs, ExportImage{File: f, Key: f, Record: ImageRecord{Name: filepath.Base(f), Width: 100, Height: 50,
			Boxes: []BoxRecord{{Class: "buoy", Box: project.Box{X0: 1, Y0: 2, X1: 40, Y1: 30}}}}})
	}
	for _, flushed := range []bool{true, false} {
		name := map[bool]string{true: "flushed", false: "unflushed"}[flushed]
		b.Run(name, func(b *testing.B) {
			opts := ExportOptions{Layout: LayoutXML, Ratios: [3]float64{0.8, 0.1, 0.1}, Images: ImagesCopy}
			if !flushed {
				opts.fs = &faultFS{}
			}
			for i := 0; b.Loop(); i++ {
				out := filepath.Join(b.TempDir(), "out")
				if _, err := Export(context.Background(), out, []string{"buoy"}, imgs, opts); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
