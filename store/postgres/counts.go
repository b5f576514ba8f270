package postgres

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// Counts summarises the project as the SQLite file does (store/counts.go):
// images by status, labels by class and by annotator, suggestions by
// state; every class and annotator appears, with zero where it has no
// labels. The figures are read in one REPEATABLE READ, read-only
// transaction, so that they agree with each other while the team works.
func (s *Store) Counts(ctx context.Context) (project.Counts, error) {
	c := project.Counts{ImagesBy: map[project.ImageStatus]int{}, Suggestions: map[project.SuggestionState]int{}}
	for _, st := range project.ImageStatuses {
		c.ImagesBy[st] = 0
	}
	for _, st := range project.SuggestionStates {
		c.Suggestions[st] = 0
	}
	type statusRow struct {
		name, status string
		n            int
	}
	var byAnnotator []statusRow
	err := pgx.BeginTxFunc(ctx, s.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
		grouped := func(q string, put func(key string, n int)) error {
			rows, err := tx.Query(ctx, q)
			if err != nil {
				return err
			}
			var k string
			var n int
			_, err = pgx.ForEachRow(rows, []any{&k, &n}, func() error { put(k, n); return nil })
			return err
		}
		named := func(q string, out *[]project.NamedCount) error {
			rows, err := tx.Query(ctx, q)
			if err != nil {
				return err
			}
			*out, err = pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.NamedCount, error) {
				var nc project.NamedCount
				return nc, r.Scan(&nc.ID, &nc.Name, &nc.Count)
			})
			return err
		}
		if err := grouped("SELECT "+furthestImageStatus+" AS s, count(*) FROM images GROUP BY s", func(k string, n int) {
			c.ImagesBy[project.ImageStatus(k)] = n
			c.Images += n
		}); err != nil {
			return err
		}
		if err := grouped("SELECT state, count(*) FROM suggestions GROUP BY state", func(k string, n int) {
			c.Suggestions[project.SuggestionState(k)] = n
		}); err != nil {
			return err
		}
		if err := tx.QueryRow(ctx, "SELECT count(*) FROM labels").Scan(&c.Labels); err != nil {
			return err
		}
		if err := named(`SELECT c.id, c.name, count(l.id) FROM classes c LEFT JOIN labels l ON l.class_id = c.id
			GROUP BY c.id ORDER BY c.position, c.id`, &c.LabelsByClass); err != nil {
			return err
		}
		if err := named(`SELECT a.id, a.name, count(l.id) FROM annotators a LEFT JOIN labels l ON l.annotator_id = a.id
			GROUP BY a.id ORDER BY a.name, a.id`, &c.LabelsByAnnotator); err != nil {
			return err
		}
		rows, err := tx.Query(ctx, `SELECT a.name, st.status, count(*) FROM image_status st JOIN annotators a ON a.id = st.annotator_id
			GROUP BY a.id, st.status`)
		if err != nil {
			return err
		}
		byAnnotator, err = pgx.CollectRows(rows, func(r pgx.CollectableRow) (statusRow, error) {
			var sr statusRow
			return sr, r.Scan(&sr.name, &sr.status, &sr.n)
		})
		return err
	})
	if err != nil {
		return c, fmt.Errorf("count: %w", s.translate(err))
	}
	c.StatusByAnnotator = map[string]map[project.ImageStatus]int{}
	for _, a := range c.LabelsByAnnotator {
		m := map[project.ImageStatus]int{}
		for _, st := range project.ImageStatuses {
			m[st] = 0
		}
		c.StatusByAnnotator[a.Name] = m
	}
	for _, r := range byAnnotator {
		if m := c.StatusByAnnotator[r.name]; m != nil {
			m[project.ImageStatus(r.status)] += r.n
		}
	}
	for _, m := range c.StatusByAnnotator {
		touched := 0
		for _, n := range m {
			touched += n
		}
		m[project.StatusNew] += c.Images - touched
	}
	return c, nil
}

// CountsByImage has the label and pending-suggestion counts of every image
// that has any.
func (s *Store) CountsByImage(ctx context.Context) (map[int64]project.ImageCounts, error) {
	rows, err := s.pool.Query(ctx, `SELECT image_id, sum(n_labels)::bigint, sum(n_pending)::bigint FROM (
		SELECT image_id, count(*) AS n_labels, 0 AS n_pending FROM labels GROUP BY image_id
		UNION ALL
		SELECT image_id, 0, count(*) FROM suggestions WHERE state = 'pending' GROUP BY image_id) per
		GROUP BY image_id`)
	if err != nil {
		return nil, fmt.Errorf("count per image: %w", s.translate(err))
	}
	out := map[int64]project.ImageCounts{}
	var id int64
	var c project.ImageCounts
	if _, err := pgx.ForEachRow(rows, []any{&id, &c.Labels, &c.Pending}, func() error { out[id] = c; return nil }); err != nil {
		return nil, fmt.Errorf("count per image: %w", s.translate(err))
	}
	return out, nil
}
