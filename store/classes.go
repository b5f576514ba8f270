package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"image/color"
	"strings"

	"boxwright/project"
)

const classCols = "id, name, color, hot_key"

func scanClass(row interface{ Scan(...any) error }) (project.Class, error) {
	var c project.Class
	var hex string
	if err := row.Scan(&c.ID, &c.Name, &hex, &c.HotKey); err != nil {
		return c, err
	}
	c.Color, _ = project.ParseColor(hex)
	return c, nil
}

func validHotKey(k string) error {
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
	rows, err := s.db.QueryContext(ctx, "SELECT "+classCols+" FROM classes ORDER BY position, id")
	if err != nil {
		return nil, fmt.Errorf("list classes: %w", s.damaged(err))
	}
	defer rows.Close()
	var out []project.Class
	for rows.Next() {
		c, err := scanClass(rows)
		if err != nil {
			return nil, fmt.Errorf("list classes: %w", s.damaged(err))
		}
		out = append(out, c)
	}
	return out, s.damaged(rows.Err())
}

// Class reads one class.
func (s *Store) Class(ctx context.Context, id int64) (project.Class, error) {
	c, err := scanClass(s.db.QueryRowContext(ctx, "SELECT "+classCols+" FROM classes WHERE id = ?", id))
	if err != nil {
		return c, fmt.Errorf("class %d: %w", id, s.translate(err))
	}
	return c, nil
}

// ClassByName finds a class by its exact name.
func (s *Store) ClassByName(ctx context.Context, name string) (project.Class, error) {
	c, err := scanClass(s.db.QueryRowContext(ctx, "SELECT "+classCols+" FROM classes WHERE name = ?", name))
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
	if err := validHotKey(c.HotKey); err != nil {
		return c, fmt.Errorf("add class %q: %w", c.Name, err)
	}
	err := s.tx(ctx, func(tx *sql.Tx) error {
		var err error
		c, err = insertClassTx(ctx, tx, c)
		return err
	})
	err = s.translate(err)
	if errors.Is(err, project.ErrDuplicate) {
		return c, project.Explained(project.ErrDuplicate, "add class %q: a class of that name exists already", c.Name)
	}
	if err != nil {
		return c, fmt.Errorf("add class %q: %w", c.Name, err)
	}
	return c, nil
}

// insertClassTx stores c at the end of the order, giving it the next
// palette colour and free digit key when it has none.
func insertClassTx(ctx context.Context, tx *sql.Tx, c project.Class) (project.Class, error) {
	var n, pos int
	if err := tx.QueryRowContext(ctx, "SELECT count(*), coalesce(max(position), -1) + 1 FROM classes").Scan(&n, &pos); err != nil {
		return c, err
	}
	if c.Color == (color.NRGBA{}) {
		c.Color = project.PaletteColor(n)
	}
	if c.HotKey == "" {
		c.HotKey = freeDigit(ctx, tx)
	}
	res, err := tx.ExecContext(ctx, "INSERT INTO classes(name, color, hot_key, position) VALUES (?, ?, ?, ?)",
		c.Name, project.FormatColor(c.Color), c.HotKey, pos)
	if err != nil {
		return c, translateCode(err)
	}
	c.ID, err = res.LastInsertId()
	return c, err
}

// freeDigit is the first of 1..9, 0 that no class uses, or "".
func freeDigit(ctx context.Context, tx *sql.Tx) string {
	used := map[string]bool{}
	rows, err := tx.QueryContext(ctx, "SELECT hot_key FROM classes")
	if err != nil {
		return ""
	}
	defer rows.Close()
	for rows.Next() {
		var k string
		rows.Scan(&k)
		used[k] = true
	}
	for _, k := range strings.Split("1234567890", "") {
		if !used[k] {
			return k
		}
	}
	return ""
}

// UpdateClass renames, recolours or re-keys a class; its labels keep it.
func (s *Store) UpdateClass(ctx context.Context, c project.Class) error {
	if err := project.ValidateName("class", c.Name); err != nil {
		return project.Explained(project.ErrInvalid, "class %d: %v", c.ID, err)
	}
	if err := validHotKey(c.HotKey); err != nil {
		return fmt.Errorf("update class %q: %w", c.Name, err)
	}
	res, err := s.exec(ctx, "UPDATE classes SET name = ?, color = ?, hot_key = ? WHERE id = ?",
		c.Name, project.FormatColor(c.Color), c.HotKey, c.ID)
	if err = s.translate(err); errors.Is(err, project.ErrDuplicate) {
		return project.Explained(project.ErrDuplicate, "class %q exists already: merge the two with classes merge, or choose another name", c.Name)
	}
	if err != nil {
		return fmt.Errorf("update class %q: %w", c.Name, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return fmt.Errorf("update class %d: %w", c.ID, project.ErrNotFound)
	}
	return nil
}

// RenameClass gives a class a new name, keeping its labels.
func (s *Store) RenameClass(ctx context.Context, oldName, newName string) error {
	c, err := s.ClassByName(ctx, oldName)
	if err != nil {
		return fmt.Errorf("rename class: %w", s.damaged(err))
	}
	if err := project.ValidateName("class", newName); err != nil {
		return project.Explained(project.ErrInvalid, "rename class %q: %v", oldName, err)
	}
	c.Name = newName
	return s.UpdateClass(ctx, c)
}

// DeleteClass removes a class. A class that has labels or suggestions is
// refused with project.ErrInUse unless opts moves them to another class
// (a merge) or deletes them.
func (s *Store) DeleteClass(ctx context.Context, id int64, opts project.DeleteClassOptions) error {
	c, err := s.Class(ctx, id)
	if err != nil {
		return fmt.Errorf("delete class: %w", s.damaged(err))
	}
	if opts.MoveTo == id {
		return project.Explained(project.ErrInvalid, "merge class %q: cannot merge a class into itself", c.Name)
	}
	err = s.tx(ctx, func(tx *sql.Tx) error {
		var labels, suggestions int
		tx.QueryRowContext(ctx, "SELECT count(*) FROM labels WHERE class_id = ?", id).Scan(&labels)
		tx.QueryRowContext(ctx, "SELECT count(*) FROM suggestions WHERE class_id = ?", id).Scan(&suggestions)
		switch {
		case opts.MoveTo != 0:
			var exists int
			if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM classes WHERE id = ?", opts.MoveTo).Scan(&exists); err != nil || exists == 0 {
				return fmt.Errorf("target class %d: %w", opts.MoveTo, project.ErrNotFound)
			}
			if _, err := tx.ExecContext(ctx, "UPDATE labels SET class_id = ?, updated_at = ? WHERE class_id = ?", opts.MoveTo, formatTime(s.now()), id); err != nil {
				return err
			}
			if _, err := tx.ExecContext(ctx, "UPDATE suggestions SET class_id = ? WHERE class_id = ?", opts.MoveTo, id); err != nil {
				return err
			}
		case opts.DeleteLabels:
			if _, err := tx.ExecContext(ctx, "DELETE FROM labels WHERE class_id = ?", id); err != nil {
				return err
			}
			if _, err := tx.ExecContext(ctx, "DELETE FROM suggestions WHERE class_id = ?", id); err != nil {
				return err
			}
		case labels+suggestions > 0:
			return project.Explained(project.ErrInUse, "it has %s and %s; merge it into another class or delete them with it",
				countOf(labels, "label"), countOf(suggestions, "suggestion"))
		}
		_, err := tx.ExecContext(ctx, "DELETE FROM classes WHERE id = ?", id)
		return s.translate(err)
	})
	if err != nil {
		verb := "delete class"
		if opts.MoveTo != 0 {
			verb = "merge class"
		}
		return fmt.Errorf("%s %q: %w", verb, c.Name, err)
	}
	return nil
}

// MergeClass moves every label and suggestion of class from into class
// into, then deletes from.
func (s *Store) MergeClass(ctx context.Context, from, into string) error {
	f, err := s.ClassByName(ctx, from)
	if err != nil {
		return fmt.Errorf("merge: %w", s.damaged(err))
	}
	t, err := s.ClassByName(ctx, into)
	if err != nil {
		return fmt.Errorf("merge: %w", s.damaged(err))
	}
	return s.DeleteClass(ctx, f.ID, project.DeleteClassOptions{MoveTo: t.ID})
}

// countOf says "1 label", "2 labels": a count with its noun.
func countOf(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
