package gui

import (
	"context"
	"image"
	"sync"
	"time"

	"boxwright/canvas"
	"boxwright/project"
	"boxwright/store/imagefile"
)

// imageCache decodes images into pyramids in the background and keeps the
// last few, so that stepping to the next or previous image is immediate.
type imageCache struct {
	mu      sync.Mutex
	entries map[int64]*cacheEntry
	keep    int   // entries kept besides those being decoded
	budget  int64 // bytes of pixels kept at most
	// decode is imagefile.Decode; tests replace it.
	decode func(path string, maxPixels int64) (image.Image, error)
}

type cacheEntry struct {
	done chan struct{}
	pyr  *canvas.Pyramid
	err  error
	used time.Time
}

func newImageCache() *imageCache {
	return &imageCache{entries: map[int64]*cacheEntry{}, keep: 5, budget: 1 << 30,
		decode: func(path string, maxPixels int64) (image.Image, error) {
			img, _, err := imagefile.Decode(path, maxPixels)
			return img, err
		}}
}

// locate finds an image's file on this machine; it runs in the decoding
// goroutine, since a server project may fetch the bytes first.
type locate func() (string, error)

// fileOf is the locate step of an image of st.
func fileOf(st project.ImageStore, im project.Image) locate {
	return func() (string, error) { return st.FetchImage(context.Background(), im) }
}

// start returns the entry for an image, beginning its decode when absent.
func (c *imageCache) start(id int64, where locate) *cacheEntry {
	c.mu.Lock()
	defer c.mu.Unlock()
	e, ok := c.entries[id]
	if ok {
		e.used = time.Now()
		return e
	}
	e = &cacheEntry{done: make(chan struct{}), used: time.Now()}
	c.entries[id] = e
	go func() {
		path, err := where()
		var img image.Image
		if err == nil {
			img, err = c.decode(path, imagefile.DefaultMaxPixels)
		}
		if err == nil {
			// The decoded image is ours alone: level 0 without a copy.
			e.pyr, err = canvas.AdoptPyramid(context.Background(), img)
		}
		c.mu.Lock()
		e.err = err
		if err != nil {
			delete(c.entries, id) // a missing file may turn up later: try again next time
		}
		c.mu.Unlock()
		close(e.done)
		c.trim()
	}()
	return e
}

// Get waits for the image's pyramid (or ctx).
func (c *imageCache) Get(ctx context.Context, id int64, where locate) (*canvas.Pyramid, error) {
	e := c.start(id, where)
	select {
	case <-e.done:
		return e.pyr, e.err
	case <-ctx.Done():
		return nil, ctx.Err()
	}
}

// Ready returns the pyramid at once when it is decoded already.
func (c *imageCache) Ready(id int64) *canvas.Pyramid {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.entries[id]; ok {
		select {
		case <-e.done:
			e.used = time.Now()
			return e.pyr
		default:
		}
	}
	return nil
}

// Prefetch starts decoding an image that will probably be shown next.
func (c *imageCache) Prefetch(id int64, where locate) { c.start(id, where) }

// trim drops the least recently used decoded entries beyond keep or the
// byte budget.
func (c *imageCache) trim() {
	c.mu.Lock()
	defer c.mu.Unlock()
	for {
		var n int
		var bytes int64
		var oldest int64
		var oldestAt time.Time
		for id, e := range c.entries {
			select {
			case <-e.done:
			default:
				continue // still decoding
			}
			n++
			if e.pyr != nil {
				bytes += e.pyr.Bytes()
			}
			if oldestAt.IsZero() || e.used.Before(oldestAt) {
				oldest, oldestAt = id, e.used
			}
		}
		if n <= 1 || (n <= c.keep && bytes <= c.budget) {
			return
		}
		delete(c.entries, oldest)
	}
}

// Clear forgets everything (another project was opened).
func (c *imageCache) Clear() {
	c.mu.Lock()
	c.entries = map[int64]*cacheEntry{}
	c.mu.Unlock()
}
