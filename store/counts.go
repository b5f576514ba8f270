package store

import (
	"context"
	"fmt"

	"boxwright/project"
)

// Counts summarises the project: images by status, labels by class and by
// annotator, suggestions by state. Every class and annotator appears, with
// zero where it has no labels.
func (s *Store) Counts(ctx context.Context) (project.Counts, error) {
	c := project.Counts{ImagesBy: map[project.ImageStatus]int{}, Suggestions: map[project.SuggestionState]int{}}
	for _, st := range project.ImageStatuses {
		c.ImagesBy[st] = 0
	}
	for _, st := range project.SuggestionStates {
		c.Suggestions[st] = 0
	}
	// One read transaction so that the figures agree with each other.
	tx, done, err := s.readTx(ctx)
	if err != nil {
		return c, s.damaged(fmt.Errorf("count: %w", err))
	}
	defer done()
	grouped := func(q string, put func(key string, n int)) error {
		rows, err := tx.QueryContext(ctx, q)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var k string
			var n int
			if err := rows.Scan(&k, &n); err != nil {
				return err
			}
			put(k, n)
		}
		return rows.Err()
	}
	named := func(q string, out *[]project.NamedCount) error {
		rows, err := tx.QueryContext(ctx, q)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var nc project.NamedCount
			if err := rows.Scan(&nc.ID, &nc.Name, &nc.Count); err != nil {
				return err
			}
			*out = append(*out, nc)
		}
		return rows.Err()
	}
	steps := []error{
		grouped("SELECT "+furthestStatus+" AS s, count(*) FROM images GROUP BY s", func(k string, n int) {
			c.ImagesBy[project.ImageStatus(k)] = n
			c.Images += n
		}),
		grouped("SELECT state, count(*) FROM suggestions GROUP BY state", func(k string, n int) {
			c.Suggestions[project.SuggestionState(k)] = n
		}),
		tx.QueryRowContext(ctx, "SELECT count(*) FROM labels").Scan(&c.Labels),
		named(`SELECT c.id, c.name, count(l.id) FROM classes c LEFT JOIN labels l ON l.class_id = c.id
			GROUP BY c.id ORDER BY c.position, c.id`, &c.LabelsByClass),
		named(`SELECT a.id, a.name, count(l.id) FROM annotators a LEFT JOIN labels l ON l.annotator_id = a.id
			GROUP BY a.id ORDER BY a.name, a.id`, &c.LabelsByAnnotator),
	}
	c.StatusByAnnotator = map[string]map[project.ImageStatus]int{}
	for _, a := range c.LabelsByAnnotator {
		m := map[project.ImageStatus]int{}
		for _, st := range project.ImageStatuses {
			m[st] = 0
		}
		c.StatusByAnnotator[a.Name] = m
	}
	rows, err := tx.QueryContext(ctx, `SELECT a.name, st.status, count(*) FROM image_status st JOIN annotators a ON a.id = st.annotator_id
		GROUP BY a.id, st.status`)
	if err == nil {
		for rows.Next() {
			var name, status string
			var n int
			if err = rows.Scan(&name, &status, &n); err != nil {
				break
			}
			if m := c.StatusByAnnotator[name]; m != nil {
				m[project.ImageStatus(status)] += n
			}
		}
		if err == nil {
			err = rows.Err()
		}
		rows.Close()
	}
	steps = append(steps, err)
	for name, m := range c.StatusByAnnotator {
		touched := 0
		for _, n := range m {
			touched += n
		}
		m[project.StatusNew] += c.Images - touched
		c.StatusByAnnotator[name] = m
	}
	for _, err := range steps {
		if err != nil {
			return c, s.damaged(fmt.Errorf("count: %w", err))
		}
	}
	return c, nil
}

// CountsByImage has the label and pending-suggestion counts of every image
// that has any.
func (s *Store) CountsByImage(ctx context.Context) (map[int64]project.ImageCounts, error) {
	rows, err := s.db.QueryContext(ctx, `SELECT image_id, sum(n_labels), sum(n_pending) FROM (
		SELECT image_id, count(*) AS n_labels, 0 AS n_pending FROM labels GROUP BY image_id
		UNION ALL
		SELECT image_id, 0, count(*) FROM suggestions WHERE state = 'pending' GROUP BY image_id)
		GROUP BY image_id`)
	if err != nil {
		return nil, fmt.Errorf("count per image: %w", s.damaged(err))
	}
	defer rows.Close()
	out := map[int64]project.ImageCounts{}
	for rows.Next() {
		var id int64
		var c project.ImageCounts
		if err := rows.Scan(&id, &c.Labels, &c.Pending); err != nil {
			return nil, fmt.Errorf("count per image: %w", s.damaged(err))
		}
		out[id] = c
	}
	return out, s.damaged(rows.Err())
}
