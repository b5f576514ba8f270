package demo

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"image/jpeg"
	"os"
	"path/filepath"
	"runtime"
	"sync"
)

// JPEGQuality is the quality WriteImages encodes with: high enough that
// compression artefacts do not move box edges.
const JPEGQuality = 88

// WriteImages renders every frame and writes it into dir (created if
// needed) as a JPEG named Frame.Name, using up to runtime.NumCPU()
// goroutines. It returns the paths in frame order. progress, if not nil,
// is called after each image with the number written so far; calls never
// overlap, but come from the worker goroutines. On cancellation or error
// it stops early and returns the error; images already written stay, and
// no half-written file is left under a frame's name.
func (s *Scenario) WriteImages(ctx context.Context, dir string, progress func(done, total int)) ([]string, error) {
	n := min(len(s.Frames), len(s.scenes))
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("writing demo images to %s: %w", dir, err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("writing demo images: %w", err)
	}
	paths := make([]string, n)
	for i := range n {
		paths[i] = filepath.Join(dir, filepath.Base(s.Frames[i].Name))
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var (
		mu       sync.Mutex
		done     int
		firstErr error
		wg       sync.WaitGroup
	)
	jobs := make(chan int)
	for range max(1, min(runtime.NumCPU(), n)) {
		wg.Go(func() {
			for i := range jobs {
				if ctx.Err() != nil {
					continue
				}
				err := s.writeFrame(i, paths[i])
				mu.Lock()
				if err != nil {
					if firstErr == nil {
						firstErr = err
					}
					cancel()
				} else {
					done++
					if progress != nil {
						progress(done, n)
					}
				}
				mu.Unlock()
			}
		})
	}
feed:
	for i := range n {
		select {
		case jobs <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(jobs)
	wg.Wait()
	if firstErr != nil {
		return nil, firstErr
	}
	if done < n {
		err := context.Cause(ctx)
		if err == nil {
			err = errors.New("stopped early")
		}
		return nil, fmt.Errorf("writing demo images to %s: %w", dir, err)
	}
	return paths, nil
}

// writeFrame renders frame i and writes it to path by way of a temporary
// file, so that an interrupted write never looks like a finished image.
func (s *Scenario) writeFrame(i int, path string) error {
	img := s.Render(i)
	if img == nil {
		return fmt.Errorf("writing %s: frame %d has no layout", path, i)
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), ".demo-*.jpg")
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	defer os.Remove(tmp.Name()) // fails harmlessly once renamed
	bw := bufio.NewWriter(tmp)
	if err := jpeg.Encode(bw, img, &jpeg.Options{Quality: JPEGQuality}); err != nil {
		tmp.Close()
		return fmt.Errorf("encoding %s: %w", path, err)
	}
	if err := bw.Flush(); err != nil {
		tmp.Close()
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}
