package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"

	"boxwright/project"
)

// furthestStatus is an image's status over all annotators: the furthest
// any of them has come (reviewed, done, started), else skipped when
// someone skipped it, else new.
const furthestStatus = `coalesce((SELECT CASE max(CASE st.status WHEN 'reviewed' THEN 4 WHEN 'done' THEN 3
	WHEN 'started' THEN 2 WHEN 'skipped' THEN 1 ELSE 0 END)
	WHEN 4 THEN 'reviewed' WHEN 3 THEN 'done' WHEN 2 THEN 'started' WHEN 1 THEN 'skipped' ELSE 'new' END
	FROM image_status st WHERE st.image_id = images.id), 'new')`

// statusOf is an image's status for the annotator given as the first
// query argument.
const statusOf = `coalesce((SELECT st.status FROM image_status st WHERE st.image_id = images.id AND st.annotator_id = ?), 'new')`

const imageCols = "id, path, sha256, width, height, orientation, " + furthestStatus + ", added_at"

func scanImage(row interface{ Scan(...any) error }) (project.Image, error) {
	var im project.Image
	var status, added string
	err := row.Scan(&im.ID, &im.Path, &im.SHA256, &im.Width, &im.Height, &im.Orientation, &status, &added)
	im.Status = project.ImageStatus(status)
	im.Added = parseTime(added)
	return im, err
}

// Images lists all images by path; Status is the furthest any annotator
// has come on the image.
func (s *Store) Images(ctx context.Context) ([]project.Image, error) {
	return s.listImages(ctx, "SELECT "+imageCols+" FROM images ORDER BY path, id")
}

// ImagesFor lists all images by path with Status the given annotator's.
func (s *Store) ImagesFor(ctx context.Context, annotatorID int64) ([]project.Image, error) {
	return s.listImages(ctx, "SELECT id, path, sha256, width, height, orientation, "+statusOf+", added_at FROM images ORDER BY path, id", annotatorID)
}

func (s *Store) listImages(ctx context.Context, query string, args ...any) ([]project.Image, error) {
	rows, err := s.db.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("list images: %w", s.damaged(err))
	}
	defer rows.Close()
	var out []project.Image
	for rows.Next() {
		im, err := scanImage(rows)
		if err != nil {
			return nil, fmt.Errorf("list images: %w", s.damaged(err))
		}
		out = append(out, im)
	}
	return out, s.damaged(rows.Err())
}

// Image reads one image record.
func (s *Store) Image(ctx context.Context, id int64) (project.Image, error) {
	im, err := scanImage(s.db.QueryRowContext(ctx, "SELECT "+imageCols+" FROM images WHERE id = ?", id))
	if err != nil {
		return im, fmt.Errorf("image %d: %w", id, s.translate(err))
	}
	return im, nil
}

// ImageBySHA256 finds the image whose file bytes have this digest.
func (s *Store) ImageBySHA256(ctx context.Context, sum string) (project.Image, error) {
	im, err := scanImage(s.db.QueryRowContext(ctx, "SELECT "+imageCols+" FROM images WHERE sha256 = ?", sum))
	if err != nil {
		return im, fmt.Errorf("image with SHA-256 %.12s…: %w", sum, s.translate(err))
	}
	return im, nil
}

// AddImage stores an image record; a zero status becomes "new".
func (s *Store) AddImage(ctx context.Context, im project.Image) (project.Image, error) {
	if im.Status == "" {
		im.Status = project.StatusNew
	}
	if im.Added.IsZero() {
		im.Added = s.now()
	}
	if !im.Status.Valid() || im.Width <= 0 || im.Height <= 0 || im.Orientation < 1 || im.Orientation > 8 || len(im.SHA256) != 64 {
		return im, project.Explained(project.ErrInvalid, "add image %s: not a valid image record (status %q, size %dx%d, orientation %d, hash %q)",
			im.Path, im.Status, im.Width, im.Height, im.Orientation, im.SHA256)
	}
	res, err := s.exec(ctx, "INSERT INTO images(path, sha256, width, height, orientation, status, added_at) VALUES (?, ?, ?, ?, ?, ?, ?)",
		im.Path, im.SHA256, im.Width, im.Height, im.Orientation, string(im.Status), formatTime(im.Added))
	if err != nil {
		return im, fmt.Errorf("add image %s: %w", im.Path, s.translate(err))
	}
	im.ID, _ = res.LastInsertId()
	return im, nil
}

// SetImageStatus records how far an annotator has come on an image; by is
// the annotator who says so (recorded as the reviewer of "reviewed").
func (s *Store) SetImageStatus(ctx context.Context, imageID, annotatorID int64, st project.ImageStatus, by int64) error {
	what := fmt.Sprintf("set status of image %d for annotator %d", imageID, annotatorID)
	if !st.Valid() {
		return project.Explained(project.ErrInvalid, "%s: unknown status %q", what, st)
	}
	var reviewer any
	if st == project.StatusReviewed && by != 0 {
		reviewer = by
	}
	_, err := s.exec(ctx, `INSERT INTO image_status(image_id, annotator_id, status, reviewed_by, updated_at) VALUES (?, ?, ?, ?, ?)
		ON CONFLICT(image_id, annotator_id) DO UPDATE SET status = excluded.status, reviewed_by = excluded.reviewed_by,
		updated_at = excluded.updated_at`, imageID, annotatorID, string(st), reviewer, formatTime(s.now()))
	if err != nil {
		if errors.Is(s.translate(err), project.ErrInUse) {
			return fmt.Errorf("%s: no such image or annotator: %w", what, project.ErrNotFound)
		}
		return fmt.Errorf("%s: %w", what, s.translate(err))
	}
	return nil
}

// markStarted moves an annotator's status on an image from new to started
// when they store labels there.
func markStarted(ctx context.Context, tx *sql.Tx, imageID, annotatorID int64, now string) error {
	_, err := tx.ExecContext(ctx, `INSERT OR IGNORE INTO image_status(image_id, annotator_id, status, updated_at) VALUES (?, ?, 'started', ?)`,
		imageID, annotatorID, now)
	if err == nil {
		_, err = tx.ExecContext(ctx, `UPDATE image_status SET status = 'started', updated_at = ? WHERE image_id = ? AND annotator_id = ? AND status = 'new'`,
			now, imageID, annotatorID)
	}
	return err
}

// RelinkImage records a new path for an image whose file moved.
func (s *Store) RelinkImage(ctx context.Context, id int64, path string) error {
	return s.updateOne(ctx, fmt.Sprintf("relink image %d", id), "UPDATE images SET path = ? WHERE id = ?", path, id)
}

// DeleteImage removes an image with its labels and suggestions.
func (s *Store) DeleteImage(ctx context.Context, id int64) error {
	return s.updateOne(ctx, fmt.Sprintf("delete image %d", id), "DELETE FROM images WHERE id = ?", id)
}

// UndoIntake takes back what an intake did, in one transaction: the
// images it added are deleted (they have no labels yet) and the images it
// relinked get their old paths back. It is for a command that fails
// after its intake, so that the command leaves nothing behind.
func (s *Store) UndoIntake(ctx context.Context, rep project.IntakeReport) error {
	err := s.tx(ctx, func(tx *sql.Tx) error {
		for _, id := range rep.AddedIDs {
			if _, err := tx.ExecContext(ctx, "DELETE FROM images WHERE id = ?", id); err != nil {
				return err
			}
		}
		for _, r := range rep.Relinks {
			if _, err := tx.ExecContext(ctx, "UPDATE images SET path = ? WHERE id = ?", r.OldPath, r.ImageID); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("taking back the images added: %w", s.translate(err))
	}
	return nil
}

// updateOne runs a statement that must touch exactly one row.
func (s *Store) updateOne(ctx context.Context, what, query string, args ...any) error {
	res, err := s.exec(ctx, query, args...)
	if err != nil {
		return fmt.Errorf("%s: %w", what, s.translate(err))
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("%s: %w", what, project.ErrNotFound)
	}
	return nil
}
