package store

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"

	"boxwright/project"
	"boxwright/store/imagefile"
)

// AddImages adds image files, and the image files found in folders
// (recursively), to the project. A file whose bytes are already known adds
// nothing; if the known image's file has gone missing, the image is
// relinked to the new path with its labels. Files that cannot be read, or
// whose pixels do not decode, are skipped, each with its reason in the
// report; only a cancelled context or a
// database failure stops the intake, and every image already added stays.
func (s *Store) AddImages(ctx context.Context, paths []string, opts project.IntakeOptions) (project.IntakeReport, error) {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return project.IntakeReport{}, err
	}
	rep := project.IntakeReport{Failed: []project.IntakeFailure{}}
	if opts.MaxPixels == 0 {
		opts.MaxPixels = imagefile.DefaultMaxPixels
	}
	found, failed := imagefile.Collect(paths)
	files := make([]string, len(found))
	for i, f := range found {
		files[i] = f.Abs
	}
	rep.Failed = append(rep.Failed, failed...)

	type probed struct {
		path string
		info imagefile.Info
		err  error
	}
	// Hashing and decoding run on a few workers; the database is written
	// in file order from this goroutine. Every pixel is decoded
	// (imagefile.Verify): a file whose header and end are intact can still
	// hold damaged data, and it must be refused here, with its reason in
	// the report, not when it is first shown or searched. Relinking only
	// matches files by their bytes, so it reads headers only.
	results := make([]chan probed, len(files))
	for i := range results {
		results[i] = make(chan probed, 1)
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	check := imagefile.Verify
	if opts.RelinkOnly {
		check = imagefile.Probe
	}
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < max(2, runtime.NumCPU()); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				info, err := check(files[i], opts.MaxPixels)
				results[i] <- probed{files[i], info, err}
			}
		}()
	}
	go func() {
		defer close(next)
		for i := range files {
			select {
			case next <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	defer wg.Wait()

	for i := range files {
		var p probed
		select {
		case p = <-results[i]:
		case <-ctx.Done():
			return rep, fmt.Errorf("adding images: %w", ctx.Err())
		}
		if p.err != nil {
			rep.Failed = append(rep.Failed, project.IntakeFailure{Path: p.path, Error: p.err.Error()})
		} else if err := s.intakeOne(ctx, p.path, p.info, opts, &rep); err != nil {
			return rep, fmt.Errorf("adding image %s: %w", p.path, err)
		}
		if opts.Progress != nil {
			opts.Progress(i+1, len(files))
		}
	}
	return rep, nil
}

func (s *Store) intakeOne(ctx context.Context, path string, info imagefile.Info, opts project.IntakeOptions, rep *project.IntakeReport) error {
	rel := s.storedPath(path)
	known, err := s.ImageBySHA256(ctx, info.SHA256)
	switch {
	case err == nil:
		if known.Path == rel {
			rep.Duplicates++
			return nil
		}
		if _, statErr := os.Stat(s.ImagePath(known)); statErr == nil {
			rep.Duplicates++
			return nil
		}
		if err := s.RelinkImage(ctx, known.ID, rel); err != nil {
			return err
		}
		rep.Relinked++
		rep.Relinks = append(rep.Relinks, project.Relink{ImageID: known.ID, OldPath: known.Path})
		return nil
	case !errors.Is(err, project.ErrNotFound):
		return err
	case opts.RelinkOnly:
		return nil
	}
	im, err := s.AddImage(ctx, project.Image{Path: rel, SHA256: info.SHA256, Width: info.Width, Height: info.Height,
		Orientation: info.Orientation, Status: project.StatusNew})
	if err != nil {
		return err
	}
	rep.Added++
	rep.AddedIDs = append(rep.AddedIDs, im.ID)
	return nil
}

// collectFiles expands folders into the image files under them, sorted.
// Files named explicitly are taken whatever their extension, so that a
// wrong file gets a reason rather than silence.
// storedPath is the path as recorded: relative to the project folder, with
// forward slashes, when the file lies under it; absolute otherwise.
func (s *Store) storedPath(abs string) string {
	if rel, err := filepath.Rel(s.dir, abs); err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
		return filepath.ToSlash(rel)
	}
	return filepath.ToSlash(abs)
}

// ImagePath is the image's file on this machine.
func (s *Store) ImagePath(im project.Image) string {
	p := filepath.FromSlash(im.Path)
	if filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(s.dir, p)
}

// FetchImage is ImagePath: a file project's images are on this machine
// already (or missing, which opening the file says).
func (s *Store) FetchImage(_ context.Context, im project.Image) (string, error) {
	return s.ImagePath(im), nil
}

// MissingImages lists the images whose files are not where the project
// says.
func (s *Store) MissingImages(ctx context.Context) ([]project.Image, error) {
	all, err := s.Images(ctx)
	if err != nil {
		return nil, err
	}
	var missing []project.Image
	for _, im := range all {
		if _, err := os.Stat(s.ImagePath(im)); err != nil {
			missing = append(missing, im)
		}
	}
	return missing, nil
}

// Relink looks for the files of missing images under dir, matching them by
// the SHA-256 of their bytes, and records their new paths. Nothing new is
// added.
func (s *Store) Relink(ctx context.Context, dir string, opts project.IntakeOptions) (project.IntakeReport, error) {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return project.IntakeReport{}, err
	}
	opts.RelinkOnly = true
	return s.AddImages(ctx, []string{dir}, opts)
}
