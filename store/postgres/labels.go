package postgres

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"boxwright/project"
)

// The parts of project.Store this package's label, review and model
// files implement.
var (
	_ project.LabelStore      = (*Store)(nil)
	_ project.SuggestionStore = (*Store)(nil)
	_ project.ModelStore      = (*Store)(nil)
)

// querier is what a pool and a transaction both offer.
type querier interface {
	Exec(ctx context.Context, sql string, args ...any) (pgconn.CommandTag, error)
	Query(ctx context.Context, sql string, args ...any) (pgx.Rows, error)
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

const labelCols = "id, image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at"

func scanLabel(row pgx.Row) (project.Label, error) {
	var l project.Label
	var origin string
	var sug *int64
	err := row.Scan(&l.ID, &l.ImageID, &l.ClassID, &l.AnnotatorID, &l.Box.X0, &l.Box.Y0, &l.Box.X1, &l.Box.Y1,
		&origin, &l.Source, &l.Score, &sug, &l.Created, &l.Updated)
	l.Origin = project.Origin(origin)
	if sug != nil {
		l.SuggestionID = *sug
	}
	l.Created, l.Updated = l.Created.UTC(), l.Updated.UTC()
	return l, err
}

// Labels lists labels matching the filter, ordered by image then id.
func (s *Store) Labels(ctx context.Context, f project.LabelFilter) ([]project.Label, error) {
	var where []string
	var args []any
	add := func(col string, v int64) {
		args = append(args, v)
		where = append(where, fmt.Sprintf("%s = $%d", col, len(args)))
	}
	if f.ImageID != 0 {
		add("image_id", f.ImageID)
	}
	if f.AnnotatorID != 0 {
		add("annotator_id", f.AnnotatorID)
	}
	if f.ClassID != 0 {
		add("class_id", f.ClassID)
	}
	q := "SELECT " + labelCols + " FROM labels"
	if len(where) > 0 {
		q += " WHERE " + strings.Join(where, " AND ")
	}
	rows, err := s.pool.Query(ctx, q+" ORDER BY image_id, id", args...)
	if err != nil {
		return nil, fmt.Errorf("list labels: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Label, error) { return scanLabel(r) })
	if err != nil {
		return nil, fmt.Errorf("list labels: %w", s.translate(err))
	}
	return out, nil
}

// Label reads one label.
func (s *Store) Label(ctx context.Context, id int64) (project.Label, error) {
	l, err := scanLabel(s.pool.QueryRow(ctx, "SELECT "+labelCols+" FROM labels WHERE id = $1", id))
	if err != nil {
		return l, fmt.Errorf("label %d: %w", id, s.translate(err))
	}
	return l, nil
}

func checkBox(b project.Box) error {
	if !b.Valid() {
		return project.Explained(project.ErrInvalid, "box %v has no area or a non-finite coordinate", b)
	}
	return nil
}

// AddLabels stores a batch of labels in one transaction: all or none. A
// zero origin becomes "drawn". The rows go to the server in a few
// multi-row INSERTs, not one round trip each.
func (s *Store) AddLabels(ctx context.Context, ls []project.Label) error {
	rows := &labelRows{}
	for i, l := range ls {
		if l.Origin == "" {
			l.Origin = project.OriginDrawn
		}
		if !l.Origin.Valid() {
			return project.Explained(project.ErrInvalid, "add labels: label %d of %d: unknown origin %q", i+1, len(ls), l.Origin)
		}
		if err := checkBox(l.Box); err != nil {
			return fmt.Errorf("add labels: label %d of %d: %w", i+1, len(ls), err)
		}
		rows.add(fmt.Sprintf("label %d of %d", i+1, len(ls)), l)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := checkLabelRefs(ctx, tx, ls); err != nil {
			return err
		}
		return rows.insertBulk(ctx, s, tx)
	})
	if err != nil {
		return fmt.Errorf("add labels (nothing was stored): %w", err)
	}
	return nil
}

// checkLabelRefs finds the first label whose image, class or annotator
// does not exist, so that the error can name it: a foreign key's refusal
// of a multi-row INSERT cannot say which row was bad.
func checkLabelRefs(ctx context.Context, q querier, ls []project.Label) error {
	var imgs, classes, anns []int64
	for _, l := range ls {
		imgs, classes, anns = append(imgs, l.ImageID), append(classes, l.ClassID), append(anns, l.AnnotatorID)
	}
	known := map[string]map[int64]bool{}
	for table, ids := range map[string][]int64{"images": imgs, "classes": classes, "annotators": anns} {
		set, err := existing(ctx, q, table, ids)
		if err != nil {
			return err
		}
		known[table] = set
	}
	for i, l := range ls {
		var missing []string
		if !known["images"][l.ImageID] {
			missing = append(missing, fmt.Sprintf("image %d", l.ImageID))
		}
		if !known["classes"][l.ClassID] {
			missing = append(missing, fmt.Sprintf("class %d", l.ClassID))
		}
		if !known["annotators"][l.AnnotatorID] {
			missing = append(missing, fmt.Sprintf("annotator %d", l.AnnotatorID))
		}
		if len(missing) > 0 {
			return fmt.Errorf("label %d of %d: %s does not exist: %w", i+1, len(ls), strings.Join(missing, " and "), project.ErrNotFound)
		}
	}
	return nil
}

// existing is the subset of ids that table has (table is one of ours,
// never user input).
func existing(ctx context.Context, q querier, table string, ids []int64) (map[int64]bool, error) {
	ids = slices.Compact(slices.Sorted(slices.Values(ids)))
	set := map[int64]bool{}
	if len(ids) == 0 {
		return set, nil
	}
	rows, err := q.Query(ctx, "SELECT id FROM "+table+" WHERE id = ANY($1)", ids)
	if err != nil {
		return nil, fmt.Errorf("reading %s: %w", table, err)
	}
	got, err := pgx.CollectRows(rows, pgx.RowTo[int64])
	if err != nil {
		return nil, fmt.Errorf("reading %s: %w", table, err)
	}
	for _, id := range got {
		set[id] = true
	}
	return set, nil
}

// newIDs takes n values of a table's id sequence, in increasing order, in
// one round trip, so that a multi-row INSERT can return its IDs in the
// order of its rows.
func newIDs(ctx context.Context, q querier, table string, n int) ([]int64, error) {
	if n == 0 {
		return nil, nil
	}
	rows, err := q.Query(ctx, "SELECT nextval(pg_get_serial_sequence($1, 'id')) FROM generate_series(1, $2)", table, n)
	if err != nil {
		return nil, err
	}
	ids, err := pgx.CollectRows(rows, pgx.RowTo[int64])
	slices.Sort(ids)
	return ids, err
}

// labelBatch is the number of rows per INSERT of labels: twelve arrays
// of this length make one message of about 1 MB.
const labelBatch = 10000

// labelRows gathers labels column by column for INSERT … SELECT FROM
// unnest(arrays): one statement per batch of rows. (COPY would be
// quicker, but PostgreSQL does not accept COPY FROM into a table with
// row-level security.)
type labelRows struct {
	id, image, class, annotator []int64
	x0, y0, x1, y1, score       []float64
	origin, source              []string
	suggestion                  []int64 // 0 for none
	created                     []pgtype.Timestamptz
	where                       []string
}

func (r *labelRows) add(where string, l project.Label) {
	r.image, r.class, r.annotator = append(r.image, l.ImageID), append(r.class, l.ClassID), append(r.annotator, l.AnnotatorID)
	r.x0, r.y0, r.x1, r.y1 = append(r.x0, l.Box.X0), append(r.y0, l.Box.Y0), append(r.x1, l.Box.X1), append(r.y1, l.Box.Y1)
	r.score, r.origin, r.source = append(r.score, l.Score), append(r.origin, string(l.Origin)), append(r.source, l.Source)
	r.suggestion = append(r.suggestion, l.SuggestionID)
	r.created = append(r.created, pgtype.Timestamptz{Time: l.Created, Valid: !l.Created.IsZero()})
	r.where = append(r.where, where)
}

func (r *labelRows) len() int { return len(r.where) }

// labelInsertSQL inserts rows with the IDs given ($1).
const labelInsertSQL = `INSERT INTO labels(id, image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at)
	SELECT id, i, c, a, x0, y0, x1, y1, o, src, sc, nullif(sg, 0), coalesce(cr, now()), now()
	FROM unnest($1::bigint[], $2::bigint[], $3::bigint[], $4::bigint[], $5::float8[], $6::float8[], $7::float8[], $8::float8[],
	            $9::text[], $10::text[], $11::float8[], $12::bigint[], $13::timestamptz[])
	     AS t(id, i, c, a, x0, y0, x1, y1, o, src, sc, sg, cr)`

// labelInsertDefaultSQL is labelInsertSQL for rows whose IDs the caller
// does not need: the column's default numbers them.
const labelInsertDefaultSQL = `INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at)
	SELECT i, c, a, x0, y0, x1, y1, o, src, sc, nullif(sg, 0), coalesce(cr, now()), now()
	FROM unnest($1::bigint[], $2::bigint[], $3::bigint[], $4::float8[], $5::float8[], $6::float8[], $7::float8[],
	            $8::text[], $9::text[], $10::float8[], $11::bigint[], $12::timestamptz[])
	     AS t(i, c, a, x0, y0, x1, y1, o, src, sc, sg, cr)`

// insert stores the rows with new IDs (r.id, in row order afterwards).
func (r *labelRows) insert(ctx context.Context, s *Store, tx pgx.Tx) error {
	ids, err := newIDs(ctx, tx, "labels", r.len())
	if err != nil {
		return fmt.Errorf("numbering labels: %w", s.translate(err))
	}
	r.id = ids
	return r.write(ctx, s, tx)
}

// insertBulk stores the rows without reading their IDs back, for bulk
// writes that need none (taking the IDs first costs a round trip of
// one row per label).
func (r *labelRows) insertBulk(ctx context.Context, s *Store, tx pgx.Tx) error {
	r.id = nil
	return r.write(ctx, s, tx)
}

func (r *labelRows) write(ctx context.Context, s *Store, tx pgx.Tx) error {
	// double precision takes NaN and infinities; a score must be a number
	// (the file project refuses them too).
	for i, sc := range r.score {
		if math.IsNaN(sc) || math.IsInf(sc, 0) {
			return project.Explained(project.ErrInvalid, "%s: score %v is not a finite number", r.where[i], sc)
		}
	}
	for start := 0; start < r.len(); start += labelBatch {
		if err := ctx.Err(); err != nil {
			return err
		}
		end := min(start+labelBatch, r.len())
		args := []any{r.image[start:end], r.class[start:end], r.annotator[start:end],
			r.x0[start:end], r.y0[start:end], r.x1[start:end], r.y1[start:end], r.origin[start:end], r.source[start:end],
			r.score[start:end], r.suggestion[start:end], r.created[start:end]}
		q := labelInsertDefaultSQL
		if r.id != nil {
			q, args = labelInsertSQL, append([]any{r.id[start:end]}, args...)
		}
		_, err := tx.Exec(ctx, q, args...)
		if err != nil {
			return fmt.Errorf("%s (or one of the %d records after it): %w", r.where[start], end-start-1, labelRefusal(s, err))
		}
	}
	return nil
}

// labelRefusal explains a server refusal of a label write: row-level
// security allows only one's own labels, and a missing image, class or
// annotator is ErrNotFound as in the file backend.
func labelRefusal(s *Store, err error) error {
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		switch pe.Code {
		case "42501":
			return fmt.Errorf("you may write only labels of your own annotator (reviewers also derived ones, owners any): %w", s.translate(err))
		case "23503":
			return fmt.Errorf("%s: %w", pe.Detail, project.ErrNotFound)
		}
	}
	return s.translate(err)
}

// BoxesByImage reads the boxes of the given annotators (all when none are
// given), grouped by image in image order, each image's boxes in the
// order they were stored.
func (s *Store) BoxesByImage(ctx context.Context, annotatorIDs []int64) ([]project.ImageBoxes, error) {
	q := "SELECT image_id, annotator_id, class_id, x0, y0, x1, y1 FROM labels"
	var args []any
	if len(annotatorIDs) > 0 {
		q, args = q+" WHERE annotator_id = ANY($1)", append(args, annotatorIDs)
	}
	rows, err := s.pool.Query(ctx, q+" ORDER BY image_id, id", args...)
	if err != nil {
		return nil, fmt.Errorf("read boxes: %w", s.translate(err))
	}
	defer rows.Close()
	var out []project.ImageBoxes
	var img int64
	var b project.BoxRow
	_, err = pgx.ForEachRow(rows, []any{&img, &b.AnnotatorID, &b.ClassID, &b.Box.X0, &b.Box.Y0, &b.Box.X1, &b.Box.Y1}, func() error {
		if len(out) == 0 || out[len(out)-1].ImageID != img {
			out = append(out, project.ImageBoxes{ImageID: img})
		}
		last := &out[len(out)-1]
		last.Boxes = append(last.Boxes, b)
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("read boxes: %w", s.translate(err))
	}
	return out, nil
}

// when formats a server time for messages.
func when(t time.Time) string { return t.UTC().Format("2006-01-02 15:04:05 UTC") }
