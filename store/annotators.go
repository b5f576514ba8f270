package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"boxwright/project"
)

func scanAnnotator(row interface{ Scan(...any) error }) (project.Annotator, error) {
	var a project.Annotator
	var created string
	err := row.Scan(&a.ID, &a.Name, &created)
	a.Created = parseTime(created)
	return a, err
}

// Annotators lists the annotators by name.
func (s *Store) Annotators(ctx context.Context) ([]project.Annotator, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT id, name, created_at FROM annotators ORDER BY name, id")
	if err != nil {
		return nil, fmt.Errorf("list annotators: %w", s.damaged(err))
	}
	defer rows.Close()
	var out []project.Annotator
	for rows.Next() {
		a, err := scanAnnotator(rows)
		if err != nil {
			return nil, fmt.Errorf("list annotators: %w", s.damaged(err))
		}
		out = append(out, a)
	}
	return out, s.damaged(rows.Err())
}

// Annotator reads one annotator.
func (s *Store) Annotator(ctx context.Context, id int64) (project.Annotator, error) {
	a, err := scanAnnotator(s.db.QueryRowContext(ctx, "SELECT id, name, created_at FROM annotators WHERE id = ?", id))
	if err != nil {
		return a, fmt.Errorf("annotator %d: %w", id, s.translate(err))
	}
	return a, nil
}

// AnnotatorByName finds an annotator by exact name.
func (s *Store) AnnotatorByName(ctx context.Context, name string) (project.Annotator, error) {
	a, err := scanAnnotator(s.db.QueryRowContext(ctx, "SELECT id, name, created_at FROM annotators WHERE name = ?", name))
	if err = s.translate(err); errors.Is(err, project.ErrNotFound) {
		return a, project.Explained(project.ErrNotFound, "annotator %q: not found; %s", name, s.annotatorNames(ctx))
	}
	if err != nil {
		return a, fmt.Errorf("annotator %q: %w", name, err)
	}
	return a, nil
}

// annotatorNames says which annotators the project has, for a message
// about one it does not have (names are case-sensitive: "ines" is not
// "Ines").
func (s *Store) annotatorNames(ctx context.Context) string {
	rows, err := s.db.QueryContext(ctx, "SELECT name FROM annotators ORDER BY name LIMIT 21")
	if err != nil {
		return "the project's annotators could not be listed"
	}
	defer rows.Close()
	var names []string
	for rows.Next() {
		var n string
		if rows.Scan(&n) == nil {
			names = append(names, strconv.Quote(n))
		}
	}
	switch {
	case len(names) == 0:
		return "the project has no annotators yet"
	case len(names) > 20:
		return "the project's annotators include " + strings.Join(names[:20], ", ") + " …"
	}
	return "the project's annotators are " + strings.Join(names, ", ")
}

// AddAnnotator stores a new annotator.
func (s *Store) AddAnnotator(ctx context.Context, name string) (project.Annotator, error) {
	if err := project.ValidateName("annotator", name); err != nil {
		return project.Annotator{}, project.Explained(project.ErrInvalid, "add annotator: %v", err)
	}
	a := project.Annotator{Name: name, Created: s.now()}
	res, err := s.exec(ctx, "INSERT INTO annotators(name, created_at) VALUES (?, ?)", name, formatTime(a.Created))
	if err != nil {
		return a, fmt.Errorf("add annotator %q: %w", name, s.translate(err))
	}
	a.ID, _ = res.LastInsertId()
	return a, nil
}

// EnsureAnnotator returns the annotator of that name, adding it if new.
// When another connection adds the name between the look-up and the
// insert, the insert's duplicate is that annotator.
func (s *Store) EnsureAnnotator(ctx context.Context, name string) (project.Annotator, error) {
	a, err := s.AnnotatorByName(ctx, name)
	if !errors.Is(err, project.ErrNotFound) {
		return a, err
	}
	a, err = s.AddAnnotator(ctx, name)
	if errors.Is(err, project.ErrDuplicate) {
		return s.AnnotatorByName(ctx, name)
	}
	return a, err
}

// RenameAnnotator changes an annotator's name; the labels stay theirs.
func (s *Store) RenameAnnotator(ctx context.Context, id int64, name string) error {
	if err := project.ValidateName("annotator", name); err != nil {
		return project.Explained(project.ErrInvalid, "rename annotator: %v", err)
	}
	res, err := s.exec(ctx, "UPDATE annotators SET name = ? WHERE id = ?", name, id)
	if err != nil {
		return fmt.Errorf("rename annotator %d to %q: %w", id, name, s.translate(err))
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("rename annotator %d: %w", id, project.ErrNotFound)
	}
	return nil
}

// DeleteAnnotator removes an annotator who has no labels and reviewed no
// suggestions; otherwise it fails with project.ErrInUse.
func (s *Store) DeleteAnnotator(ctx context.Context, id int64) error {
	return s.tx(ctx, func(tx *sql.Tx) error {
		var n int
		tx.QueryRowContext(ctx, "SELECT (SELECT count(*) FROM labels WHERE annotator_id = ?) + (SELECT count(*) FROM suggestions WHERE reviewer_id = ?)", id, id).Scan(&n)
		if n > 0 {
			return fmt.Errorf("delete annotator %d: %d labels or reviews belong to them: %w", id, n, project.ErrInUse)
		}
		res, err := tx.ExecContext(ctx, "DELETE FROM annotators WHERE id = ?", id)
		if err != nil {
			return fmt.Errorf("delete annotator %d: %w", id, s.translate(err))
		}
		if k, _ := res.RowsAffected(); k == 0 {
			return fmt.Errorf("delete annotator %d: %w", id, project.ErrNotFound)
		}
		return nil
	})
}
