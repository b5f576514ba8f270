package postgres

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"image/jpeg"
	"io"
	"os"
	"sync"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
	"boxwright/store/imagefile"
)

// Intake: the same as the SQLite file's (store/intake.go), regular files
// only, each decoded whole before it is taken, with the same reasons for
// the files skipped, but the bytes go to the server, content-addressed by
// their SHA-256, streamed from the file in chunks of ChunkSize bytes by
// UploadWorkers files at once.
//
// Each image is all or nothing: its chunks are sent first, each in its own
// statement, under an image_contents row that is not complete; then one
// transaction checks that every chunk is there, marks the content
// complete and inserts the images row with its thumbnail. A stop in
// between (cancelled, cut off) leaves no images row and no complete
// content; the chunks already sent stay, and the next intake of the same
// file sends only the ones missing. Unfinished content that no one has
// touched for a day is removed at the start of an intake.

// ChunkSize is the size of the pieces image bytes are stored in (the last
// piece of an image is shorter). A variable so that tests can make
// multi-chunk images small.
var ChunkSize = 1 << 20

// UploadWorkers is how many files an intake reads and sends at once.
var UploadWorkers = 4

// ThumbnailSide is the longest side of the thumbnails stored at intake:
// twice the image list's 96 pixels, for screens of double density.
const ThumbnailSide = 192

// chunkSent, when set (by tests), is called after each chunk is stored.
var chunkSent func(sha string, n int)

// decodeSlots bounds the full decodes running at once (each holds the
// image's pixels until its thumbnail is made).
var decodeSlots = make(chan struct{}, 2)

// intakeFile is a file an intake takes (imagefile.Collect): Abs the file,
// Name the path recorded, relative to the folder given, from its own name.
type intakeFile = imagefile.Found

type intakeResult struct {
	failure  string // why the file was skipped
	added    int64  // the new image's id
	dup      bool
	relinked *project.Relink
	err      error // stops the intake
}

// AddImages adds image files, and the image files found in folders
// (recursively). A file whose bytes are stored already adds nothing (a
// duplicate); a file whose bytes belong to an image the server lacks the
// bytes of sends them (counted as relinked). Files that cannot be read,
// or whose pixels do not decode, are skipped, each with its reason in the
// report; only a cancelled context or a server failure stops the
// intake, and every image already added stays. Only owners add images.
//
// The path recorded is the file's path from the folder given (with that
// folder's name), or its own name for a file given by itself: the
// uploader's folders mean nothing on the team's machines.
func (s *Store) AddImages(ctx context.Context, paths []string, opts project.IntakeOptions) (project.IntakeReport, error) {
	what := "add images"
	if opts.RelinkOnly {
		what = "send the bytes of missing images"
	}
	if err := s.ownerOnly(ctx, s.pool, what); err != nil {
		return project.IntakeReport{}, err
	}
	rep := project.IntakeReport{Failed: []project.IntakeFailure{}}
	if opts.MaxPixels == 0 {
		opts.MaxPixels = imagefile.DefaultMaxPixels
	}
	if _, err := s.pool.Exec(ctx, `DELETE FROM image_contents c WHERE NOT complete AND touched_at < now() - interval '1 day'
		AND NOT EXISTS (SELECT 1 FROM images i WHERE i.sha256 = c.sha256)`); err != nil {
		return rep, fmt.Errorf("%s: removing unfinished uploads: %w", what, s.translate(err))
	}
	files, failed := imagefile.Collect(paths)
	rep.Failed = append(rep.Failed, failed...)
	// IDs are taken in file order before the parallel uploads, so that
	// images number in the order given whichever upload ends first (as in
	// a project file); a file that is not added leaves a gap.
	ids := make([]int64, len(files))
	if len(files) > 0 {
		rows, err := s.pool.Query(ctx, "SELECT nextval('images_id_seq') FROM generate_series(1, $1)", len(files))
		if err != nil {
			return rep, fmt.Errorf("%s: %w", what, s.translate(err))
		}
		got, err := pgx.CollectRows(rows, pgx.RowTo[int64])
		if err != nil {
			return rep, fmt.Errorf("%s: %w", what, s.translate(err))
		}
		copy(ids, got)
	}

	results := make([]chan intakeResult, len(files))
	for i := range results {
		results[i] = make(chan intakeResult, 1)
	}
	work, cancel := context.WithCancel(ctx)
	defer cancel()
	claims := &hashClaims{m: map[string]chan struct{}{}}
	var wg sync.WaitGroup
	next := make(chan int)
	for range max(1, UploadWorkers) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				results[i] <- s.intakeOne(work, files[i], ids[i], opts, claims)
			}
		}()
	}
	// The workers run at most a few files ahead of the report, so that a
	// cancel stops soon and little is sent after it.
	ahead := make(chan struct{}, 2*max(1, UploadWorkers))
	go func() {
		defer close(next)
		for i := range files {
			select {
			case ahead <- struct{}{}:
			case <-work.Done():
				return
			}
			select {
			case next <- i:
			case <-work.Done():
				return
			}
		}
	}()

	apply := func(path string, r intakeResult) {
		switch {
		case r.failure != "":
			rep.Failed = append(rep.Failed, project.IntakeFailure{Path: path, Error: r.failure})
		case r.added != 0:
			rep.Added++
			rep.AddedIDs = append(rep.AddedIDs, r.added)
		case r.dup:
			rep.Duplicates++
		case r.relinked != nil:
			rep.Relinked++
			rep.Relinks = append(rep.Relinks, *r.relinked)
		}
	}
	// stop ends the intake at file i: the files being worked on finish
	// or give up, and what they stored is in the report.
	stop := func(i int, err error) (project.IntakeReport, error) {
		cancel()
		wg.Wait()
		for j := i; j < len(files); j++ {
			select {
			case r := <-results[j]:
				if r.added != 0 || r.relinked != nil {
					apply(files[j].Abs, r)
				}
			default:
			}
		}
		return rep, err
	}
	for i, f := range files {
		var r intakeResult
		if ctx.Err() != nil {
			return stop(i, fmt.Errorf("adding images: %w", ctx.Err()))
		}
		select {
		case r = <-results[i]:
			<-ahead
		case <-ctx.Done():
			return stop(i, fmt.Errorf("adding images: %w", ctx.Err()))
		}
		if r.err != nil {
			if ctx.Err() != nil {
				r.err = ctx.Err()
			}
			return stop(i+1, fmt.Errorf("adding image %s: %w", f.Abs, r.err))
		}
		apply(f.Abs, r)
		if opts.Progress != nil {
			opts.Progress(i+1, len(files))
		}
	}
	wg.Wait()
	return rep, nil
}

// hashClaims makes two files of one intake with the same bytes take
// turns, so that the bytes are sent once and the second is a duplicate.
type hashClaims struct {
	mu sync.Mutex
	m  map[string]chan struct{}
}

func (h *hashClaims) claim(ctx context.Context, sum string) (release func(), err error) {
	for {
		h.mu.Lock()
		ch, busy := h.m[sum]
		if !busy {
			ch = make(chan struct{})
			h.m[sum] = ch
			h.mu.Unlock()
			return func() {
				h.mu.Lock()
				delete(h.m, sum)
				h.mu.Unlock()
				close(ch)
			}, nil
		}
		h.mu.Unlock()
		select {
		case <-ch:
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	}
}

// intakeOne takes one file: it reads its header and hash, and when the
// server needs its bytes decodes it whole (the same check as the SQLite
// file's Verify), makes its thumbnail and sends it.
func (s *Store) intakeOne(ctx context.Context, f intakeFile, newID int64, opts project.IntakeOptions, claims *hashClaims) intakeResult {
	info, err := imagefile.Probe(f.Abs, opts.MaxPixels)
	if err != nil {
		return intakeResult{failure: err.Error()}
	}
	release, err := claims.claim(ctx, info.SHA256)
	if err != nil {
		return intakeResult{err: err}
	}
	defer release()

	var known *project.Image
	switch im, err := s.ImageBySHA256(ctx, info.SHA256); {
	case err == nil:
		known = &im
	case !errors.Is(err, project.ErrNotFound):
		return intakeResult{err: err}
	case opts.RelinkOnly:
		return intakeResult{}
	}
	if known != nil {
		var complete bool
		err := s.pool.QueryRow(ctx, "SELECT coalesce((SELECT complete FROM image_contents WHERE sha256 = $1), false)", info.SHA256).Scan(&complete)
		if err != nil {
			return intakeResult{err: s.translate(err)}
		}
		if complete {
			return intakeResult{dup: true}
		}
	}

	thumb, info, err := decodeWithThumbnail(f.Abs, opts.MaxPixels, info)
	if err != nil {
		return intakeResult{failure: err.Error()}
	}
	if why, err := s.sendContent(ctx, f.Abs, info); err != nil || why != "" {
		return intakeResult{failure: why, err: err}
	}
	var res intakeResult
	err = s.tx(ctx, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, `UPDATE image_contents c SET complete = true WHERE sha256 = $1 AND size = $2
			AND chunks = (SELECT count(*) FROM image_chunks k WHERE k.sha256 = c.sha256)
			AND size = (SELECT coalesce(sum(length(bytes)), 0) FROM image_chunks k WHERE k.sha256 = c.sha256)`, info.SHA256, info.Size)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 0 {
			var done bool
			tx.QueryRow(ctx, "SELECT coalesce((SELECT complete FROM image_contents WHERE sha256 = $1), false)", info.SHA256).Scan(&done)
			if !done {
				return fmt.Errorf("the server does not have all of its bytes after sending them (another client may have removed them); add it again")
			}
		}
		if known != nil {
			if _, err := tx.Exec(ctx, "UPDATE images SET thumbnail = coalesce(thumbnail, $2) WHERE id = $1", known.ID, thumb); err != nil {
				return err
			}
			res.relinked = &project.Relink{ImageID: known.ID, OldPath: known.Path}
			return nil
		}
		var id int64
		err = tx.QueryRow(ctx, `INSERT INTO images(id, path, sha256, width, height, orientation, thumbnail) VALUES ($7, $1, $2, $3, $4, $5, $6)
			ON CONFLICT (sha256) DO NOTHING RETURNING id`, f.Name, info.SHA256, info.Width, info.Height, info.Orientation, thumb, newID).Scan(&id)
		switch {
		case errors.Is(err, pgx.ErrNoRows):
			res.dup = true // another client added it in between
			return nil
		case err != nil:
			return err
		}
		res.added = id
		return nil
	})
	if err != nil {
		return intakeResult{err: err}
	}
	return res
}

// decodeWithThumbnail decodes the whole image (refusing damaged pixel
// data, as the SQLite file's intake does) and encodes its thumbnail as a
// JPEG, with the orientation applied.
func decodeWithThumbnail(path string, maxPixels int64, probed imagefile.Info) ([]byte, imagefile.Info, error) {
	decodeSlots <- struct{}{}
	img, info, err := imagefile.Decode(path, maxPixels)
	<-decodeSlots
	if err != nil {
		return nil, info, err
	}
	if info.SHA256 != probed.SHA256 {
		return nil, info, fmt.Errorf("%s: the file changed while it was being added; add it again when it is complete", path)
	}
	var b bytes.Buffer
	if err := jpeg.Encode(&b, imagefile.Thumbnail(img, ThumbnailSide), &jpeg.Options{Quality: 80}); err != nil {
		return nil, info, fmt.Errorf("%s: making its thumbnail: %w", path, err)
	}
	return b.Bytes(), info, nil
}

// sendContent streams the file's bytes to the server in chunks, sending
// only the chunks an earlier, unfinished upload did not. It hashes what
// it reads: bytes that are not the ones probed (the file changed) are a
// reason to skip the file, and what was sent of them is removed.
func (s *Store) sendContent(ctx context.Context, path string, info imagefile.Info) (skip string, err error) {
	size := int64(ChunkSize)
	n := int((info.Size + size - 1) / size)
	sum := info.SHA256
	have := map[int]bool{}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		var oldSize int64
		var oldChunks int
		var complete bool
		err := tx.QueryRow(ctx, `INSERT INTO image_contents(sha256, size, chunks) VALUES ($1, $2, $3)
			ON CONFLICT (sha256) DO UPDATE SET touched_at = now() RETURNING size, chunks, complete`, sum, info.Size, n).Scan(&oldSize, &oldChunks, &complete)
		if err != nil {
			return err
		}
		if complete {
			for i := range n {
				have[i] = true
			}
			return nil
		}
		if oldSize != info.Size || oldChunks != n {
			// Left by an upload in other chunk sizes: start again.
			if _, err := tx.Exec(ctx, "DELETE FROM image_chunks WHERE sha256 = $1", sum); err != nil {
				return err
			}
			_, err := tx.Exec(ctx, "UPDATE image_contents SET size = $2, chunks = $3 WHERE sha256 = $1", sum, info.Size, n)
			return err
		}
		rows, err := tx.Query(ctx, "SELECT n FROM image_chunks WHERE sha256 = $1", sum)
		if err != nil {
			return err
		}
		done, err := pgx.CollectRows(rows, pgx.RowTo[int32])
		for _, k := range done {
			have[int(k)] = true
		}
		return err
	})
	if err != nil {
		return "", s.translate(err)
	}
	file, err := os.Open(path)
	if err != nil {
		return fmt.Sprintf("%s: %v", path, err), nil
	}
	defer file.Close()
	h := sha256.New()
	buf := make([]byte, ChunkSize)
	for i := range n {
		k, err := io.ReadFull(file, buf)
		if err != nil && !(errors.Is(err, io.ErrUnexpectedEOF) && i == n-1) {
			s.dropUnfinished(sum)
			return fmt.Sprintf("%s: the file changed while it was being added (%v); add it again when it is complete", path, err), nil
		}
		h.Write(buf[:k])
		if have[i] {
			continue
		}
		if _, err := s.pool.Exec(ctx, "INSERT INTO image_chunks(sha256, n, bytes) VALUES ($1, $2, $3) ON CONFLICT (sha256, n) DO NOTHING", sum, i, buf[:k]); err != nil {
			return "", s.translate(err)
		}
		if chunkSent != nil {
			chunkSent(sum, i)
		}
	}
	if k, _ := file.Read(buf[:1]); k > 0 || hex.EncodeToString(h.Sum(nil)) != sum {
		s.dropUnfinished(sum)
		return fmt.Sprintf("%s: the file changed while it was being added; add it again when it is complete", path), nil
	}
	return "", nil
}

// dropUnfinished removes the unfinished content of a digest (its chunks
// go with it), whatever the caller's context.
func (s *Store) dropUnfinished(sum string) {
	s.pool.Exec(context.Background(), "DELETE FROM image_contents WHERE sha256 = $1 AND NOT complete", sum)
}

// MissingImages lists the images whose bytes the server does not have
// complete (an image record copied from a file without its image file).
func (s *Store) MissingImages(ctx context.Context) ([]project.Image, error) {
	return s.listImages(ctx, "SELECT "+imageColumns+` FROM images
		WHERE NOT EXISTS (SELECT 1 FROM image_contents c WHERE c.sha256 = images.sha256 AND c.complete) ORDER BY path, id`)
}

// Relink looks under dir for the files of missing images, matching them
// by the SHA-256 of their bytes, and sends their bytes. Nothing new is
// added, and the images keep their names.
func (s *Store) Relink(ctx context.Context, dir string, opts project.IntakeOptions) (project.IntakeReport, error) {
	opts.RelinkOnly = true
	return s.AddImages(ctx, []string{dir}, opts)
}
