package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"boxwright/project"
)

// suggestionBatch is the number of rows per multi-row INSERT: 7 bound values
// a row, 1,794 parameters, well under SQLite's limit of 32,766.
const suggestionBatch = 256

// suggestionInsertSQL writes an INSERT of n rows. ?1 (source) and ?2
// (created_at) are shared by every row, so each row binds only its own
// seven values.
func suggestionInsertSQL(n int) string {
	var b strings.Builder
	b.WriteString("INSERT INTO suggestions(image_id, class_id, x0, y0, x1, y1, score, source, state, created_at) VALUES ")
	p := 3
	for i := 0; i < n; i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteByte('(')
		for k := 0; k < 7; k++ {
			b.WriteByte('?')
			b.WriteString(strconv.Itoa(p))
			b.WriteByte(',')
			p++
		}
		b.WriteString("?1,'pending',?2)")
	}
	return b.String()
}

// ImportSuggestions stores a source's suggestions in one transaction: the
// source's still-pending suggestions are deleted first, so that a re-import
// replaces them, while decided ones are left alone. A suggestion's Source
// may be empty (it takes source) or equal to source. Any bad suggestion (an
// invalid box or score, an unknown image or class) rolls everything back and
// the error names its index.
func (s *Store) ImportSuggestions(ctx context.Context, source string, gs []project.Suggestion) (project.SuggestionImportReport, error) {
	return s.importSuggestions(ctx, source, nil, gs)
}

// ReplaceSuggestionsOn is ImportSuggestions limited to some images: the
// source's pending suggestions on those images (and only there) give way
// to gs, which must lie on them. A search of a few images, such as the
// exemplar matcher's, uses it.
func (s *Store) ReplaceSuggestionsOn(ctx context.Context, source string, imageIDs []int64, gs []project.Suggestion) (project.SuggestionImportReport, error) {
	on := map[int64]bool{}
	for _, id := range imageIDs {
		on[id] = true
	}
	for i, g := range gs {
		if !on[g.ImageID] {
			return project.SuggestionImportReport{Source: source}, project.Explained(project.ErrInvalid, "suggestion %d is on image %d, which is not among the images replaced", i, g.ImageID)
		}
	}
	if imageIDs == nil {
		imageIDs = []int64{}
	}
	return s.importSuggestions(ctx, source, imageIDs, gs)
}

// importSuggestions replaces the source's pending suggestions everywhere
// (onImages nil) or on the given images.
func (s *Store) importSuggestions(ctx context.Context, source string, onImages []int64, gs []project.Suggestion) (project.SuggestionImportReport, error) {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return project.SuggestionImportReport{}, err
	}
	rep := project.SuggestionImportReport{Source: source}
	fail := func(err error) (project.SuggestionImportReport, error) {
		return project.SuggestionImportReport{Source: source}, fmt.Errorf("import suggestions of %q (nothing was stored): %w", source, err)
	}
	if strings.TrimSpace(source) == "" || source != strings.TrimSpace(source) {
		return fail(project.Explained(project.ErrInvalid, "source name %q is empty or starts or ends with a space", source))
	}
	if onImages == nil && len(gs) == 0 {
		// An empty import would silently delete every pending suggestion
		// of the source; that is never what an empty file means.
		var pending int
		if err := s.db.QueryRowContext(ctx, "SELECT count(*) FROM suggestions WHERE source = ? AND state = ?",
			source, string(project.SuggestionPending)).Scan(&pending); err != nil {
			return fail(s.translate(err))
		}
		if pending > 0 {
			return fail(project.Explained(project.ErrInvalid, "no suggestions to import (an empty file, or every prediction filtered out), and importing nothing would delete the source's %d pending suggestions",
				pending))
		}
	}
	err := s.tx(ctx, func(tx *sql.Tx) error {
		// Known IDs are checked here rather than left to the foreign keys,
		// whose refusal of a multi-row INSERT cannot say which row was bad.
		images, err := idSet(ctx, tx, "SELECT id FROM images")
		if err != nil {
			return fmt.Errorf("reading images: %w", s.translate(err))
		}
		classes, err := idSet(ctx, tx, "SELECT id FROM classes")
		if err != nil {
			return fmt.Errorf("reading classes: %w", s.translate(err))
		}
		for i, g := range gs {
			if err := checkImportedSuggestion(g, source, images, classes); err != nil {
				return fmt.Errorf("suggestion %d: %w", i, err)
			}
		}
		rebuild, err := dropReviewIndexForBulk(ctx, tx, source, len(gs))
		if err != nil {
			return err
		}
		if onImages == nil {
			res, err := tx.ExecContext(ctx, "DELETE FROM suggestions WHERE source = ? AND state = ?", source, string(project.SuggestionPending))
			if err != nil {
				return fmt.Errorf("deleting pending suggestions: %w", s.translate(err))
			}
			n, _ := res.RowsAffected()
			rep.ReplacedPending = int(n)
			if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM suggestions WHERE source = ?", source).Scan(&rep.KeptReviewed); err != nil {
				return fmt.Errorf("counting reviewed suggestions: %w", s.translate(err))
			}
		}
		for start := 0; onImages != nil && start < len(onImages); start += 500 {
			chunk := onImages[start:min(start+500, len(onImages))]
			in := "(?" + strings.Repeat(",?", len(chunk)-1) + ")"
			args := []any{source, string(project.SuggestionPending)}
			for _, id := range chunk {
				args = append(args, id)
			}
			res, err := tx.ExecContext(ctx, "DELETE FROM suggestions WHERE source = ? AND state = ? AND image_id IN "+in, args...)
			if err != nil {
				return fmt.Errorf("deleting pending suggestions: %w", s.translate(err))
			}
			n, _ := res.RowsAffected()
			rep.ReplacedPending += int(n)
			var kept int
			if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM suggestions WHERE source = ? AND image_id IN "+in, append([]any{source}, args[2:]...)...).Scan(&kept); err != nil {
				return fmt.Errorf("counting reviewed suggestions: %w", s.translate(err))
			}
			rep.KeptReviewed += kept
		}

		now := formatTime(s.now())
		var full *sql.Stmt
		defer func() {
			if full != nil {
				full.Close()
			}
		}()
		args := make([]any, 0, 2+7*suggestionBatch)
		for start := 0; start < len(gs); start += suggestionBatch {
			if ctx.Err() != nil {
				return ctx.Err()
			}
			end := min(start+suggestionBatch, len(gs))
			args = append(args[:0], source, now)
			for _, g := range gs[start:end] {
				args = append(args, g.ImageID, g.ClassID, g.Box.X0, g.Box.Y0, g.Box.X1, g.Box.Y1, g.Score)
			}
			if end-start == suggestionBatch {
				if full == nil {
					if full, err = tx.PrepareContext(ctx, suggestionInsertSQL(suggestionBatch)); err != nil {
						return err
					}
				}
				_, err = full.ExecContext(ctx, args...)
			} else {
				_, err = tx.ExecContext(ctx, suggestionInsertSQL(end-start), args...)
			}
			if err != nil {
				return fmt.Errorf("suggestions %d to %d: %w", start, end-1, s.translate(err))
			}
		}
		if rebuild != "" {
			if _, err := tx.ExecContext(ctx, rebuild); err != nil {
				return fmt.Errorf("rebuilding the review index: %w", s.translate(err))
			}
		}
		rep.Added = len(gs)
		return nil
	})
	if err != nil {
		return fail(err)
	}
	return rep, nil
}

// reviewIndex is the index on (state, class_id, score) from migration 0002.
const reviewIndex = "suggestions_for_review"

// dropReviewIndexForBulk drops the review index when an import changes more
// rows than it leaves alone, and returns the SQL that makes it again. Its
// keys arrive in random order, so keeping it up to date row by row costs
// several times what sorting it once afterwards does (measured: 1,000,000
// rows, about 5 s against 1.5 s). It returns "" when the index stays.
func dropReviewIndexForBulk(ctx context.Context, tx *sql.Tx, source string, adding int) (string, error) {
	var total, pending int
	err := tx.QueryRowContext(ctx, "SELECT count(*), count(*) FILTER (WHERE source = ? AND state = ?) FROM suggestions",
		source, string(project.SuggestionPending)).Scan(&total, &pending)
	if err != nil {
		return "", fmt.Errorf("counting suggestions: %w", translateCode(err))
	}
	if adding+pending <= total-pending || adding < 10000 {
		return "", nil
	}
	// The definition is read back, not repeated here, so that a later
	// migration that changes the index is what gets rebuilt.
	var def sql.NullString
	err = tx.QueryRowContext(ctx, "SELECT sql FROM sqlite_master WHERE type = 'index' AND name = ?", reviewIndex).Scan(&def)
	if errors.Is(err, sql.ErrNoRows) || (err == nil && !def.Valid) {
		return "", nil
	}
	if err != nil {
		return "", fmt.Errorf("reading the review index: %w", translateCode(err))
	}
	if _, err := tx.ExecContext(ctx, "DROP INDEX "+reviewIndex); err != nil {
		return "", fmt.Errorf("dropping the review index: %w", translateCode(err))
	}
	return def.String, nil
}

func checkImportedSuggestion(g project.Suggestion, source string, images, classes map[int64]bool) error {
	if g.Source != "" && g.Source != source {
		return project.Explained(project.ErrInvalid, "its source %q is not the imported source %q", g.Source, source)
	}
	if err := checkBox(g.Box); err != nil {
		return err
	}
	if err := checkScore(g.Score); err != nil {
		return err
	}
	if !images[g.ImageID] {
		return fmt.Errorf("image %d: %w", g.ImageID, project.ErrNotFound)
	}
	if !classes[g.ClassID] {
		return fmt.Errorf("class %d: %w", g.ClassID, project.ErrNotFound)
	}
	return nil
}

func idSet(ctx context.Context, tx *sql.Tx, query string) (map[int64]bool, error) {
	rows, err := tx.QueryContext(ctx, query)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	set := map[int64]bool{}
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		set[id] = true
	}
	return set, rows.Err()
}

func suggestionWhere(q project.SuggestionQuery) (string, []any, error) {
	state := q.State
	if state == "" {
		state = project.SuggestionPending
	}
	if !state.Valid() {
		return "", nil, project.Explained(project.ErrInvalid, "unknown suggestion state %q", state)
	}
	if math.IsNaN(q.MinScore) || math.IsNaN(q.MaxScore) {
		return "", nil, project.Explained(project.ErrInvalid, "score bound is not a number")
	}
	conds, args := []string{"state = ?"}, []any{string(state)}
	if q.Source != "" {
		conds, args = append(conds, "source = ?"), append(args, q.Source)
	}
	if q.ImageID != 0 {
		conds, args = append(conds, "image_id = ?"), append(args, q.ImageID)
	}
	if q.ClassID != 0 {
		conds, args = append(conds, "class_id = ?"), append(args, q.ClassID)
	}
	if q.MinScore != 0 {
		conds, args = append(conds, "score >= ?"), append(args, q.MinScore)
	}
	if q.MaxScore != 0 {
		conds, args = append(conds, "score < ?"), append(args, q.MaxScore)
	}
	return " WHERE " + strings.Join(conds, " AND "), args, nil
}

// CountSuggestions counts the suggestions a query selects: the preview of a
// bulk action.
func (s *Store) CountSuggestions(ctx context.Context, q project.SuggestionQuery) (int, error) {
	where, args, err := suggestionWhere(q)
	if err != nil {
		return 0, fmt.Errorf("count suggestions: %w", s.damaged(err))
	}
	var n int
	if err := s.db.QueryRowContext(ctx, "SELECT count(*) FROM suggestions"+where, args...).Scan(&n); err != nil {
		return 0, fmt.Errorf("count suggestions: %w", s.translate(err))
	}
	return n, nil
}

// QuerySuggestions lists the suggestions a query selects, best score first,
// ties in the order they were stored.
func (s *Store) QuerySuggestions(ctx context.Context, q project.SuggestionQuery) ([]project.Suggestion, error) {
	where, args, err := suggestionWhere(q)
	if err != nil {
		return nil, fmt.Errorf("query suggestions: %w", s.damaged(err))
	}
	query := "SELECT " + suggestionCols + " FROM suggestions" + where + " ORDER BY score DESC, id"
	if q.Limit > 0 {
		query += " LIMIT " + strconv.Itoa(q.Limit)
	}
	rows, err := s.db.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("query suggestions: %w", s.translate(err))
	}
	defer rows.Close()
	var out []project.Suggestion
	for rows.Next() {
		g, err := scanSuggestion(rows)
		if err != nil {
			return nil, fmt.Errorf("query suggestions: %w", s.damaged(err))
		}
		out = append(out, g)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("query suggestions: %w", s.translate(err))
	}
	return out, nil
}

// Decide applies one reviewer's decisions in one transaction, whether a bulk
// action or a single key press. An accepted suggestion becomes a label of the
// reviewer, with origin accepted, or corrected when the box or class
// differ, and records the IoU of its box with the final one; a rejected one
// only changes state. Each records reviewer and time. A suggestion that is
// no longer pending (or is decided twice in ds) fails the whole call with an
// error naming it, so that two reviewers never decide one silently twice.
// It returns the new label IDs by suggestion ID.
func (s *Store) Decide(ctx context.Context, reviewerID int64, ds []project.Decision) (map[int64]int64, error) {
	made := make(map[int64]int64)
	err := s.tx(ctx, func(tx *sql.Tx) error {
		var exists int
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM annotators WHERE id = ?", reviewerID).Scan(&exists); err != nil {
			return s.translate(err)
		}
		if exists == 0 {
			return fmt.Errorf("reviewer %d: %w", reviewerID, project.ErrNotFound)
		}
		read, err := tx.PrepareContext(ctx, "SELECT "+suggestionCols+" FROM suggestions WHERE id = ?")
		if err != nil {
			return err
		}
		defer read.Close()
		addLabel, err := tx.PrepareContext(ctx, "INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)")
		if err != nil {
			return err
		}
		defer addLabel.Close()
		mark, err := tx.PrepareContext(ctx, "UPDATE suggestions SET state = ?, reviewer_id = ?, reviewed_at = ?, label_id = ?, final_iou = ? WHERE id = ?")
		if err != nil {
			return err
		}
		defer mark.Close()
		now := formatTime(s.now())
		for i, d := range ds {
			if i%1000 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			g, err := scanSuggestion(read.QueryRowContext(ctx, d.SuggestionID))
			if err != nil {
				return fmt.Errorf("suggestion %d: %w", d.SuggestionID, s.translate(err))
			}
			if g.State != project.SuggestionPending {
				return project.Explained(project.ErrInvalid, "suggestion %d is no longer pending (it was %s)", g.ID, g.State)
			}
			if !d.Accept {
				if _, err := mark.ExecContext(ctx, string(project.SuggestionRejected), reviewerID, now, nil, 0.0, g.ID); err != nil {
					return fmt.Errorf("reject suggestion %d: %w", g.ID, s.translate(err))
				}
				continue
			}
			box, class, state, origin := d.Final(g)
			if err := checkBox(box); err != nil {
				return fmt.Errorf("accept suggestion %d: %w", g.ID, err)
			}
			res, err := addLabel.ExecContext(ctx, g.ImageID, class, reviewerID, box.X0, box.Y0, box.X1, box.Y1,
				string(origin), g.Source, g.Score, g.ID, now, now)
			if err != nil {
				err = s.translate(err)
				if errors.Is(err, project.ErrInUse) { // a foreign key: the only one that can be wrong is the class
					err = fmt.Errorf("class %d: %w", class, project.ErrNotFound)
				}
				return fmt.Errorf("accept suggestion %d: %w", g.ID, err)
			}
			labelID, _ := res.LastInsertId()
			if _, err := mark.ExecContext(ctx, string(state), reviewerID, now, labelID, g.Box.IoU(box), g.ID); err != nil {
				return fmt.Errorf("accept suggestion %d: %w", g.ID, s.translate(err))
			}
			// The accepted box is the reviewer's label: like a drawn one,
			// it starts their work on the image.
			if err := markStarted(ctx, tx, g.ImageID, reviewerID, now); err != nil {
				return fmt.Errorf("accept suggestion %d: mark image %d started: %w", g.ID, g.ImageID, s.translate(err))
			}
			made[g.ID] = labelID
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("decide on %d suggestions (nothing was changed): %w", len(ds), err)
	}
	return made, nil
}

// Undecide returns decided suggestions to pending and deletes the labels
// made from them, in one transaction: the undo of a decision or a bulk
// action. A label is deleted even if someone edited it after the decision,
// and those edits go with it: an undo that kept some labels would leave the
// review statistics counting a decision that no longer exists. A suggestion
// that is missing or already pending fails the whole call.
func (s *Store) Undecide(ctx context.Context, suggestionIDs []int64) error {
	err := s.tx(ctx, func(tx *sql.Tx) error {
		read, err := tx.PrepareContext(ctx, "SELECT state, label_id FROM suggestions WHERE id = ?")
		if err != nil {
			return err
		}
		defer read.Close()
		drop, err := tx.PrepareContext(ctx, "DELETE FROM labels WHERE id = ?")
		if err != nil {
			return err
		}
		defer drop.Close()
		reset, err := tx.PrepareContext(ctx, "UPDATE suggestions SET state = ?, reviewer_id = NULL, reviewed_at = NULL, label_id = NULL, final_iou = 0 WHERE id = ?")
		if err != nil {
			return err
		}
		defer reset.Close()
		for i, id := range suggestionIDs {
			if i%1000 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			var state string
			var label sql.NullInt64
			if err := read.QueryRowContext(ctx, id).Scan(&state, &label); err != nil {
				return fmt.Errorf("suggestion %d: %w", id, s.translate(err))
			}
			if project.SuggestionState(state) == project.SuggestionPending {
				return project.Explained(project.ErrInvalid, "suggestion %d is pending, there is no decision to undo", id)
			}
			if label.Valid {
				if _, err := drop.ExecContext(ctx, label.Int64); err != nil {
					return fmt.Errorf("delete label %d of suggestion %d: %w", label.Int64, id, s.translate(err))
				}
			}
			if _, err := reset.ExecContext(ctx, string(project.SuggestionPending), id); err != nil {
				return fmt.Errorf("suggestion %d: %w", id, s.translate(err))
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("undo decisions on %d suggestions (nothing was changed): %w", len(suggestionIDs), err)
	}
	return nil
}

// ReviewRows lists every suggestion of a source ("" for all sources) with
// what the review statistics need, in the order they were stored.
func (s *Store) ReviewRows(ctx context.Context, source string) ([]project.ReviewRow, error) {
	q, args := "SELECT source, class_id, score, state, final_iou FROM suggestions", []any{}
	if source != "" {
		q, args = q+" WHERE source = ?", append(args, source)
	}
	rows, err := s.db.QueryContext(ctx, q+" ORDER BY id", args...)
	if err != nil {
		return nil, fmt.Errorf("read review decisions: %w", s.translate(err))
	}
	defer rows.Close()
	var out []project.ReviewRow
	for rows.Next() {
		var r project.ReviewRow
		var state string
		if err := rows.Scan(&r.Source, &r.ClassID, &r.Score, &state, &r.FinalIoU); err != nil {
			return nil, fmt.Errorf("read review decisions: %w", s.damaged(err))
		}
		r.State = project.SuggestionState(state)
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("read review decisions: %w", s.translate(err))
	}
	return out, nil
}

// SuggestionSources lists the sources of the project's suggestions.
func (s *Store) SuggestionSources(ctx context.Context) ([]string, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT DISTINCT source FROM suggestions ORDER BY source")
	if err != nil {
		return nil, fmt.Errorf("list suggestion sources: %w", s.translate(err))
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var src string
		if err := rows.Scan(&src); err != nil {
			return nil, fmt.Errorf("list suggestion sources: %w", s.damaged(err))
		}
		out = append(out, src)
	}
	return out, s.damaged(rows.Err())
}
