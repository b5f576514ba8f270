package postgres

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// The image records of a server project, as in the SQLite file
// (store/images.go): the same order, statuses and errors. Their bytes are
// in image_contents and image_chunks (see intake.go); their files on
// this machine are in the image cache (imagecache.go).

// furthestImageStatus is an image's status over all annotators: the
// furthest any of them has come (reviewed, done, started), else skipped
// when someone skipped it, else new.
const furthestImageStatus = `coalesce((SELECT CASE max(CASE st.status WHEN 'reviewed' THEN 4 WHEN 'done' THEN 3
	WHEN 'started' THEN 2 WHEN 'skipped' THEN 1 ELSE 0 END)
	WHEN 4 THEN 'reviewed' WHEN 3 THEN 'done' WHEN 2 THEN 'started' WHEN 1 THEN 'skipped' ELSE 'new' END
	FROM image_status st WHERE st.image_id = images.id), 'new')`

// imageStatusOf is an image's status for the annotator given as $1.
const imageStatusOf = `coalesce((SELECT st.status FROM image_status st WHERE st.image_id = images.id AND st.annotator_id = $1), 'new')`

const imageColumns = "id, path, sha256, width, height, orientation, " + furthestImageStatus + ", added_at"

func scanImageRow(row pgx.Row) (project.Image, error) {
	var im project.Image
	var status string
	err := row.Scan(&im.ID, &im.Path, &im.SHA256, &im.Width, &im.Height, &im.Orientation, &status, &im.Added)
	im.Status = project.ImageStatus(status)
	im.Added = im.Added.UTC()
	return im, err
}

// Images lists all images by path; Status is the furthest any annotator
// has come on the image.
func (s *Store) Images(ctx context.Context) ([]project.Image, error) {
	return s.listImages(ctx, "SELECT "+imageColumns+" FROM images ORDER BY path, id")
}

// ImagesFor lists all images by path with Status the given annotator's.
func (s *Store) ImagesFor(ctx context.Context, annotatorID int64) ([]project.Image, error) {
	return s.listImages(ctx, "SELECT id, path, sha256, width, height, orientation, "+imageStatusOf+", added_at FROM images ORDER BY path, id", annotatorID)
}

func (s *Store) listImages(ctx context.Context, query string, args ...any) ([]project.Image, error) {
	rows, err := s.pool.Query(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("list images: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Image, error) { return scanImageRow(r) })
	if err != nil {
		return nil, fmt.Errorf("list images: %w", s.translate(err))
	}
	return out, nil
}

// Image reads one image record.
func (s *Store) Image(ctx context.Context, id int64) (project.Image, error) {
	im, err := scanImageRow(s.pool.QueryRow(ctx, "SELECT "+imageColumns+" FROM images WHERE id = $1", id))
	if err != nil {
		return im, fmt.Errorf("image %d: %w", id, s.translate(err))
	}
	return im, nil
}

// ImageBySHA256 finds the image whose file bytes have this digest.
func (s *Store) ImageBySHA256(ctx context.Context, sum string) (project.Image, error) {
	im, err := scanImageRow(s.pool.QueryRow(ctx, "SELECT "+imageColumns+" FROM images WHERE sha256 = $1", sum))
	if err != nil {
		return im, fmt.Errorf("image with SHA-256 %.12s…: %w", sum, s.translate(err))
	}
	return im, nil
}

// AddImage stores an image record without its bytes (a project copied
// from a file whose image files are not at hand): the image is then
// missing (MissingImages) until Relink or an intake of its file sends the
// bytes. A zero status becomes "new"; another status than new needs an
// annotator and is set with SetImageStatus.
func (s *Store) AddImage(ctx context.Context, im project.Image) (project.Image, error) {
	if im.Status == "" {
		im.Status = project.StatusNew
	}
	if !im.Status.Valid() || im.Width <= 0 || im.Height <= 0 || im.Orientation < 1 || im.Orientation > 8 || len(im.SHA256) != 64 {
		return im, project.Explained(project.ErrInvalid, "add image %s: not a valid image record (status %q, size %dx%d, orientation %d, hash %q)",
			im.Path, im.Status, im.Width, im.Height, im.Orientation, im.SHA256)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, "add image "+im.Path); err != nil {
			return err
		}
		if im.Added.IsZero() {
			return tx.QueryRow(ctx, `INSERT INTO images(path, sha256, width, height, orientation) VALUES ($1, $2, $3, $4, $5) RETURNING id, added_at`,
				im.Path, im.SHA256, im.Width, im.Height, im.Orientation).Scan(&im.ID, &im.Added)
		}
		return tx.QueryRow(ctx, `INSERT INTO images(path, sha256, width, height, orientation, added_at) VALUES ($1, $2, $3, $4, $5, $6) RETURNING id`,
			im.Path, im.SHA256, im.Width, im.Height, im.Orientation, im.Added).Scan(&im.ID)
	})
	if err != nil {
		return im, fmt.Errorf("add image %s: %w", im.Path, err)
	}
	im.Added = im.Added.UTC()
	return im, nil
}

// SetImageStatus records how far an annotator has come on an image; by is
// the annotator who says so (recorded as the reviewer of "reviewed"). The
// server lets a member set only their own statuses, and reviewers others'.
func (s *Store) SetImageStatus(ctx context.Context, imageID, annotatorID int64, st project.ImageStatus, by int64) error {
	what := fmt.Sprintf("set status of image %d for annotator %d", imageID, annotatorID)
	if !st.Valid() {
		return project.Explained(project.ErrInvalid, "%s: unknown status %q", what, st)
	}
	var reviewer any
	if st == project.StatusReviewed && by != 0 {
		reviewer = by
	}
	_, err := s.pool.Exec(ctx, `INSERT INTO image_status(image_id, annotator_id, status, reviewed_by, updated_at) VALUES ($1, $2, $3, $4, now())
		ON CONFLICT (image_id, annotator_id) DO UPDATE SET status = excluded.status, reviewed_by = excluded.reviewed_by,
		updated_at = excluded.updated_at`, imageID, annotatorID, string(st), reviewer)
	if err != nil {
		err = s.translate(err)
		if errors.Is(err, project.ErrInUse) {
			return fmt.Errorf("%s: no such image or annotator: %w", what, project.ErrNotFound)
		}
		return fmt.Errorf("%s: %w", what, err)
	}
	return nil
}

// RelinkImage records a new name for an image. On a server the name is
// only what lists and exports show: the bytes are found by their hash.
func (s *Store) RelinkImage(ctx context.Context, id int64, path string) error {
	return s.changeOneImage(ctx, fmt.Sprintf("rename image %d", id), "UPDATE images SET path = $1 WHERE id = $2", path, id)
}

// DeleteImage removes an image with its labels, suggestions and
// statuses, and its bytes when no other image has them.
func (s *Store) DeleteImage(ctx context.Context, id int64) error {
	return s.changeOneImage(ctx, fmt.Sprintf("delete image %d", id), `WITH d AS (DELETE FROM images WHERE id = $1 RETURNING sha256)
		DELETE FROM image_contents c USING d WHERE c.sha256 = d.sha256`, id)
}

// changeOneImage runs, as an owner, a statement on one image; touching
// nothing is ErrNotFound.
func (s *Store) changeOneImage(ctx context.Context, what, query string, args ...any) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, what); err != nil {
			return err
		}
		var exists bool
		if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM images WHERE id = $1)", args[len(args)-1]).Scan(&exists); err != nil {
			return err
		}
		if !exists {
			return project.ErrNotFound
		}
		_, err := tx.Exec(ctx, query, args...)
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return nil
}

// UndoIntake takes back what an intake did, in one transaction: the
// images it added are deleted with the bytes it sent for them (they have
// no labels yet). Images whose bytes it sent to an existing record keep
// them: the bytes are theirs.
func (s *Store) UndoIntake(ctx context.Context, rep project.IntakeReport) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, "take back the images added"); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, `WITH d AS (DELETE FROM images WHERE id = ANY($1) RETURNING sha256)
			DELETE FROM image_contents c USING d WHERE c.sha256 = d.sha256`, rep.AddedIDs)
		return err
	})
	if err != nil {
		return fmt.Errorf("taking back the images added: %w", err)
	}
	return nil
}

// Thumbnail is the image's small JPEG picture made at intake (longest
// side ThumbnailSide), stored once on the server for everyone; nil for an
// image whose bytes were never sent.
func (s *Store) Thumbnail(ctx context.Context, imageID int64) ([]byte, error) {
	var b []byte
	if err := s.pool.QueryRow(ctx, "SELECT thumbnail FROM images WHERE id = $1", imageID).Scan(&b); err != nil {
		return nil, fmt.Errorf("thumbnail of image %d: %w", imageID, s.translate(err))
	}
	return b, nil
}

// The parts of the domain's storage interface kept in these files.
var (
	_ project.ClassStore     = (*Store)(nil)
	_ project.AnnotatorStore = (*Store)(nil)
	_ project.ImageStore     = (*Store)(nil)
)
