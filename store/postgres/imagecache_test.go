package postgres

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"boxwright/project"
)

// The image cache holds at most its limit: past it, the files used
// longest ago go first, and a file used again (a cache hit) counts as
// new. ImageCacheUse reports what is there; a fetched copy whose bytes
// are not the image's SHA-256 is refused and leaves nothing; clearing
// empties the cache and the next fetch brings the file back.
func TestImageCacheEvictsLeastRecentlyUsed(t *testing.T) {
	srv, s := imgProject(t)
	dir := t.TempDir()
	var files [4][]byte
	for i := range files {
		files[i] = imgNoisePNG(t, 40, 40, uint64(i)) // each about 6.5 kB
		imgWrite(t, filepath.Join(dir, string(rune('a'+i))+".png"), files[i])
	}
	rep, err := s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 4 {
		t.Fatal(rep, err)
	}
	ims, _ := s.Images(bg) // a, b, c, d
	size := int64(len(files[0]))
	for _, f := range files {
		if int64(len(f)) != size {
			t.Fatalf("test images differ in size: %d and %d", len(f), size)
		}
	}
	cache := t.TempDir()
	s.SetImageCache(cache, 3*size+size/2) // room for three
	fetch := func(i int) string {
		t.Helper()
		time.Sleep(20 * time.Millisecond) // distinct modification times
		p, err := s.FetchImage(bg, ims[i])
		if err != nil {
			t.Fatal(err)
		}
		return p
	}
	pa, pb, pc := fetch(0), fetch(1), fetch(2)
	use, err := s.ImageCacheUse()
	if err != nil || use.Files != 3 || use.Bytes != 3*size || use.Dir != cache || use.Limit != 3*size+size/2 {
		t.Errorf("cache use %+v %v, want 3 files of %d bytes in %s", use, err, 3*size, cache)
	}
	fetch(0) // a is used again: b is now the one used longest ago
	pd := fetch(3)
	exists := func(p string) bool { _, err := os.Stat(p); return err == nil }
	if !exists(pa) || exists(pb) || !exists(pc) || !exists(pd) {
		t.Errorf("after the fourth: a %v b %v c %v d %v; want b evicted only", exists(pa), exists(pb), exists(pc), exists(pd))
	}
	if use, _ := s.ImageCacheUse(); use.Files != 3 || use.Bytes != 3*size {
		t.Errorf("cache use %+v after eviction", use)
	}
	// b comes back when asked for, byte for byte.
	if got, _ := os.ReadFile(fetch(1)); !bytes.Equal(got, files[1]) {
		t.Error("b fetched again differs")
	}

	// Many fetches of one image at once share one download and all get
	// the whole file.
	if err := s.ClearImageCache(); err != nil {
		t.Fatal(err)
	}
	paths := make(chan string, 8)
	for range 8 {
		go func() {
			p, err := s.FetchImage(bg, ims[3])
			if err != nil {
				t.Error(err)
			}
			paths <- p
		}()
	}
	for range 8 {
		if got, _ := os.ReadFile(<-paths); !bytes.Equal(got, files[3]) {
			t.Error("a fetch at the same time as others got other bytes")
		}
	}
	if use, _ := s.ImageCacheUse(); use.Files != 1 {
		t.Errorf("after 8 fetches of one image at once: %+v", use)
	}

	// A damaged copy on the server is refused and nothing is cached.
	if err := s.ClearImageCache(); err != nil {
		t.Fatal(err)
	}
	if use, _ := s.ImageCacheUse(); use.Files != 0 || use.Bytes != 0 {
		t.Errorf("after clearing: %+v", use)
	}
	srv.Exec(t, "harbour", `UPDATE image_chunks SET bytes = decode('00', 'hex') || substring(bytes from 2) WHERE sha256 = '`+ims[2].SHA256+`' AND n = 0`)
	_, err = s.FetchImage(bg, ims[2])
	if err == nil || !strings.Contains(err.Error(), "SHA-256") || !strings.Contains(err.Error(), ims[2].Path) {
		t.Errorf("a damaged server copy: %v", err)
	}
	if errors.Is(err, os.ErrNotExist) {
		t.Errorf("a damaged copy reads as missing: %v", err)
	}
	if use, _ := s.ImageCacheUse(); use.Files != 0 {
		t.Errorf("the damaged copy was cached: %+v", use)
	}
	entries, _ := os.ReadDir(filepath.Join(cache, ims[2].SHA256[:2]))
	if len(entries) != 0 {
		t.Errorf("left in the cache folder: %v", entries)
	}
	// ImagePath keeps the reason for the window.
	p := s.ImagePath(ims[2])
	if ferr := s.FetchError(p); ferr == nil || !strings.Contains(ferr.Error(), "damaged") {
		t.Errorf("FetchError after a damaged fetch: %v", ferr)
	}
}
