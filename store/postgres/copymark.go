package postgres

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// ErrUnfinishedCopy is a server project that a copy into it did not
// finish filling (see MarkCopying).
var ErrUnfinishedCopy = errors.New("a copy into this project did not finish")

// MarkCopying marks the project unfinished: a copy from source is filling
// it. Until FinishCopying, Open refuses it.
func (s *Store) MarkCopying(ctx context.Context, source string) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		_, err := tx.Exec(ctx, "INSERT INTO copy_unfinished(source) VALUES ($1)", source)
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: mark the project as being copied into: %w", s.name, err)
	}
	return nil
}

// FinishCopying clears the mark of MarkCopying: the project is whole.
func (s *Store) FinishCopying(ctx context.Context) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, "DELETE FROM copy_unfinished")
		if err == nil && tag.RowsAffected() != 1 {
			return project.Explained(project.ErrInvalid, "the project was not marked as being copied into")
		}
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: mark the copy finished: %w", s.name, err)
	}
	return nil
}

// DiscardCopy empties the database of a project marked unfinished: every
// table and function of the project (those in schema public owned by the
// connecting role, who made them) is dropped in one transaction, so that
// the database is as before Create and a copy can start over. A project
// without the mark is refused: this never deletes a finished project.
func (s *Store) DiscardCopy(ctx context.Context) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		var n int
		if err := tx.QueryRow(ctx, "SELECT count(*) FROM copy_unfinished").Scan(&n); err != nil {
			return err
		}
		if n == 0 {
			return project.Explained(project.ErrInvalid, "the project is not marked as an unfinished copy; nothing was dropped")
		}
		_, err := tx.Exec(ctx, `DO $$
DECLARE r record;
BEGIN
    FOR r IN SELECT c.relname FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
             WHERE n.nspname = 'public' AND c.relkind IN ('r', 'p') AND c.relowner = (SELECT oid FROM pg_roles WHERE rolname = current_user) LOOP
        EXECUTE format('DROP TABLE IF EXISTS public.%I CASCADE', r.relname);
    END LOOP;
    FOR r IN SELECT p.oid::regprocedure AS f FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace
             WHERE n.nspname = 'public' AND p.proowner = (SELECT oid FROM pg_roles WHERE rolname = current_user) LOOP
        EXECUTE format('DROP FUNCTION IF EXISTS %s CASCADE', r.f);
    END LOOP;
END
$$`)
		return err
	})
	if err != nil {
		return fmt.Errorf("%s: empty the unfinished copy: %w", s.name, err)
	}
	return nil
}

// checkCopyFinished refuses a project marked by MarkCopying.
func (s *Store) checkCopyFinished(ctx context.Context) error {
	var source string
	var started time.Time
	err := s.pool.QueryRow(ctx, "SELECT source, started_at FROM copy_unfinished").Scan(&source, &started)
	if errors.Is(err, pgx.ErrNoRows) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("%s: %w", s.name, s.translate(err))
	}
	return fmt.Errorf("%s: a copy into it from %s, started %s, did not finish, so the project is incomplete; "+
		"to start over, empty the database (as its owner: DROP DATABASE and CREATE DATABASE again) and run boxwright copy again: %w",
		s.name, source, started.Local().Format("2006-01-02 15:04"), ErrUnfinishedCopy)
}
