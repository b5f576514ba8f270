package postgres

import (
	"context"
	"fmt"
	"image/color"
	"strings"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// The classes of a server project, as in the SQLite file (store/classes.go):
// the same checks, errors and order. Only owners change them (row-level
// security in the schema; ownerOnly says so first in one clear line).

const classColumns = "id, name, color, hot_key"

func scanClassRow(row pgx.Row) (project.Class, error) {
	var c project.Class
	var hex string
	if err := row.Scan(&c.ID, &c.Name, &hex, &c.HotKey); err != nil {
		return c, err
	}
	c.Color, _ = project.ParseColor(hex)
	return c, nil
}

func validClassHotKey(k string) error {
	if k == "" {
		return nil
	}
	if len(k) != 1 || !strings.ContainsAny(strings.ToLower(k), "0123456789abcdefghijklmnopqrstuvwxyz") {
		return project.Explained(project.ErrInvalid, "hot key %q must be one digit or letter", k)
	}
	return nil
}

// Classes lists the classes in display order.
func (s *Store) Classes(ctx context.Context) ([]project.Class, error) {
	rows, err := s.pool.Query(ctx, "SELECT "+classColumns+" FROM classes ORDER BY position, id")
	if err != nil {
		return nil, fmt.Errorf("list classes: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Class, error) { return scanClassRow(r) })
	if err != nil {
		return nil, fmt.Errorf("list classes: %w", s.translate(err))
	}
	return out, nil
}

// Class reads one class.
func (s *Store) Class(ctx context.Context, id int64) (project.Class, error) {
	c, err := scanClassRow(s.pool.QueryRow(ctx, "SELECT "+classColumns+" FROM classes WHERE id = $1", id))
	if err != nil {
		return c, fmt.Errorf("class %d: %w", id, s.translate(err))
	}
	return c, nil
}

// ClassByName finds a class by its exact name.
func (s *Store) ClassByName(ctx context.Context, name string) (project.Class, error) {
	c, err := scanClassRow(s.pool.QueryRow(ctx, "SELECT "+classColumns+" FROM classes WHERE name = $1", name))
	if err != nil {
		return c, fmt.Errorf("class %q: %w", name, s.translate(err))
	}
	return c, nil
}

// AddClass stores a new class at the end of the order. A zero colour takes
// the next palette colour; an empty hot key takes the next free digit.
func (s *Store) AddClass(ctx context.Context, c project.Class) (project.Class, error) {
	if err := project.ValidateName("class", c.Name); err != nil {
		return c, project.Explained(project.ErrInvalid, "add class: %v", err)
	}
	if err := validClassHotKey(c.HotKey); err != nil {
		return c, fmt.Errorf("add class %q: %w", c.Name, err)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, "add class "+quoteLiteral(c.Name)); err != nil {
			return err
		}
		// Two owners adding classes at once would read the same count
		// and position: the lock makes them take turns.
		if _, err := tx.Exec(ctx, "LOCK TABLE classes IN SHARE ROW EXCLUSIVE MODE"); err != nil {
			return err
		}
		var n, pos int
		if err := tx.QueryRow(ctx, "SELECT count(*), coalesce(max(position), -1) + 1 FROM classes").Scan(&n, &pos); err != nil {
			return err
		}
		if c.Color == (color.NRGBA{}) {
			c.Color = project.PaletteColor(n)
		}
		if c.HotKey == "" {
			k, err := freeClassDigit(ctx, tx)
			if err != nil {
				return err
			}
			c.HotKey = k
		}
		return tx.QueryRow(ctx, "INSERT INTO classes(name, color, hot_key, position) VALUES ($1, $2, $3, $4) RETURNING id",
			c.Name, project.FormatColor(c.Color), c.HotKey, pos).Scan(&c.ID)
	})
	if err != nil {
		return c, fmt.Errorf("add class %q: %w", c.Name, err)
	}
	return c, nil
}

// freeClassDigit is the first of 1..9, 0 that no class uses, or "".
func freeClassDigit(ctx context.Context, tx pgx.Tx) (string, error) {
	rows, err := tx.Query(ctx, "SELECT hot_key FROM classes")
	if err != nil {
		return "", err
	}
	keys, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return "", err
	}
	used := map[string]bool{}
	for _, k := range keys {
		used[k] = true
	}
	for _, k := range strings.Split("1234567890", "") {
		if !used[k] {
			return k, nil
		}
	}
	return "", nil
}

// UpdateClass renames, recolours or re-keys a class; its labels keep it.
func (s *Store) UpdateClass(ctx context.Context, c project.Class) error {
	if err := project.ValidateName("class", c.Name); err != nil {
		return project.Explained(project.ErrInvalid, "update class %d: %v", c.ID, err)
	}
	if err := validClassHotKey(c.HotKey); err != nil {
		return fmt.Errorf("update class %q: %w", c.Name, err)
	}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, "change class "+quoteLiteral(c.Name)); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, "UPDATE classes SET name = $1, color = $2, hot_key = $3 WHERE id = $4",
			c.Name, project.FormatColor(c.Color), c.HotKey, c.ID)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 0 {
			return fmt.Errorf("class %d: %w", c.ID, project.ErrNotFound)
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("update class %q: %w", c.Name, err)
	}
	return nil
}

// RenameClass gives a class a new name, keeping its labels.
func (s *Store) RenameClass(ctx context.Context, oldName, newName string) error {
	c, err := s.ClassByName(ctx, oldName)
	if err != nil {
		return fmt.Errorf("rename class: %w", err)
	}
	c.Name = newName
	return s.UpdateClass(ctx, c)
}

// DeleteClass removes a class. A class that has labels or suggestions is
// refused with project.ErrInUse unless opts moves them to another class
// (a merge) or deletes them, all in one transaction.
func (s *Store) DeleteClass(ctx context.Context, id int64, opts project.DeleteClassOptions) error {
	c, err := s.Class(ctx, id)
	if err != nil {
		return fmt.Errorf("delete class: %w", err)
	}
	if opts.MoveTo == id {
		return project.Explained(project.ErrInvalid, "merge class %q: cannot merge a class into itself", c.Name)
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if err := s.ownerOnly(ctx, tx, "delete class "+quoteLiteral(c.Name)); err != nil {
			return err
		}
		var labels, suggestions int
		if err := tx.QueryRow(ctx, "SELECT (SELECT count(*) FROM labels WHERE class_id = $1), (SELECT count(*) FROM suggestions WHERE class_id = $1)", id).
			Scan(&labels, &suggestions); err != nil {
			return err
		}
		switch {
		case opts.MoveTo != 0:
			var exists bool
			if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM classes WHERE id = $1)", opts.MoveTo).Scan(&exists); err != nil {
				return err
			}
			if !exists {
				return fmt.Errorf("target class %d: %w", opts.MoveTo, project.ErrNotFound)
			}
			if _, err := tx.Exec(ctx, "UPDATE labels SET class_id = $1, updated_at = now() WHERE class_id = $2", opts.MoveTo, id); err != nil {
				return err
			}
			if _, err := tx.Exec(ctx, "UPDATE suggestions SET class_id = $1 WHERE class_id = $2", opts.MoveTo, id); err != nil {
				return err
			}
		case opts.DeleteLabels:
			if _, err := tx.Exec(ctx, "DELETE FROM labels WHERE class_id = $1", id); err != nil {
				return err
			}
			if _, err := tx.Exec(ctx, "DELETE FROM suggestions WHERE class_id = $1", id); err != nil {
				return err
			}
		case labels+suggestions > 0:
			return fmt.Errorf("it has %d labels and %d suggestions; merge it into another class or delete them with it: %w",
				labels, suggestions, project.ErrInUse)
		}
		tag, err := tx.Exec(ctx, "DELETE FROM classes WHERE id = $1", id)
		if err == nil && tag.RowsAffected() == 0 {
			return fmt.Errorf("class %d: %w", id, project.ErrNotFound)
		}
		return err
	})
	if err != nil {
		return fmt.Errorf("delete class %q: %w", c.Name, err)
	}
	return nil
}

// MergeClass moves every label and suggestion of class from into class
// into, then deletes from.
func (s *Store) MergeClass(ctx context.Context, from, into string) error {
	f, err := s.ClassByName(ctx, from)
	if err != nil {
		return fmt.Errorf("merge: %w", err)
	}
	t, err := s.ClassByName(ctx, into)
	if err != nil {
		return fmt.Errorf("merge: %w", err)
	}
	return s.DeleteClass(ctx, f.ID, project.DeleteClassOptions{MoveTo: t.ID})
}
