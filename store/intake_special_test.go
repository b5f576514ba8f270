//go:build linux

package store

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"boxwright/project"
)

// Named pipes are never opened (opening one waits for a writer, so intake
// hung), given directly or inside a folder; they, devices and links to
// nothing are skipped with a reason, and a link to an image is followed.
func TestIntakeSkipsPipesAndDanglingLinks(t *testing.T) {
	root := t.TempDir()
	s, err := Create(filepath.Join(root, "p.boxw"))
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	dir := filepath.Join(root, "shots")
	write(t, filepath.Join(dir, "a.jpg"), jpegBytes(t, 64, 48, 1))
	pipe := filepath.Join(dir, "pipe.jpg")
	if err := syscall.Mkfifo(pipe, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	os.Symlink(filepath.Join(dir, "gone.jpg"), filepath.Join(dir, "dangling.jpg"))
	other := filepath.Join(root, "elsewhere", "b.jpg")
	write(t, other, jpegBytes(t, 32, 24, 2))
	os.Symlink(other, filepath.Join(dir, "linked.jpg"))

	done := make(chan struct{})
	var rep project.IntakeReport
	go func() {
		defer close(done)
		rep, err = s.AddImages(context.Background(), []string{dir, pipe, "/dev/zero"}, project.IntakeOptions{})
	}()
	select {
	case <-done:
	case <-time.After(20 * time.Second):
		t.Fatal("intake hangs on a named pipe")
	}
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added != 2 {
		t.Errorf("added %d images, want a.jpg and the linked b.jpg", rep.Added)
	}
	why := map[string]string{}
	for _, f := range rep.Failed {
		why[filepath.Base(f.Path)] += f.Error
	}
	if !strings.Contains(why["pipe.jpg"], "named pipe") || !strings.Contains(why["dangling.jpg"], "link to nothing") || !strings.Contains(why["zero"], "device") {
		t.Errorf("reasons: %v", why)
	}
}
