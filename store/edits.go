package store

import (
	"context"
	"database/sql"
	"fmt"

	"boxwright/project"
)

// ApplyLabelChange makes a person's edit in one transaction: all of it or
// none. It returns the IDs of the inserted labels in order. An image that
// gets its first label of an annotator moves from "new" to "started" for
// that annotator.
func (s *Store) ApplyLabelChange(ctx context.Context, c project.LabelChange) ([]int64, error) {
	var ids []int64
	err := s.tx(ctx, func(tx *sql.Tx) error {
		ids = ids[:0]
		for _, id := range c.Delete {
			res, err := tx.ExecContext(ctx, "DELETE FROM labels WHERE id = ?", id)
			if err != nil {
				return fmt.Errorf("delete label %d: %w", id, s.translate(err))
			}
			if n, _ := res.RowsAffected(); n == 0 {
				return fmt.Errorf("delete label %d: %w", id, project.ErrNotFound)
			}
		}
		now := formatTime(s.now())
		for _, l := range c.Update {
			if err := checkBox(l.Box); err != nil {
				return fmt.Errorf("update label %d: %w", l.ID, err)
			}
			res, err := tx.ExecContext(ctx, "UPDATE labels SET class_id = ?, x0 = ?, y0 = ?, x1 = ?, y1 = ?, updated_at = ? WHERE id = ?",
				l.ClassID, l.Box.X0, l.Box.Y0, l.Box.X1, l.Box.Y1, now, l.ID)
			if err != nil {
				return fmt.Errorf("update label %d: %w", l.ID, missingRef(s.translate(err), fmt.Sprintf("class %d", l.ClassID)))
			}
			if n, _ := res.RowsAffected(); n == 0 {
				return fmt.Errorf("update label %d: %w", l.ID, project.ErrNotFound)
			}
		}
		type key struct{ image, annotator int64 }
		started := map[key]bool{}
		for _, l := range c.Insert {
			out, err := s.insertLabel(ctx, tx, l)
			if err != nil {
				return err
			}
			ids = append(ids, out.ID)
			if k := (key{l.ImageID, l.AnnotatorID}); !started[k] {
				started[k] = true
				if err := markStarted(ctx, tx, l.ImageID, l.AnnotatorID, formatTime(s.now())); err != nil {
					return fmt.Errorf("mark image %d started: %w", l.ImageID, s.translate(err))
				}
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return ids, nil
}

// LabelTallies counts labels by image, class and annotator: the figures
// behind the class bar and the image filters.
func (s *Store) LabelTallies(ctx context.Context) ([]project.LabelTally, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT image_id, class_id, annotator_id, count(*) FROM labels GROUP BY image_id, class_id, annotator_id")
	if err != nil {
		return nil, fmt.Errorf("count labels: %w", s.translate(err))
	}
	defer rows.Close()
	var out []project.LabelTally
	for rows.Next() {
		var t project.LabelTally
		if err := rows.Scan(&t.ImageID, &t.ClassID, &t.AnnotatorID, &t.N); err != nil {
			return nil, fmt.Errorf("count labels: %w", s.damaged(err))
		}
		out = append(out, t)
	}
	return out, s.damaged(rows.Err())
}

// ReplaceAnnotatorLabels swaps all labels of an annotator for new ones in
// one transaction: used for derived annotators such as the consensus,
// which are recomputed rather than edited.
func (s *Store) ReplaceAnnotatorLabels(ctx context.Context, annotatorID int64, labels []project.Label) error {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return err
	}
	return s.bulkTx(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, "DELETE FROM labels WHERE annotator_id = ?", annotatorID); err != nil {
			return fmt.Errorf("clear labels of annotator %d: %w", annotatorID, s.translate(err))
		}
		now := formatTime(s.now())
		ins := newLabelInserter(ctx, tx, annotatorID, project.OriginImported, "", now, now)
		defer ins.close()
		for i, l := range labels {
			if l.Origin == "" {
				l.Origin = project.OriginImported
			}
			if err := checkBox(l.Box); err != nil {
				return fmt.Errorf("label %d of %d: %w", i+1, len(labels), err)
			}
			if err := checkScore(l.Score); err != nil {
				return fmt.Errorf("label %d of %d: %w", i+1, len(labels), err)
			}
			if err := ins.setOrigin(l.Origin, l.Source); err != nil {
				return err
			}
			if err := ins.add(fmt.Sprintf("label %d of %d", i+1, len(labels)), l.ImageID, l.ClassID, l.Box, l.Score); err != nil {
				return err
			}
		}
		return ins.flush()
	})
}
