package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"

	"boxwright/project"
)

const suggestionCols = "id, image_id, class_id, x0, y0, x1, y1, score, source, state, reviewer_id, reviewed_at, label_id, created_at, final_iou"

func scanSuggestion(row interface{ Scan(...any) error }) (project.Suggestion, error) {
	var g project.Suggestion
	var state, created string
	var reviewer, label sql.NullInt64
	var reviewed sql.NullString
	err := row.Scan(&g.ID, &g.ImageID, &g.ClassID, &g.Box.X0, &g.Box.Y0, &g.Box.X1, &g.Box.Y1, &g.Score, &g.Source,
		&state, &reviewer, &reviewed, &label, &created, &g.FinalIoU)
	g.State = project.SuggestionState(state)
	g.ReviewerID, g.LabelID = reviewer.Int64, label.Int64
	g.Reviewed, g.Created = parseNullTime(reviewed), parseTime(created)
	return g, err
}

// Suggestions lists suggestions matching the filter, best score first
// within each image.
func (s *Store) Suggestions(ctx context.Context, f project.SuggestionFilter) ([]project.Suggestion, error) {
	var where []string
	var args []any
	if f.ImageID != 0 {
		where, args = append(where, "image_id = ?"), append(args, f.ImageID)
	}
	if f.Source != "" {
		where, args = append(where, "source = ?"), append(args, f.Source)
	}
	if f.State != "" {
		where, args = append(where, "state = ?"), append(args, string(f.State))
	}
	q := "SELECT " + suggestionCols + " FROM suggestions"
	if len(where) > 0 {
		q += " WHERE " + strings.Join(where, " AND ")
	}
	rows, err := s.db.QueryContext(ctx, q+" ORDER BY image_id, score DESC, id", args...)
	if err != nil {
		return nil, fmt.Errorf("list suggestions: %w", s.damaged(err))
	}
	defer rows.Close()
	var out []project.Suggestion
	for rows.Next() {
		g, err := scanSuggestion(rows)
		if err != nil {
			return nil, fmt.Errorf("list suggestions: %w", s.damaged(err))
		}
		out = append(out, g)
	}
	return out, s.damaged(rows.Err())
}

// Suggestion reads one suggestion.
func (s *Store) Suggestion(ctx context.Context, id int64) (project.Suggestion, error) {
	g, err := scanSuggestion(s.db.QueryRowContext(ctx, "SELECT "+suggestionCols+" FROM suggestions WHERE id = ?", id))
	if err != nil {
		return g, fmt.Errorf("suggestion %d: %w", id, s.translate(err))
	}
	return g, nil
}

// AddSuggestions stores new pending suggestions in one transaction.
func (s *Store) AddSuggestions(ctx context.Context, gs []project.Suggestion) ([]int64, error) {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return nil, err
	}
	ids := make([]int64, 0, len(gs))
	err := s.tx(ctx, func(tx *sql.Tx) error {
		stmt, err := tx.PrepareContext(ctx, "INSERT INTO suggestions(image_id, class_id, x0, y0, x1, y1, score, source, state, created_at) VALUES (?,?,?,?,?,?,?,?,?,?)")
		if err != nil {
			return err
		}
		defer stmt.Close()
		now := formatTime(s.now())
		for i, g := range gs {
			if err := checkBox(g.Box); err != nil {
				return fmt.Errorf("suggestion %d: %w", i, err)
			}
			if err := checkScore(g.Score); err != nil {
				return fmt.Errorf("suggestion %d: %w", i, err)
			}
			if strings.TrimSpace(g.Source) == "" {
				return project.Explained(project.ErrInvalid, "suggestion %d: source name is empty", i)
			}
			res, err := stmt.ExecContext(ctx, g.ImageID, g.ClassID, g.Box.X0, g.Box.Y0, g.Box.X1, g.Box.Y1, g.Score, g.Source,
				string(project.SuggestionPending), now)
			if err != nil {
				return fmt.Errorf("suggestion %d: %w", i, missingRef(s.translate(err), fmt.Sprintf("image %d or class %d", g.ImageID, g.ClassID)))
			}
			id, _ := res.LastInsertId()
			ids = append(ids, id)
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("add suggestions: %w", s.damaged(err))
	}
	return ids, nil
}

// DeleteSuggestion removes one suggestion; a label made from it stays.
func (s *Store) DeleteSuggestion(ctx context.Context, id int64) error {
	return s.updateOne(ctx, fmt.Sprintf("delete suggestion %d", id), "DELETE FROM suggestions WHERE id = ?", id)
}
