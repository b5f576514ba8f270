package postgres

import (
	"context"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

const suggestionCols = "id, image_id, class_id, x0, y0, x1, y1, score, source, state, reviewer_id, reviewed_at, label_id, created_at, final_iou"

func scanSuggestion(row pgx.Row, extra ...any) (project.Suggestion, error) {
	var g project.Suggestion
	var state string
	var reviewer, label *int64
	var reviewed *time.Time
	dst := append([]any{&g.ID, &g.ImageID, &g.ClassID, &g.Box.X0, &g.Box.Y0, &g.Box.X1, &g.Box.Y1, &g.Score, &g.Source,
		&state, &reviewer, &reviewed, &label, &g.Created, &g.FinalIoU}, extra...)
	err := row.Scan(dst...)
	g.State = project.SuggestionState(state)
	if reviewer != nil {
		g.ReviewerID = *reviewer
	}
	if label != nil {
		g.LabelID = *label
	}
	if reviewed != nil {
		g.Reviewed = reviewed.UTC()
	}
	g.Created = g.Created.UTC()
	return g, err
}

func collectSuggestions(rows pgx.Rows) ([]project.Suggestion, error) {
	return pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Suggestion, error) { return scanSuggestion(r) })
}

// Suggestions lists suggestions matching the filter, best score first
// within each image.
func (s *Store) Suggestions(ctx context.Context, f project.SuggestionFilter) ([]project.Suggestion, error) {
	var where []string
	var args []any
	add := func(col string, v any) {
		args = append(args, v)
		where = append(where, fmt.Sprintf("%s = $%d", col, len(args)))
	}
	if f.ImageID != 0 {
		add("image_id", f.ImageID)
	}
	if f.Source != "" {
		add("source", f.Source)
	}
	if f.State != "" {
		add("state", string(f.State))
	}
	q := "SELECT " + suggestionCols + " FROM suggestions"
	if len(where) > 0 {
		q += " WHERE " + strings.Join(where, " AND ")
	}
	rows, err := s.pool.Query(ctx, q+" ORDER BY image_id, score DESC, id", args...)
	if err != nil {
		return nil, fmt.Errorf("list suggestions: %w", s.translate(err))
	}
	out, err := collectSuggestions(rows)
	if err != nil {
		return nil, fmt.Errorf("list suggestions: %w", s.translate(err))
	}
	return out, nil
}

// Suggestion reads one suggestion.
func (s *Store) Suggestion(ctx context.Context, id int64) (project.Suggestion, error) {
	g, err := scanSuggestion(s.pool.QueryRow(ctx, "SELECT "+suggestionCols+" FROM suggestions WHERE id = $1", id))
	if err != nil {
		return g, fmt.Errorf("suggestion %d: %w", id, s.translate(err))
	}
	return g, nil
}

// AddSuggestions stores new pending suggestions in one transaction and
// returns their IDs in order.
func (s *Store) AddSuggestions(ctx context.Context, gs []project.Suggestion) ([]int64, error) {
	for i, g := range gs {
		if err := checkBox(g.Box); err != nil {
			return nil, fmt.Errorf("add suggestions: suggestion %d: %w", i, err)
		}
		if strings.TrimSpace(g.Source) == "" {
			return nil, project.Explained(project.ErrInvalid, "add suggestions: suggestion %d: source name is empty", i)
		}
		if math.IsNaN(g.Score) || math.IsInf(g.Score, 0) {
			return nil, project.Explained(project.ErrInvalid, "add suggestions: suggestion %d: score %v is not a finite number", i, g.Score)
		}
	}
	var ids []int64
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := checkSuggestionRefs(ctx, tx, gs); err != nil {
			return err
		}
		var err error
		ids, err = insertSuggestions(ctx, s, tx, "", gs, true)
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("add suggestions (nothing was stored): %w", err)
	}
	return ids, nil
}

// checkSuggestionRefs names the first suggestion whose image or class
// does not exist.
func checkSuggestionRefs(ctx context.Context, q querier, gs []project.Suggestion) error {
	var imgs, classes []int64
	for _, g := range gs {
		imgs, classes = append(imgs, g.ImageID), append(classes, g.ClassID)
	}
	knownImages, err := existing(ctx, q, "images", imgs)
	if err != nil {
		return err
	}
	knownClasses, err := existing(ctx, q, "classes", classes)
	if err != nil {
		return err
	}
	for i, g := range gs {
		if !knownImages[g.ImageID] {
			return fmt.Errorf("suggestion %d: image %d: %w", i, g.ImageID, project.ErrNotFound)
		}
		if !knownClasses[g.ClassID] {
			return fmt.Errorf("suggestion %d: class %d: %w", i, g.ClassID, project.ErrNotFound)
		}
	}
	return nil
}

// suggestionBatch is the number of rows per INSERT of suggestions.
const suggestionBatch = 10000

// insertSuggestions stores gs as pending suggestions (of source, or each
// of its own source when source is "") in multi-row INSERTs and, with
// wantIDs, returns their IDs in order.
func insertSuggestions(ctx context.Context, s *Store, tx pgx.Tx, source string, gs []project.Suggestion, wantIDs bool) ([]int64, error) {
	var ids []int64
	if wantIDs {
		var err error
		if ids, err = newIDs(ctx, tx, "suggestions", len(gs)); err != nil {
			return nil, fmt.Errorf("numbering suggestions: %w", s.translate(err))
		}
	}
	for start := 0; start < len(gs); start += suggestionBatch {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		end := min(start+suggestionBatch, len(gs))
		n := end - start
		imgs, classes := make([]int64, 0, n), make([]int64, 0, n)
		x0, y0, x1, y1, score := make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
		sources := make([]string, 0, n)
		for _, g := range gs[start:end] {
			imgs, classes = append(imgs, g.ImageID), append(classes, g.ClassID)
			x0, y0, x1, y1, score = append(x0, g.Box.X0), append(y0, g.Box.Y0), append(x1, g.Box.X1), append(y1, g.Box.Y1), append(score, g.Score)
			src := g.Source
			if source != "" {
				src = source
			}
			sources = append(sources, src)
		}
		// Without IDs given, the NULL array leaves them to the column's
		// default.
		var given []int64
		if ids != nil {
			given = ids[start:end]
		}
		_, err := tx.Exec(ctx, `INSERT INTO suggestions(id, image_id, class_id, x0, y0, x1, y1, score, source, state)
			SELECT coalesce(id, nextval(pg_get_serial_sequence('suggestions', 'id'))), i, c, x0, y0, x1, y1, sc, src, 'pending'
			FROM unnest(coalesce($1::bigint[], array_fill(NULL::bigint, ARRAY[cardinality($2::bigint[])])), $2::bigint[], $3::bigint[], $4::float8[], $5::float8[], $6::float8[], $7::float8[], $8::float8[], $9::text[])
			     AS t(id, i, c, x0, y0, x1, y1, sc, src)`,
			given, imgs, classes, x0, y0, x1, y1, score, sources)
		if err != nil {
			return nil, fmt.Errorf("suggestions %d to %d: %w", start, end-1, s.translate(err))
		}
	}
	return ids, nil
}
