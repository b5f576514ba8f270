package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"boxwright/project"
)

const labelCols = "id, image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at"

func scanLabel(row interface{ Scan(...any) error }) (project.Label, error) {
	var l project.Label
	var origin, created, updated string
	var sug sql.NullInt64
	err := row.Scan(&l.ID, &l.ImageID, &l.ClassID, &l.AnnotatorID, &l.Box.X0, &l.Box.Y0, &l.Box.X1, &l.Box.Y1,
		&origin, &l.Source, &l.Score, &sug, &created, &updated)
	l.Origin = project.Origin(origin)
	l.SuggestionID = sug.Int64
	l.Created, l.Updated = parseTime(created), parseTime(updated)
	return l, err
}

// Labels lists labels matching the filter, ordered by image then id.
func (s *Store) Labels(ctx context.Context, f project.LabelFilter) ([]project.Label, error) {
	var where []string
	var args []any
	if f.ImageID != 0 {
		where, args = append(where, "image_id = ?"), append(args, f.ImageID)
	}
	if f.AnnotatorID != 0 {
		where, args = append(where, "annotator_id = ?"), append(args, f.AnnotatorID)
	}
	if f.ClassID != 0 {
		where, args = append(where, "class_id = ?"), append(args, f.ClassID)
	}
	q := "SELECT " + labelCols + " FROM labels"
	if len(where) > 0 {
		q += " WHERE " + strings.Join(where, " AND ")
	}
	rows, err := s.db.QueryContext(ctx, q+" ORDER BY image_id, id", args...)
	if err != nil {
		return nil, fmt.Errorf("list labels: %w", s.damaged(err))
	}
	defer rows.Close()
	var out []project.Label
	for rows.Next() {
		l, err := scanLabel(rows)
		if err != nil {
			return nil, fmt.Errorf("list labels: %w", s.damaged(err))
		}
		out = append(out, l)
	}
	return out, s.damaged(rows.Err())
}

// Label reads one label.
func (s *Store) Label(ctx context.Context, id int64) (project.Label, error) {
	l, err := scanLabel(s.db.QueryRowContext(ctx, "SELECT "+labelCols+" FROM labels WHERE id = ?", id))
	if err != nil {
		return l, fmt.Errorf("label %d: %w", id, s.translate(err))
	}
	return l, nil
}

// missingRef turns the refusal of a foreign key on an insert or update
// (translated as ErrInUse, which is what it means on a delete) into
// ErrNotFound naming what does not exist: a label or suggestion that
// points at a missing image, class or annotator refers to nothing, it is
// not "still in use".
func missingRef(err error, what string) error {
	if errors.Is(err, project.ErrInUse) {
		return fmt.Errorf("%s does not exist: %w", what, project.ErrNotFound)
	}
	return err
}

// checkScore refuses a score that is not a finite number: SQLite would
// turn NaN into a NOT NULL failure and keep infinities, which no
// statistic can use.
func checkScore(v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return project.Explained(project.ErrInvalid, "score %v is not a finite number", v)
	}
	return nil
}

func checkBox(b project.Box) error {
	if !b.Valid() {
		return project.Explained(project.ErrInvalid, "box %v has no area or a non-finite coordinate", b)
	}
	return nil
}

// AddLabel stores a new label; a zero origin becomes "drawn".
func (s *Store) AddLabel(ctx context.Context, l project.Label) (project.Label, error) {
	var out project.Label
	err := s.tx(ctx, func(tx *sql.Tx) error {
		var err error
		out, err = s.insertLabel(ctx, tx, l)
		return err
	})
	return out, err
}

// AddLabels stores a batch of labels in one transaction: all or none.
func (s *Store) AddLabels(ctx context.Context, ls []project.Label) error {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return err
	}
	return s.tx(ctx, func(tx *sql.Tx) error {
		for _, l := range ls {
			if _, err := s.insertLabel(ctx, tx, l); err != nil {
				return err
			}
		}
		return nil
	})
}

func (s *Store) insertLabel(ctx context.Context, tx *sql.Tx, l project.Label) (project.Label, error) {
	if l.Origin == "" {
		l.Origin = project.OriginDrawn
	}
	if !l.Origin.Valid() {
		return l, project.Explained(project.ErrInvalid, "add label: unknown origin %q", l.Origin)
	}
	if err := checkBox(l.Box); err != nil {
		return l, fmt.Errorf("add label: %w", s.damaged(err))
	}
	if err := checkScore(l.Score); err != nil {
		return l, fmt.Errorf("add label: %w", err)
	}
	now := s.now()
	if l.Created.IsZero() {
		l.Created = now
	}
	l.Updated = now
	var sug any
	if l.SuggestionID != 0 {
		sug = l.SuggestionID
	}
	res, err := tx.ExecContext(ctx, "INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)",
		l.ImageID, l.ClassID, l.AnnotatorID, l.Box.X0, l.Box.Y0, l.Box.X1, l.Box.Y1, string(l.Origin), l.Source, l.Score, sug,
		formatTime(l.Created), formatTime(l.Updated))
	if err != nil {
		err = s.translate(err)
		if strings.Contains(err.Error(), "FOREIGN KEY") {
			return l, fmt.Errorf("add label: image %d, class %d or annotator %d does not exist: %w", l.ImageID, l.ClassID, l.AnnotatorID, project.ErrNotFound)
		}
		return l, fmt.Errorf("add label: %w", s.damaged(err))
	}
	l.ID, _ = res.LastInsertId()
	return l, nil
}

// UpdateLabel changes a label's box and class.
func (s *Store) UpdateLabel(ctx context.Context, l project.Label) error {
	if err := checkBox(l.Box); err != nil {
		return fmt.Errorf("update label %d: %w", l.ID, err)
	}
	return s.updateOne(ctx, fmt.Sprintf("update label %d", l.ID),
		"UPDATE labels SET class_id = ?, x0 = ?, y0 = ?, x1 = ?, y1 = ?, updated_at = ? WHERE id = ?",
		l.ClassID, l.Box.X0, l.Box.Y0, l.Box.X1, l.Box.Y1, formatTime(s.now()), l.ID)
}

// DeleteLabel removes one label.
func (s *Store) DeleteLabel(ctx context.Context, id int64) error {
	return s.updateOne(ctx, fmt.Sprintf("delete label %d", id), "DELETE FROM labels WHERE id = ?", id)
}

// BoxesByImage reads the boxes of the given annotators (all when none are
// given), grouped by image in image order, each image's boxes in the order
// they were stored. Only what agreement and evaluation need is read, in
// parallel over ranges of rows, so that a million boxes stay quick.
func (s *Store) BoxesByImage(ctx context.Context, annotatorIDs []int64) ([]project.ImageBoxes, error) {
	var lo, hi sql.NullInt64
	// Two subqueries: SQLite answers a lone min() or max() of the key
	// from the end of the table, but both in one SELECT by reading every row.
	if err := s.db.QueryRowContext(ctx, "SELECT (SELECT min(id) FROM labels), (SELECT max(id) FROM labels)").Scan(&lo, &hi); err != nil {
		return nil, fmt.Errorf("read boxes: %w", s.translate(err))
	}
	if !lo.Valid {
		return nil, nil
	}
	parts := min(runtime.NumCPU(), 8)
	span := (hi.Int64 - lo.Int64 + int64(parts)) / int64(parts)
	out := make([][]project.ImageBoxes, parts)
	errs := make([]error, parts)
	var wg sync.WaitGroup
	for p := 0; p < parts; p++ {
		from := lo.Int64 + int64(p)*span
		wg.Add(1)
		go func() {
			defer wg.Done()
			out[p], errs[p] = s.boxesIn(ctx, annotatorIDs, from, from+span-1)
		}()
	}
	wg.Wait()
	// An image's rows may lie in more than one range: merge by image.
	at := map[int64]int{}
	var all []project.ImageBoxes
	for p := range out {
		if errs[p] != nil {
			return nil, errs[p]
		}
		for _, ib := range out[p] {
			if i, ok := at[ib.ImageID]; ok {
				all[i].Boxes = append(all[i].Boxes, ib.Boxes...)
				continue
			}
			at[ib.ImageID] = len(all)
			all = append(all, ib)
		}
	}
	sort.Slice(all, func(i, j int) bool { return all[i].ImageID < all[j].ImageID })
	return all, nil
}

func (s *Store) boxesIn(ctx context.Context, annotatorIDs []int64, from, to int64) ([]project.ImageBoxes, error) {
	// A range of rows read in table order: sequential reads beat an index
	// lookup per row at this size ("+annotator_id" keeps the annotator
	// index out of it).
	q := "SELECT image_id, annotator_id, class_id, x0, y0, x1, y1 FROM labels WHERE id BETWEEN ? AND ?"
	args := []driver.NamedValue{{Ordinal: 1, Value: from}, {Ordinal: 2, Value: to}}
	if len(annotatorIDs) > 0 {
		q += " AND +annotator_id IN (?" + strings.Repeat(",?", len(annotatorIDs)-1) + ")"
		for _, id := range annotatorIDs {
			args = append(args, driver.NamedValue{Ordinal: len(args) + 1, Value: id})
		}
	}
	conn, err := s.db.Conn(ctx)
	if err != nil {
		return nil, fmt.Errorf("read boxes: %w", s.translate(err))
	}
	defer conn.Close()
	var rows []project.BoxRow
	var images []int64 // image of each run of rows, and where it starts
	var starts []int
	err = conn.Raw(func(dc any) error {
		qc, ok := dc.(driver.QueryerContext)
		if !ok {
			return fmt.Errorf("the SQLite driver (%T) cannot query", dc)
		}
		// Rows are stepped through the driver itself: database/sql's
		// locking and conversion per value cost more than SQLite's own
		// reading. The query runs without the context's cancellation
		// (which would cost a lock per row in the driver); it is looked at
		// every few thousand rows instead.
		rs, err := qc.QueryContext(context.WithoutCancel(ctx), q, args)
		if err != nil {
			return err
		}
		defer rs.Close()
		rows = make([]project.BoxRow, 0, min(to-from+1, 1<<16))
		dest := make([]driver.Value, 7)
		last := int64(0)
		for n := 0; ; n++ {
			if n%4096 == 0 {
				if err := ctx.Err(); err != nil {
					return err
				}
			}
			if err := rs.Next(dest); err != nil {
				if err == io.EOF {
					return nil
				}
				return err
			}
			img, b, err := boxRow(dest)
			if err != nil {
				return fmt.Errorf("a label of image %v: %w", dest[0], err)
			}
			if len(images) == 0 || img != last {
				images, starts, last = append(images, img), append(starts, len(rows)), img
			}
			rows = append(rows, b)
		}
	})
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		return nil, fmt.Errorf("read boxes: %w", s.damaged(s.translate(err)))
	}
	// Each image's boxes share the one array, capped so that appending to
	// one image's boxes cannot overwrite the next image's.
	out := make([]project.ImageBoxes, len(images))
	starts = append(starts, len(rows))
	for i, img := range images {
		out[i] = project.ImageBoxes{ImageID: img, Boxes: rows[starts[i]:starts[i+1]:starts[i+1]]}
	}
	return out, nil
}

// boxRow reads image_id, annotator_id, class_id, x0, y0, x1, y1; the
// error names the first column that is not what it should be.
func boxRow(v []driver.Value) (img int64, b project.BoxRow, err error) {
	var ok [7]bool
	img, ok[0] = v[0].(int64)
	b.AnnotatorID, ok[1] = v[1].(int64)
	b.ClassID, ok[2] = v[2].(int64)
	b.Box.X0, ok[3] = v[3].(float64)
	b.Box.Y0, ok[4] = v[4].(float64)
	b.Box.X1, ok[5] = v[5].(float64)
	b.Box.Y1, ok[6] = v[6].(float64)
	if ok == [7]bool{true, true, true, true, true, true, true} {
		return img, b, nil
	}
	// Not the types the schema gives: convert as database/sql would.
	ints := [...]*int64{&img, &b.AnnotatorID, &b.ClassID}
	for i, name := range [...]string{"image_id", "annotator_id", "class_id"} {
		if *ints[i], err = intValue(v[i], name); err != nil {
			return
		}
	}
	floats := [...]*float64{&b.Box.X0, &b.Box.Y0, &b.Box.X1, &b.Box.Y1}
	for i, name := range [...]string{"x0", "y0", "x1", "y1"} {
		if *floats[i], err = floatValue(v[3+i], name); err != nil {
			return
		}
	}
	return
}

// intValue and floatValue read a column as database/sql's Scan would
// into an int64 or a float64, refusing what it would refuse.
func intValue(v driver.Value, col string) (int64, error) {
	switch x := v.(type) {
	case int64:
		return x, nil
	case float64:
		if i := int64(x); float64(i) == x {
			return i, nil
		}
	case string:
		if i, err := strconv.ParseInt(x, 10, 64); err == nil {
			return i, nil
		}
	case []byte:
		if i, err := strconv.ParseInt(string(x), 10, 64); err == nil {
			return i, nil
		}
	}
	return 0, fmt.Errorf("%s is %#v, not a whole number: %w", col, v, project.ErrDamaged)
}

func floatValue(v driver.Value, col string) (float64, error) {
	switch x := v.(type) {
	case float64:
		return x, nil
	case int64:
		return float64(x), nil
	case string:
		if f, err := strconv.ParseFloat(x, 64); err == nil {
			return f, nil
		}
	case []byte:
		if f, err := strconv.ParseFloat(string(x), 64); err == nil {
			return f, nil
		}
	}
	return 0, fmt.Errorf("%s is %#v, not a number: %w", col, v, project.ErrDamaged)
}
