package postgres

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// Change is one announced change: a table touched on an image, by an
// annotator (0 for tables without one, such as suggestions). Table "*"
// means anything may have changed (notifications were missed while the
// connection was down, or only polling works).
type Change struct {
	Table       string `json:"t"`
	ImageID     int64  `json:"i"`
	AnnotatorID int64  `json:"a"`
}

// Everything is the Change that asks for reading everything again.
var Everything = Change{Table: "*"}

// PollEvery is how often Watch looks for changes when notifications
// cannot be had; with notifications, changes arrive within milliseconds.
var PollEvery = 2 * time.Second

// Watch delivers the changes committed by anyone (this client too) until
// ctx ends, as they arrive (a caller that redraws gathers them first). It
// listens on a connection of its own (LISTEN boxwright). Once listening
// has begun it delivers Everything, for what was committed before; when
// the connection is cut it delivers Everything again once it is back
// (what was announced meanwhile is lost), and while it cannot listen it
// polls a fingerprint of the tables every PollEvery.
func (s *Store) Watch(ctx context.Context, deliver func([]Change)) error {
	// What was committed between the caller's reading and the first
	// LISTEN is not announced to it: it hears Everything first as well.
	missed, failures := true, 0
	var last string
	for ctx.Err() == nil {
		heard := false
		s.listen(ctx, missed, deliver, func() { heard, failures = true, 0 })
		if ctx.Err() != nil {
			break
		}
		// Cut off, or LISTEN refused (a pooler in front of the server):
		// try again soon, and meanwhile poll the fingerprint.
		missed = true
		if !heard {
			failures++
		}
		wait := min(time.Duration(1<<min(failures, 5))*100*time.Millisecond, PollEvery)
		select {
		case <-ctx.Done():
		case <-time.After(wait):
		}
		if fp, err := s.fingerprint(ctx); err == nil && failures >= 3 && fp != last {
			if last != "" {
				deliver([]Change{Everything})
			}
			last = fp
		}
	}
	return ctx.Err()
}

// listen delivers notifications until the connection fails; up is told
// once listening works.
func (s *Store) listen(ctx context.Context, missed bool, deliver func([]Change), up func()) error {
	// A connection of its own, not the pool's: it waits for as long as
	// the window is open, and is closed rather than reused after a cut.
	conn, err := pgx.ConnectConfig(ctx, s.pool.Config().ConnConfig.Copy())
	if err != nil {
		return err
	}
	defer conn.Close(context.Background())
	if _, err := conn.Exec(ctx, "LISTEN boxwright"); err != nil {
		return err
	}
	up()
	if missed {
		deliver([]Change{Everything})
	}
	for {
		n, err := conn.WaitForNotification(ctx)
		if err != nil {
			return err
		}
		deliver([]Change{parseChange(n.Payload)})
	}
}

func parseChange(payload string) Change {
	var c Change
	if json.Unmarshal([]byte(payload), &c) != nil || c.Table == "" {
		return Everything
	}
	return c
}

// fingerprint changes whenever a row of the watched tables is added,
// changed (their times move) or deleted (their counts fall).
func (s *Store) fingerprint(ctx context.Context) (string, error) {
	var fp string
	err := s.pool.QueryRow(ctx, `SELECT concat_ws('/',
		(SELECT count(*) || ':' || coalesce(max(updated_at)::text, '') FROM labels),
		(SELECT count(*) || ':' || coalesce(max(updated_at)::text, '') FROM image_status),
		(SELECT count(*) || ':' || coalesce(max(coalesce(reviewed_at, created_at))::text, '') FROM suggestions),
		(SELECT count(*) || ':' || coalesce(max(expires_at)::text, '') FROM claims))`).Scan(&fp)
	return fp, s.translate(err)
}

// ClaimLasts is how long a claim holds without being renewed: the window
// renews it while its holder works on the image.
var ClaimLasts = 10 * time.Minute

// Claim is a live "I am labelling this image".
type Claim struct {
	ImageID, AnnotatorID int64
	Annotator            string
	Since, Until         time.Time
}

// Claim marks the image as being labelled by the annotator (or renews
// the claim) and returns the other live claims on it, so that the person
// can be told who else is on it. Only one's own claims can be made.
func (s *Store) Claim(ctx context.Context, imageID, annotatorID int64) ([]Claim, error) {
	_, err := s.pool.Exec(ctx, `INSERT INTO claims(image_id, annotator_id, expires_at) VALUES ($1, $2, now() + $3::interval)
		ON CONFLICT (image_id, annotator_id) DO UPDATE SET expires_at = EXCLUDED.expires_at`,
		imageID, annotatorID, fmt.Sprintf("%d milliseconds", ClaimLasts.Milliseconds()))
	if err != nil {
		return nil, fmt.Errorf("claim image %d: %w", imageID, s.translate(err))
	}
	all, err := s.claims(ctx, "AND c.image_id = $1 AND c.annotator_id <> $2", imageID, annotatorID)
	if err != nil {
		return nil, fmt.Errorf("claim image %d: %w", imageID, err)
	}
	return all, nil
}

// Release ends the annotator's claim on the image.
func (s *Store) Release(ctx context.Context, imageID, annotatorID int64) error {
	_, err := s.pool.Exec(ctx, "DELETE FROM claims WHERE image_id = $1 AND annotator_id = $2", imageID, annotatorID)
	if err != nil {
		return fmt.Errorf("release image %d: %w", imageID, s.translate(err))
	}
	return nil
}

// Claims lists the live claims, by image.
func (s *Store) Claims(ctx context.Context) ([]Claim, error) {
	return s.claims(ctx, "")
}

func (s *Store) claims(ctx context.Context, where string, args ...any) ([]Claim, error) {
	rows, err := s.pool.Query(ctx, `SELECT c.image_id, c.annotator_id, a.name, c.claimed_at, c.expires_at
		FROM claims c JOIN annotators a ON a.id = c.annotator_id
		WHERE c.expires_at > now() `+where+` ORDER BY c.image_id, a.name`, args...)
	if err != nil {
		return nil, fmt.Errorf("list claims: %w", s.translate(err))
	}
	cs, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (Claim, error) {
		var c Claim
		err := r.Scan(&c.ImageID, &c.AnnotatorID, &c.Annotator, &c.Since, &c.Until)
		c.Since, c.Until = c.Since.UTC(), c.Until.UTC()
		return c, err
	})
	if err != nil {
		return nil, fmt.Errorf("list claims: %w", s.translate(err))
	}
	return cs, nil
}

// Assign hands the images out to the annotators, each image to k of
// them (project.AssignImages), replacing earlier assignments of those
// images, in one transaction. Only owners assign.
func (s *Store) Assign(ctx context.Context, imageIDs, annotatorIDs []int64, k int) (map[int64][]int64, error) {
	plan, err := project.AssignImages(imageIDs, annotatorIDs, k)
	if err != nil {
		return nil, err
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "DELETE FROM assignments WHERE image_id = ANY($1)", imageIDs); err != nil {
			return err
		}
		// COPY is refused on tables with row-level security: one INSERT
		// of arrays instead.
		ims, anns := make([]int64, 0, len(imageIDs)*k), make([]int64, 0, len(imageIDs)*k)
		for _, im := range imageIDs {
			for _, a := range plan[im] {
				ims, anns = append(ims, im), append(anns, a)
			}
		}
		_, err := tx.Exec(ctx, "INSERT INTO assignments(image_id, annotator_id) SELECT * FROM unnest($1::bigint[], $2::bigint[])", ims, anns)
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("assign %d images: %w", len(imageIDs), err)
	}
	return plan, nil
}

// Assignments lists who each assigned image is handed to.
func (s *Store) Assignments(ctx context.Context) (map[int64][]int64, error) {
	rows, err := s.pool.Query(ctx, "SELECT image_id, annotator_id FROM assignments ORDER BY image_id, annotator_id")
	if err != nil {
		return nil, fmt.Errorf("list assignments: %w", s.translate(err))
	}
	defer rows.Close()
	out := map[int64][]int64{}
	for rows.Next() {
		var im, a int64
		if err := rows.Scan(&im, &a); err != nil {
			return nil, fmt.Errorf("list assignments: %w", s.translate(err))
		}
		out[im] = append(out[im], a)
	}
	return out, s.translate(rows.Err())
}
