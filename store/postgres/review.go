package postgres

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// ImportSuggestions stores a source's suggestions in one transaction: the
// source's still-pending suggestions are deleted first, so that a
// re-import replaces them, while decided ones are left alone. A
// suggestion's Source may be empty (it takes source) or equal to source.
// Any bad suggestion (an invalid box or score, an unknown image or class)
// rolls everything back and the error names its index.
func (s *Store) ImportSuggestions(ctx context.Context, source string, gs []project.Suggestion) (project.SuggestionImportReport, error) {
	return s.importSuggestions(ctx, source, nil, gs)
}

// ReplaceSuggestionsOn is ImportSuggestions limited to some images: the
// source's pending suggestions on those images (and only there) give way
// to gs, which must lie on them.
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

func (s *Store) importSuggestions(ctx context.Context, source string, onImages []int64, gs []project.Suggestion) (project.SuggestionImportReport, error) {
	rep := project.SuggestionImportReport{Source: source}
	fail := func(err error) (project.SuggestionImportReport, error) {
		return project.SuggestionImportReport{Source: source}, fmt.Errorf("import suggestions of %q (nothing was stored): %w", source, err)
	}
	if strings.TrimSpace(source) == "" || source != strings.TrimSpace(source) {
		return fail(project.Explained(project.ErrInvalid, "source name %q is empty or starts or ends with a space", source))
	}
	for i, g := range gs {
		if g.Source != "" && g.Source != source {
			return fail(project.Explained(project.ErrInvalid, "suggestion %d: its source %q is not the imported source %q", i, g.Source, source))
		}
		if err := checkBox(g.Box); err != nil {
			return fail(fmt.Errorf("suggestion %d: %w", i, err))
		}
		if math.IsNaN(g.Score) || math.IsInf(g.Score, 0) {
			return fail(project.Explained(project.ErrInvalid, "suggestion %d: score %v is not a finite number", i, g.Score))
		}
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if onImages == nil && len(gs) == 0 {
			// An empty import would silently delete every pending
			// suggestion of the source; that is never what an empty file
			// means.
			var pending int
			if err := tx.QueryRow(ctx, "SELECT count(*) FROM suggestions WHERE source = $1 AND state = 'pending'", source).Scan(&pending); err != nil {
				return s.translate(err)
			}
			if pending > 0 {
				return project.Explained(project.ErrInvalid, "no suggestions to import (an empty file, or every prediction filtered out), and importing nothing would delete the source's %d pending suggestions", pending)
			}
		}
		if err := checkSuggestionRefs(ctx, tx, gs); err != nil {
			return err
		}
		var where string
		args := []any{source}
		if onImages != nil {
			where, args = " AND image_id = ANY($2)", append(args, onImages)
		}
		tag, err := tx.Exec(ctx, "DELETE FROM suggestions WHERE source = $1 AND state = 'pending'"+where, args...)
		if err != nil {
			return fmt.Errorf("deleting pending suggestions: %w", s.translate(err))
		}
		rep.ReplacedPending = int(tag.RowsAffected())
		var left int
		if err := tx.QueryRow(ctx, "SELECT count(*), count(*) FILTER (WHERE state = 'pending') FROM suggestions WHERE source = $1"+where, args...).Scan(&rep.KeptReviewed, &left); err != nil {
			return fmt.Errorf("counting reviewed suggestions: %w", s.translate(err))
		}
		if left > 0 {
			// Row-level security hid them from the DELETE: not a reviewer.
			return project.Explained(project.ErrNotAllowed, "%d pending suggestions of %q are not yours to replace: importing suggestions needs the reviewer or owner role", left, source)
		}
		if _, err := insertSuggestions(ctx, s, tx, source, gs, false); err != nil {
			return err
		}
		rep.Added = len(gs)
		return nil
	})
	if err != nil {
		return fail(err)
	}
	return rep, nil
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
	var conds []string
	var args []any
	add := func(cond string, v any) {
		args = append(args, v)
		conds = append(conds, fmt.Sprintf(cond, len(args)))
	}
	add("state = $%d", string(state))
	if q.Source != "" {
		add("source = $%d", q.Source)
	}
	if q.ImageID != 0 {
		add("image_id = $%d", q.ImageID)
	}
	if q.ClassID != 0 {
		add("class_id = $%d", q.ClassID)
	}
	if q.MinScore != 0 {
		add("score >= $%d", q.MinScore)
	}
	if q.MaxScore != 0 {
		add("score < $%d", q.MaxScore)
	}
	return " WHERE " + strings.Join(conds, " AND "), args, nil
}

// CountSuggestions counts the suggestions a query selects: the preview of
// a bulk action.
func (s *Store) CountSuggestions(ctx context.Context, q project.SuggestionQuery) (int, error) {
	where, args, err := suggestionWhere(q)
	if err != nil {
		return 0, fmt.Errorf("count suggestions: %w", err)
	}
	var n int
	if err := s.pool.QueryRow(ctx, "SELECT count(*) FROM suggestions"+where, args...).Scan(&n); err != nil {
		return 0, fmt.Errorf("count suggestions: %w", s.translate(err))
	}
	return n, nil
}

// QuerySuggestions lists the suggestions a query selects, best score
// first, ties in the order they were stored.
func (s *Store) QuerySuggestions(ctx context.Context, q project.SuggestionQuery) ([]project.Suggestion, error) {
	where, args, err := suggestionWhere(q)
	if err != nil {
		return nil, fmt.Errorf("query suggestions: %w", err)
	}
	query := "SELECT " + suggestionCols + " FROM suggestions" + where + " ORDER BY score DESC, id"
	if q.Limit > 0 {
		query += " LIMIT " + strconv.Itoa(q.Limit)
	}
	rows, err := s.pool.Query(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("query suggestions: %w", s.translate(err))
	}
	out, err := collectSuggestions(rows)
	if err != nil {
		return nil, fmt.Errorf("query suggestions: %w", s.translate(err))
	}
	return out, nil
}

// mayReview refuses a member below reviewer: row-level security would
// only leave their changes to suggestions undone, without a word.
func (s *Store) mayReview(ctx context.Context, tx pgx.Tx, what string) error {
	var rank int
	var above bool // a superuser or a role that bypasses row-level security
	err := tx.QueryRow(ctx, "SELECT bw_rank(), coalesce((SELECT rolsuper OR rolbypassrls FROM pg_roles WHERE rolname = current_user), false)").Scan(&rank, &above)
	if err != nil {
		return s.translate(err)
	}
	if rank < 2 && !above {
		return project.Explained(project.ErrNotAllowed, "%s needs the reviewer or owner role in this project, and %s is not a reviewer", what, s.name)
	}
	return nil
}

// lockedSuggestion is a suggestion read under a row lock, with the name
// of whoever decided it.
type lockedSuggestion struct {
	project.Suggestion
	reviewerName string
}

// lockSuggestions reads the suggestions with ids under FOR UPDATE locks,
// taken in ID order so that two reviewers deciding overlapping sets wait
// for each other instead of deadlocking. A second reviewer deciding the
// same suggestion waits here for the first to commit, then reads the
// suggestion as the first left it.
func (s *Store) lockSuggestions(ctx context.Context, tx pgx.Tx, ids []int64) (map[int64]lockedSuggestion, error) {
	if _, err := tx.Exec(ctx, "SELECT id FROM suggestions WHERE id = ANY($1) ORDER BY id FOR UPDATE", ids); err != nil {
		return nil, s.translate(err)
	}
	// Read after the locks are held, in a statement of its own: a row a
	// lock waited for is then read as committed, with the name of who
	// decided it (a join in the locking statement would re-read only
	// the locked row and keep the reviewer as it was before the wait).
	cols := strings.ReplaceAll("s."+suggestionCols, ", ", ", s.")
	rows, err := tx.Query(ctx, "SELECT "+cols+", coalesce(a.name, '') FROM suggestions s LEFT JOIN annotators a ON a.id = s.reviewer_id WHERE s.id = ANY($1)", ids)
	if err != nil {
		return nil, s.translate(err)
	}
	got := map[int64]lockedSuggestion{}
	_, err = pgx.CollectRows(rows, func(r pgx.CollectableRow) (struct{}, error) {
		var l lockedSuggestion
		var err error
		l.Suggestion, err = scanSuggestion(r, &l.reviewerName)
		got[l.ID] = l
		return struct{}{}, err
	})
	return got, s.translate(err)
}

// decided says who decided a suggestion and when, for the refusal of a
// second decision.
func (l lockedSuggestion) decided() string {
	who := "someone no longer in the project"
	if l.reviewerName != "" {
		who = l.reviewerName
	}
	at := ""
	if !l.Reviewed.IsZero() {
		at = " at " + when(l.Reviewed)
	}
	return fmt.Sprintf("already decided (%s) by %s%s", l.State, who, at)
}

// Decide applies one reviewer's decisions in one transaction, whether a
// bulk action or a single key press. An accepted suggestion becomes a
// label of the reviewer, with origin accepted, or corrected when the box
// or class differ, and records the IoU of its box with the final one; a
// rejected one only changes state. Each records reviewer and time. The
// suggestions are locked first (SELECT … FOR UPDATE), so that of two
// reviewers deciding one suggestion at once the second waits and is then
// refused with who decided it and when; a suggestion that is no longer
// pending (or is decided twice in ds) fails the whole call with an error
// naming it. A member below reviewer is refused with ErrNotAllowed. It
// returns the new label IDs by suggestion ID.
func (s *Store) Decide(ctx context.Context, reviewerID int64, ds []project.Decision) (map[int64]int64, error) {
	made := make(map[int64]int64)
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.mayReview(ctx, tx, "deciding suggestions"); err != nil {
			return err
		}
		var exists bool
		if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM annotators WHERE id = $1)", reviewerID).Scan(&exists); err != nil {
			return s.translate(err)
		}
		if !exists {
			return fmt.Errorf("reviewer %d: %w", reviewerID, project.ErrNotFound)
		}
		ids := make([]int64, len(ds))
		for i, d := range ds {
			ids[i] = d.SuggestionID
		}
		locked, err := s.lockSuggestions(ctx, tx, ids)
		if err != nil {
			return err
		}
		var finalClasses []int64
		for _, d := range ds {
			if d.ClassID != 0 {
				finalClasses = append(finalClasses, d.ClassID)
			}
		}
		knownClasses, err := existing(ctx, tx, "classes", finalClasses)
		if err != nil {
			return s.translate(err)
		}
		type mark struct {
			id    int64
			state project.SuggestionState
			label int64
			iou   float64
		}
		var marks []mark
		accepted := &labelRows{}
		var acceptedFor []int // index into marks of each accepted label
		seen := map[int64]bool{}
		for _, d := range ds {
			g, ok := locked[d.SuggestionID]
			if !ok {
				return fmt.Errorf("suggestion %d: %w", d.SuggestionID, project.ErrNotFound)
			}
			if seen[g.ID] {
				return project.Explained(project.ErrInvalid, "suggestion %d is no longer pending: it is decided twice in this call", g.ID)
			}
			seen[g.ID] = true
			if g.State != project.SuggestionPending {
				return project.Explained(project.ErrInvalid, "suggestion %d is no longer pending: %s", g.ID, g.decided())
			}
			if !d.Accept {
				marks = append(marks, mark{id: g.ID, state: project.SuggestionRejected})
				continue
			}
			box, class, state, origin := d.Final(g.Suggestion)
			if err := checkBox(box); err != nil {
				return fmt.Errorf("accept suggestion %d: %w", g.ID, err)
			}
			if d.ClassID != 0 && !knownClasses[d.ClassID] {
				return fmt.Errorf("accept suggestion %d: class %d: %w", g.ID, class, project.ErrNotFound)
			}
			acceptedFor = append(acceptedFor, len(marks))
			marks = append(marks, mark{id: g.ID, state: state, iou: g.Box.IoU(box)})
			accepted.add(fmt.Sprintf("the label of suggestion %d", g.ID), project.Label{ImageID: g.ImageID, ClassID: class, AnnotatorID: reviewerID,
				Box: box, Origin: origin, Source: g.Source, Score: g.Score, SuggestionID: g.ID})
		}
		if accepted.len() > 0 {
			if err := accepted.insert(ctx, s, tx); err != nil {
				return err
			}
			// The accepted boxes are the reviewer's labels: like drawn
			// ones, they start the reviewer's work on their images.
			if err := startImages(ctx, s, tx, accepted.image, accepted.annotator); err != nil {
				return err
			}
			for k, i := range acceptedFor {
				marks[i].label = accepted.id[k]
				made[marks[i].id] = accepted.id[k]
			}
		}
		mids, states, labels, ious := make([]int64, len(marks)), make([]string, len(marks)), make([]int64, len(marks)), make([]float64, len(marks))
		for i, m := range marks {
			mids[i], states[i], labels[i], ious[i] = m.id, string(m.state), m.label, m.iou
		}
		tag, err := tx.Exec(ctx, `UPDATE suggestions g SET state = m.st, reviewer_id = $5, reviewed_at = now(), label_id = nullif(m.l, 0), final_iou = m.iou
			FROM unnest($1::bigint[], $2::text[], $3::bigint[], $4::float8[]) AS m(id, st, l, iou)
			WHERE g.id = m.id AND g.state = 'pending'`, mids, states, labels, ious, reviewerID)
		if err != nil {
			return fmt.Errorf("record decisions: %w", s.translate(err))
		}
		if int(tag.RowsAffected()) != len(marks) {
			// The rows are locked and were pending: only row-level
			// security can have hidden them.
			return project.Explained(project.ErrNotAllowed, "%d of %d decisions were refused by the server: deciding suggestions needs the reviewer or owner role", len(marks)-int(tag.RowsAffected()), len(marks))
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
// action. A label is deleted even if someone edited it after the
// decision. A suggestion that is missing or already pending fails the
// whole call, and so does a label made by another reviewer that row-level
// security does not let this person delete.
func (s *Store) Undecide(ctx context.Context, suggestionIDs []int64) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.mayReview(ctx, tx, "undoing decisions"); err != nil {
			return err
		}
		locked, err := s.lockSuggestions(ctx, tx, suggestionIDs)
		if err != nil {
			return err
		}
		seen := map[int64]bool{}
		var labels []int64
		labelOf := map[int64]int64{}
		for _, id := range suggestionIDs {
			g, ok := locked[id]
			if !ok {
				return fmt.Errorf("suggestion %d: %w", id, project.ErrNotFound)
			}
			if g.State == project.SuggestionPending || seen[id] {
				return project.Explained(project.ErrInvalid, "suggestion %d is pending, there is no decision to undo", id)
			}
			seen[id] = true
			if g.LabelID != 0 {
				labels = append(labels, g.LabelID)
				labelOf[g.LabelID] = id
			}
		}
		if len(labels) > 0 {
			rows, err := tx.Query(ctx, "DELETE FROM labels WHERE id = ANY($1) RETURNING id", labels)
			if err != nil {
				return fmt.Errorf("delete labels of the decisions: %w", s.translate(err))
			}
			gone, err := pgx.CollectRows(rows, pgx.RowTo[int64])
			if err != nil {
				return fmt.Errorf("delete labels of the decisions: %w", s.translate(err))
			}
			if err := s.untouched(ctx, tx, "delete", labels, gone); err != nil {
				return fmt.Errorf("undo the decision on suggestion %d: %w", labelOf[firstMissing(labels, gone)], err)
			}
		}
		tag, err := tx.Exec(ctx, "UPDATE suggestions SET state = 'pending', reviewer_id = NULL, reviewed_at = NULL, label_id = NULL, final_iou = 0 WHERE id = ANY($1)", suggestionIDs)
		if err != nil {
			return s.translate(err)
		}
		if int(tag.RowsAffected()) != len(seen) {
			return project.Explained(project.ErrNotAllowed, "the server refused to return %d suggestions to pending: undoing decisions needs the reviewer or owner role", len(seen)-int(tag.RowsAffected()))
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("undo decisions on %d suggestions (nothing was changed): %w", len(suggestionIDs), err)
	}
	return nil
}

func firstMissing(wanted, got []int64) int64 {
	have := map[int64]bool{}
	for _, id := range got {
		have[id] = true
	}
	for _, id := range wanted {
		if !have[id] {
			return id
		}
	}
	return 0
}

// ReviewRows lists every suggestion of a source ("" for all sources) with
// what the review statistics need, in the order they were stored.
func (s *Store) ReviewRows(ctx context.Context, source string) ([]project.ReviewRow, error) {
	q, args := "SELECT source, class_id, score, state, final_iou FROM suggestions", []any{}
	if source != "" {
		q, args = q+" WHERE source = $1", append(args, source)
	}
	rows, err := s.pool.Query(ctx, q+" ORDER BY id", args...)
	if err != nil {
		return nil, fmt.Errorf("read review decisions: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.ReviewRow, error) {
		var rr project.ReviewRow
		var state string
		err := r.Scan(&rr.Source, &rr.ClassID, &rr.Score, &state, &rr.FinalIoU)
		rr.State = project.SuggestionState(state)
		return rr, err
	})
	if err != nil {
		return nil, fmt.Errorf("read review decisions: %w", s.translate(err))
	}
	return out, nil
}

// SuggestionSources lists the sources of the project's suggestions.
func (s *Store) SuggestionSources(ctx context.Context) ([]string, error) {
	rows, err := s.pool.Query(ctx, "SELECT DISTINCT source FROM suggestions ORDER BY source")
	if err != nil {
		return nil, fmt.Errorf("list suggestion sources: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return nil, fmt.Errorf("list suggestion sources: %w", s.translate(err))
	}
	return out, nil
}
