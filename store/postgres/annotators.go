package postgres

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// The annotators of a server project, as in the SQLite file
// (store/annotators.go). The team's people are annotators too (members
// label as the annotator of their name); reviewers and owners may add
// annotators (a derived one, the consensus), annotators may not.

const annotatorColumns = "id, name, created_at"

func scanAnnotatorRow(row pgx.Row) (project.Annotator, error) {
	var a project.Annotator
	err := row.Scan(&a.ID, &a.Name, &a.Created)
	a.Created = a.Created.UTC()
	return a, err
}

// Annotators lists the annotators by name.
func (s *Store) Annotators(ctx context.Context) ([]project.Annotator, error) {
	rows, err := s.pool.Query(ctx, "SELECT "+annotatorColumns+" FROM annotators ORDER BY name, id")
	if err != nil {
		return nil, fmt.Errorf("list annotators: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Annotator, error) { return scanAnnotatorRow(r) })
	if err != nil {
		return nil, fmt.Errorf("list annotators: %w", s.translate(err))
	}
	return out, nil
}

// Annotator reads one annotator.
func (s *Store) Annotator(ctx context.Context, id int64) (project.Annotator, error) {
	a, err := scanAnnotatorRow(s.pool.QueryRow(ctx, "SELECT "+annotatorColumns+" FROM annotators WHERE id = $1", id))
	if err != nil {
		return a, fmt.Errorf("annotator %d: %w", id, s.translate(err))
	}
	return a, nil
}

// AnnotatorByName finds an annotator by exact name.
func (s *Store) AnnotatorByName(ctx context.Context, name string) (project.Annotator, error) {
	a, err := scanAnnotatorRow(s.pool.QueryRow(ctx, "SELECT "+annotatorColumns+" FROM annotators WHERE name = $1", name))
	if err != nil {
		return a, fmt.Errorf("annotator %q: %w", name, s.translate(err))
	}
	return a, nil
}

// AddAnnotator stores a new annotator. The server refuses it to a member
// who is only an annotator (project.ErrNotAllowed).
func (s *Store) AddAnnotator(ctx context.Context, name string) (project.Annotator, error) {
	if err := project.ValidateName("annotator", name); err != nil {
		return project.Annotator{}, project.Explained(project.ErrInvalid, "add annotator: %v", err)
	}
	var a project.Annotator
	err := s.tx(ctx, func(tx pgx.Tx) error {
		var err error
		a, err = scanAnnotatorRow(tx.QueryRow(ctx, "INSERT INTO annotators(name) VALUES ($1) RETURNING "+annotatorColumns, name))
		if err != nil {
			return err
		}
		// A member without an annotator yet (the project's maker) who
		// adds one of their own name labels as it from now on.
		_, err = tx.Exec(ctx, "UPDATE members SET annotator_id = $1 WHERE role_name = current_user AND role_name = $2 AND annotator_id IS NULL", a.ID, name)
		return err
	})
	if err != nil {
		return a, fmt.Errorf("add annotator %q: %w", name, s.translate(err))
	}
	return a, nil
}

// EnsureAnnotator returns the annotator of that name, adding it if new.
func (s *Store) EnsureAnnotator(ctx context.Context, name string) (project.Annotator, error) {
	a, err := s.AnnotatorByName(ctx, name)
	if errors.Is(err, project.ErrNotFound) {
		a, err = s.AddAnnotator(ctx, name)
		if errors.Is(err, project.ErrDuplicate) {
			// Someone else on the team added it in between.
			return s.AnnotatorByName(ctx, name)
		}
	}
	return a, err
}

// RenameAnnotator changes an annotator's name; the labels stay theirs.
// Only owners may (the row-level security of the schema).
func (s *Store) RenameAnnotator(ctx context.Context, id int64, name string) error {
	if err := project.ValidateName("annotator", name); err != nil {
		return project.Explained(project.ErrInvalid, "rename annotator: %v", err)
	}
	what := fmt.Sprintf("rename annotator %d to %q", id, name)
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, what); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, "UPDATE annotators SET name = $1 WHERE id = $2", name, id)
		if err == nil && tag.RowsAffected() == 0 {
			return project.ErrNotFound
		}
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return nil
}

// DeleteAnnotator removes an annotator who has no labels, reviewed no
// suggestions and is not on the team; otherwise it fails with
// project.ErrInUse.
func (s *Store) DeleteAnnotator(ctx context.Context, id int64) error {
	what := fmt.Sprintf("delete annotator %d", id)
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, what); err != nil {
			return err
		}
		var n int
		if err := tx.QueryRow(ctx, "SELECT (SELECT count(*) FROM labels WHERE annotator_id = $1) + (SELECT count(*) FROM suggestions WHERE reviewer_id = $1)", id).Scan(&n); err != nil {
			return err
		}
		if n > 0 {
			return fmt.Errorf("%d labels or reviews belong to them: %w", n, project.ErrInUse)
		}
		var member string
		if err := tx.QueryRow(ctx, "SELECT coalesce((SELECT role_name FROM members WHERE annotator_id = $1), '')", id).Scan(&member); err != nil {
			return err
		}
		if member != "" {
			return fmt.Errorf("%s on the team labels as them; take them off the team first: %w", member, project.ErrInUse)
		}
		tag, err := tx.Exec(ctx, "DELETE FROM annotators WHERE id = $1", id)
		if err == nil && tag.RowsAffected() == 0 {
			return project.ErrNotFound
		}
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return nil
}
