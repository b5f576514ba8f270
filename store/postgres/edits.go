package postgres

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"boxwright/project"
)

// ApplyLabelChange makes a person's edit in one transaction: all of it or
// none. It returns the IDs of the inserted labels in order. An image that
// gets its first label of an annotator moves from "new" to "started" for
// that annotator. A label the server's row-level security keeps from the
// person (another annotator's) fails the edit with ErrNotAllowed rather
// than being silently left alone; a label that does not exist fails it
// with ErrNotFound.
func (s *Store) ApplyLabelChange(ctx context.Context, c project.LabelChange) ([]int64, error) {
	for _, l := range c.Update {
		if err := checkBox(l.Box); err != nil {
			return nil, fmt.Errorf("update label %d: %w", l.ID, err)
		}
	}
	ins := &labelRows{}
	for i, l := range c.Insert {
		if l.Origin == "" {
			l.Origin = project.OriginDrawn
		}
		if !l.Origin.Valid() {
			return nil, project.Explained(project.ErrInvalid, "add label: unknown origin %q", l.Origin)
		}
		if err := checkBox(l.Box); err != nil {
			return nil, fmt.Errorf("add label: %w", err)
		}
		ins.add(fmt.Sprintf("new label %d of %d", i+1, len(c.Insert)), l)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if len(c.Delete) > 0 {
			rows, err := tx.Query(ctx, "DELETE FROM labels WHERE id = ANY($1) RETURNING id", c.Delete)
			if err != nil {
				return fmt.Errorf("delete labels: %w", s.translate(err))
			}
			gone, err := pgx.CollectRows(rows, pgx.RowTo[int64])
			if err != nil {
				return fmt.Errorf("delete labels: %w", s.translate(err))
			}
			if err := s.untouched(ctx, tx, "delete", c.Delete, gone); err != nil {
				return err
			}
		}
		if len(c.Update) > 0 {
			// The last update of a label wins, as when applied one by one.
			last := map[int64]int{}
			for i, l := range c.Update {
				last[l.ID] = i
			}
			var ids, classes []int64
			var x0, y0, x1, y1 []float64
			for i, l := range c.Update {
				if last[l.ID] != i {
					continue
				}
				ids, classes = append(ids, l.ID), append(classes, l.ClassID)
				x0, y0, x1, y1 = append(x0, l.Box.X0), append(y0, l.Box.Y0), append(x1, l.Box.X1), append(y1, l.Box.Y1)
			}
			rows, err := tx.Query(ctx, `UPDATE labels l SET class_id = u.c, x0 = u.x0, y0 = u.y0, x1 = u.x1, y1 = u.y1, updated_at = now()
				FROM unnest($1::bigint[], $2::bigint[], $3::float8[], $4::float8[], $5::float8[], $6::float8[]) AS u(id, c, x0, y0, x1, y1)
				WHERE l.id = u.id RETURNING l.id`, ids, classes, x0, y0, x1, y1)
			if err != nil {
				return fmt.Errorf("update labels: %w", s.translate(err))
			}
			changed, err := pgx.CollectRows(rows, pgx.RowTo[int64])
			if err != nil {
				var pe *pgconn.PgError
				if errors.As(err, &pe) && pe.Code == "23503" {
					return fmt.Errorf("update labels: %s: %w", pe.Detail, project.ErrNotFound)
				}
				return fmt.Errorf("update labels: %w", s.translate(err))
			}
			if err := s.untouched(ctx, tx, "update", ids, changed); err != nil {
				return err
			}
		}
		if ins.len() == 0 {
			return nil
		}
		if err := checkLabelRefs(ctx, tx, c.Insert); err != nil {
			return fmt.Errorf("add label: %w", err)
		}
		if err := ins.insert(ctx, s, tx); err != nil {
			return fmt.Errorf("add label: %w", err)
		}
		return startImages(ctx, s, tx, ins.image, ins.annotator)
	})
	if err != nil {
		return nil, err
	}
	return ins.id, nil
}

// untouched explains the first of the wanted labels that a DELETE or
// UPDATE did not reach: either it does not exist, or row-level security
// kept it from this person (it is another annotator's).
func (s *Store) untouched(ctx context.Context, tx pgx.Tx, verb string, wanted, reached []int64) error {
	done := map[int64]bool{}
	for _, id := range reached {
		done[id] = true
	}
	for _, id := range wanted {
		if done[id] {
			continue
		}
		var owner string
		err := tx.QueryRow(ctx, "SELECT a.name FROM labels l JOIN annotators a ON a.id = l.annotator_id WHERE l.id = $1", id).Scan(&owner)
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("%s label %d: %w", verb, id, project.ErrNotFound)
		}
		if err != nil {
			return fmt.Errorf("%s label %d: %w", verb, id, s.translate(err))
		}
		return project.Explained(project.ErrNotAllowed, "%s label %d: label %d is not yours (it is %s's); you may change only your own labels", verb, id, id, owner)
	}
	return nil
}

// startImages moves each (image, annotator) pair from "new" (or no
// status) to "started".
func startImages(ctx context.Context, s *Store, tx pgx.Tx, images, annotators []int64) error {
	_, err := tx.Exec(ctx, `INSERT INTO image_status(image_id, annotator_id, status)
		SELECT DISTINCT i, a, 'started' FROM unnest($1::bigint[], $2::bigint[]) AS t(i, a)
		ON CONFLICT (image_id, annotator_id) DO UPDATE SET status = 'started', updated_at = now() WHERE image_status.status = 'new'`,
		images, annotators)
	if err != nil {
		return fmt.Errorf("mark images started: %w", s.translate(err))
	}
	return nil
}

// LabelTallies counts labels by image, class and annotator: the figures
// behind the class bar and the image filters.
func (s *Store) LabelTallies(ctx context.Context) ([]project.LabelTally, error) {
	rows, err := s.pool.Query(ctx, "SELECT image_id, class_id, annotator_id, count(*) FROM labels GROUP BY image_id, class_id, annotator_id ORDER BY 1, 2, 3")
	if err != nil {
		return nil, fmt.Errorf("count labels: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.LabelTally, error) {
		var t project.LabelTally
		return t, r.Scan(&t.ImageID, &t.ClassID, &t.AnnotatorID, &t.N)
	})
	if err != nil {
		return nil, fmt.Errorf("count labels: %w", s.translate(err))
	}
	return out, nil
}

// ReplaceAnnotatorLabels swaps all labels of an annotator for new ones in
// one transaction: used for derived annotators such as the consensus,
// which are recomputed rather than edited. Labels of the annotator that
// the person may not delete fail it with ErrNotAllowed.
func (s *Store) ReplaceAnnotatorLabels(ctx context.Context, annotatorID int64, labels []project.Label) error {
	rows := &labelRows{}
	mine := make([]project.Label, 0, len(labels))
	for i, l := range labels {
		if l.Origin == "" {
			l.Origin = project.OriginImported
		}
		if !l.Origin.Valid() {
			return project.Explained(project.ErrInvalid, "replace labels of annotator %d: label %d of %d: unknown origin %q", annotatorID, i+1, len(labels), l.Origin)
		}
		if err := checkBox(l.Box); err != nil {
			return fmt.Errorf("replace labels of annotator %d: label %d of %d: %w", annotatorID, i+1, len(labels), err)
		}
		// Stored as new labels of the annotator, made now, as in the file
		// backend.
		l.AnnotatorID, l.Created, l.SuggestionID = annotatorID, time.Time{}, 0
		mine = append(mine, l)
		rows.add(fmt.Sprintf("label %d of %d", i+1, len(labels)), l)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		var before int
		if err := tx.QueryRow(ctx, "SELECT count(*) FROM labels WHERE annotator_id = $1", annotatorID).Scan(&before); err != nil {
			return s.translate(err)
		}
		tag, err := tx.Exec(ctx, "DELETE FROM labels WHERE annotator_id = $1", annotatorID)
		if err != nil {
			return fmt.Errorf("clear labels of annotator %d: %w", annotatorID, s.translate(err))
		}
		if int(tag.RowsAffected()) < before {
			return project.Explained(project.ErrNotAllowed, "clear labels of annotator %d: %d of its %d labels are not yours to delete", annotatorID, before-int(tag.RowsAffected()), before)
		}
		if err := checkLabelRefs(ctx, tx, mine); err != nil {
			return err
		}
		return rows.insertBulk(ctx, s, tx)
	})
	if err != nil {
		return fmt.Errorf("replace labels of annotator %d (nothing was changed): %w", annotatorID, err)
	}
	return nil
}
