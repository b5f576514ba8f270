package postgres

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// The image cache: a server project's image bytes, fetched on demand into
// a folder of this machine and kept there, content-addressed, for every
// server project this machine opens (the same image in two projects is
// fetched once). A file is <folder>/<first two hex digits>/<SHA-256>; it
// is written to a temporary file beside it, its SHA-256 checked, then
// renamed into place, so a file under its final name is always whole and
// right. The folder is bounded: past the limit the files used longest
// ago go first (each use sets the file's modification time).

// DefaultImageCacheLimit is the image cache's default bound (2 GiB).
const DefaultImageCacheLimit int64 = 2 << 30

// ImageFetchTimeout bounds the fetch that ImagePath makes (it has no
// context of its own).
var ImageFetchTimeout = 2 * time.Minute

// CacheUse is what the image cache holds, for the settings to show.
type CacheUse struct {
	Dir   string
	Bytes int64
	Files int
	Limit int64
}

type imageCache struct {
	mu       sync.Mutex
	dir      string // "" until first use: the user's cache folder
	limit    int64  // 0: DefaultImageCacheLimit
	known    bool   // bytes and files are counted (a scan was made)
	bytes    int64
	files    int
	inflight map[string]*imageFetch
	failed   map[string]error // by the path ImagePath gave back
}

type imageFetch struct {
	done chan struct{}
	path string
	err  error
}

// SetImageCache sets the folder and the bound of the image cache (0 for
// DefaultImageCacheLimit; "" for the user's cache folder,
// os.UserCacheDir()/boxwright/images). The folder may be shared by
// several projects and programs.
func (s *Store) SetImageCache(dir string, limit int64) {
	c := &s.cache
	c.mu.Lock()
	defer c.mu.Unlock()
	if dir != "" {
		dir, _ = filepath.Abs(dir)
	}
	c.dir, c.limit, c.known = dir, limit, false
}

// cacheDir is the image cache's folder and limit.
func (s *Store) cacheDir() (string, int64) {
	c := &s.cache
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.dir == "" {
		base, err := os.UserCacheDir()
		if err != nil {
			base = filepath.Join(os.TempDir(), "boxwright-cache-"+fmt.Sprint(os.Getuid()))
		}
		c.dir = filepath.Join(base, "boxwright", "images")
	}
	if c.limit <= 0 {
		c.limit = DefaultImageCacheLimit
	}
	return c.dir, c.limit
}

// Dir is the folder of this machine's copies of the images (the image
// cache). A server project's image paths are names, not relative to any
// folder: the bytes are found by their hash.
func (s *Store) Dir() string {
	d, _ := s.cacheDir()
	return d
}

// cachedPath is where the image cache keeps the bytes of this digest.
func (s *Store) cachedPath(sum string) string {
	dir, _ := s.cacheDir()
	if !validDigest(sum) {
		return filepath.Join(dir, "invalid-digest")
	}
	return filepath.Join(dir, sum[:2], sum)
}

func validDigest(sum string) bool {
	if len(sum) != 64 {
		return false
	}
	_, err := hex.DecodeString(sum)
	return err == nil && strings.ToLower(sum) == sum
}

// ImageCacheUse counts what the image cache holds now (a walk of its
// folder, so files that other programs added count too).
func (s *Store) ImageCacheUse() (CacheUse, error) {
	dir, limit := s.cacheDir()
	files, err := scanCache(dir)
	u := CacheUse{Dir: dir, Limit: limit}
	for _, f := range files {
		u.Bytes += f.size
		u.Files++
	}
	if err != nil {
		return u, fmt.Errorf("image cache %s: %w", dir, err)
	}
	s.cache.mu.Lock()
	s.cache.bytes, s.cache.files, s.cache.known = u.Bytes, u.Files, true
	s.cache.mu.Unlock()
	return u, nil
}

// ClearImageCache removes every image file of the cache (they are
// fetched again when next shown).
func (s *Store) ClearImageCache() error {
	dir, _ := s.cacheDir()
	files, err := scanCache(dir)
	for _, f := range files {
		if rmErr := os.Remove(f.path); rmErr != nil && !errors.Is(rmErr, fs.ErrNotExist) && err == nil {
			err = rmErr
		}
	}
	s.cache.mu.Lock()
	s.cache.known = false
	s.cache.mu.Unlock()
	if err != nil {
		return fmt.Errorf("clearing the image cache %s: %w", dir, err)
	}
	return nil
}

// ImagePath is the image's file on this machine, fetched from the server
// into the image cache when it is not there yet (waiting up to
// ImageFetchTimeout). It has no error return: when the fetch fails it
// gives back the path the file would have, which does not exist, so that
// opening it fails with fs.ErrNotExist, and keeps the reason for
// FetchError. A caller that can handle an error calls FetchImage instead.
func (s *Store) ImagePath(im project.Image) string {
	ctx, cancel := context.WithTimeout(context.Background(), ImageFetchTimeout)
	defer cancel()
	p, err := s.FetchImage(ctx, im)
	if err != nil {
		return s.cachedPath(im.SHA256)
	}
	return p
}

// FetchError is why the last fetch of the file at path (as ImagePath gave
// it back) failed; nil when it did not, or was not fetched through this
// store. The message names the image and says what to do.
func (s *Store) FetchError(path string) error {
	s.cache.mu.Lock()
	defer s.cache.mu.Unlock()
	return s.cache.failed[path]
}

// FetchImage is the image's file on this machine: from the image cache,
// or fetched from the server into it. An image whose bytes the server
// does not have complete (MissingImages) fails with an error that wraps
// fs.ErrNotExist; one whose fetched bytes do not have its SHA-256 fails
// and leaves nothing in the cache. Fetches of one image at once share
// one download.
func (s *Store) FetchImage(ctx context.Context, im project.Image) (string, error) {
	if !validDigest(im.SHA256) {
		return "", project.Explained(project.ErrInvalid, "image %s: its SHA-256 %q is not 64 lower-case hex digits", im.Path, im.SHA256)
	}
	final := s.cachedPath(im.SHA256)
	if st, err := os.Stat(final); err == nil && st.Mode().IsRegular() {
		now := time.Now()
		os.Chtimes(final, now, now) // used now: the last to be evicted
		return final, nil
	}
	c := &s.cache
	for {
		c.mu.Lock()
		if c.inflight == nil {
			c.inflight = map[string]*imageFetch{}
			c.failed = map[string]error{}
		}
		f := c.inflight[im.SHA256]
		if f == nil {
			f = &imageFetch{done: make(chan struct{})}
			c.inflight[im.SHA256] = f
			c.mu.Unlock()
			f.path, f.err = s.download(ctx, im, final)
			c.mu.Lock()
			delete(c.inflight, im.SHA256)
			if f.err != nil {
				c.failed[final] = f.err
			} else {
				delete(c.failed, final)
			}
			c.mu.Unlock()
			close(f.done)
			return f.path, f.err
		}
		c.mu.Unlock()
		select {
		case <-f.done:
		case <-ctx.Done():
			return "", fmt.Errorf("image %s: fetching it from %s: %w", im.Path, s.name, ctx.Err())
		}
		// The other fetch gave up with its own context: this one tries.
		if f.err != nil && (errors.Is(f.err, context.Canceled) || errors.Is(f.err, context.DeadlineExceeded)) && ctx.Err() == nil {
			continue
		}
		return f.path, f.err
	}
}

// download streams the image's chunks from the server into a temporary
// file beside final, checks size and SHA-256, and renames it into place.
func (s *Store) download(ctx context.Context, im project.Image, final string) (string, error) {
	fail := func(format string, args ...any) (string, error) {
		return "", fmt.Errorf("image %s: "+format, append([]any{im.Path}, args...)...)
	}
	var size int64
	var chunks int
	var complete bool
	err := s.pool.QueryRow(ctx, "SELECT size, chunks, complete FROM image_contents WHERE sha256 = $1", im.SHA256).Scan(&size, &chunks, &complete)
	if errors.Is(err, pgx.ErrNoRows) || (err == nil && !complete) {
		return fail("its bytes are not on the server %s (an owner sends them with Project ▸ Find moved images… or boxwright relink): %w", s.name, fs.ErrNotExist)
	}
	if err != nil {
		return fail("fetching it from %s: %w", s.name, s.translate(err))
	}
	if err := os.MkdirAll(filepath.Dir(final), 0o755); err != nil {
		return fail("the image cache: %w", err)
	}
	tmp, err := os.CreateTemp(filepath.Dir(final), im.SHA256+".*.part")
	if err != nil {
		return fail("the image cache: %w", err)
	}
	defer func() {
		tmp.Close()
		os.Remove(tmp.Name()) // gone already when renamed
	}()
	h := sha256.New()
	w := io.MultiWriter(tmp, h)
	rows, err := s.pool.Query(ctx, "SELECT n, bytes FROM image_chunks WHERE sha256 = $1 ORDER BY n", im.SHA256)
	if err != nil {
		return fail("fetching it from %s: %w", s.name, s.translate(err))
	}
	var written int64
	next := 0
	for rows.Next() {
		// The raw value is the chunk as it came, without a copy.
		var n int
		if err := rows.Scan(&n, nil); err != nil {
			rows.Close()
			return fail("fetching it from %s: %w", s.name, err)
		}
		if n != next {
			rows.Close()
			return fail("the server's copy lacks part %d of %d; an owner sends the file again with Project ▸ Find moved images…", next+1, chunks)
		}
		b := rows.RawValues()[1]
		if _, err := w.Write(b); err != nil {
			rows.Close()
			return fail("writing it into the image cache: %w", err)
		}
		written += int64(len(b))
		next++
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return fail("fetching it from %s: %w", s.name, s.translate(err))
	}
	if next != chunks || written != size {
		return fail("the server's copy has %d parts and %d bytes, not %d and %d; an owner sends the file again with Project ▸ Find moved images…", next, written, chunks, size)
	}
	if got := hex.EncodeToString(h.Sum(nil)); got != im.SHA256 {
		return fail("the bytes fetched from %s have SHA-256 %.12s…, not the image's %.12s…; the server's copy is damaged", s.name, got, im.SHA256)
	}
	if err := tmp.Sync(); err != nil {
		return fail("writing it into the image cache: %w", err)
	}
	if err := tmp.Close(); err != nil {
		return fail("writing it into the image cache: %w", err)
	}
	if err := os.Rename(tmp.Name(), final); err != nil {
		return fail("writing it into the image cache: %w", err)
	}
	s.cacheAdded(size, final)
	return final, nil
}

// cacheAdded counts a new file and, past the limit, removes the files
// used longest ago (never keep, the one just fetched).
func (s *Store) cacheAdded(size int64, keep string) {
	dir, limit := s.cacheDir()
	c := &s.cache
	c.mu.Lock()
	if c.known {
		c.bytes += size
		c.files++
	}
	over := !c.known || c.bytes > limit
	c.mu.Unlock()
	if !over {
		return
	}
	files, _ := scanCache(dir)
	var total int64
	for _, f := range files {
		total += f.size
	}
	sort.Slice(files, func(i, j int) bool { return files[i].used.Before(files[j].used) })
	n := len(files)
	for _, f := range files {
		if total <= limit {
			break
		}
		if f.path == keep {
			continue
		}
		if os.Remove(f.path) == nil {
			total -= f.size
			n--
		}
	}
	c.mu.Lock()
	c.bytes, c.files, c.known = total, n, true
	c.mu.Unlock()
}

type cachedFile struct {
	path string
	size int64
	used time.Time
}

// scanCache lists the image files of the cache folder, removing the
// temporary files of fetches that stopped more than an hour ago.
func scanCache(dir string) ([]cachedFile, error) {
	subs, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var out []cachedFile
	for _, sub := range subs {
		if !sub.IsDir() || len(sub.Name()) != 2 {
			continue
		}
		entries, err := os.ReadDir(filepath.Join(dir, sub.Name()))
		if err != nil {
			continue
		}
		for _, e := range entries {
			info, err := e.Info()
			if err != nil || !info.Mode().IsRegular() {
				continue
			}
			p := filepath.Join(dir, sub.Name(), e.Name())
			if strings.HasSuffix(e.Name(), ".part") {
				if time.Since(info.ModTime()) > time.Hour {
					os.Remove(p)
				}
				continue
			}
			if validDigest(e.Name()) {
				out = append(out, cachedFile{p, info.Size(), info.ModTime()})
			}
		}
	}
	return out, nil
}
