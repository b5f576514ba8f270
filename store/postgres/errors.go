package postgres

import (
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"boxwright/project"
)

// translate turns server errors into the domain errors of package
// project, keeping the server's message; it is the one place that knows
// PostgreSQL's error codes (SQLSTATE, PostgreSQL manual, appendix A).
func (s *Store) translate(err error) error {
	if err == nil {
		return nil
	}
	if errors.Is(err, pgx.ErrNoRows) {
		return project.ErrNotFound
	}
	var pe *pgconn.PgError
	if !errors.As(err, &pe) {
		return err
	}
	switch pe.Code {
	case "23505": // unique_violation
		return fmt.Errorf("%s: %w", pe.Message, project.ErrDuplicate)
	case "23503": // foreign_key_violation
		return fmt.Errorf("%s: %w", pe.Message, project.ErrInUse)
	case "23514", "23502", "22P02", "22003": // check, not null, bad text, out of range
		return project.Explained(project.ErrInvalid, "%s", pe.Message)
	case "42501": // insufficient_privilege, also a row-level security refusal
		return fmt.Errorf("%s refused it (%s): %w", s.name, pe.Message, project.ErrNotAllowed)
	}
	return err
}
