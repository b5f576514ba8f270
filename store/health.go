package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"boxwright/project"
)

// DamagedError says a project file failed SQLite's consistency checks. It
// names the file and how to get the data back; errors.Is(err,
// project.ErrDamaged) holds.
type DamagedError struct {
	Path   string
	Detail string // what SQLite reported
}

func (e *DamagedError) Error() string {
	base := filepath.Base(e.Path)
	rec := strings.TrimSuffix(base, Extension) + "-recovered" + Extension
	return fmt.Sprintf("project %s is damaged (%s), so nothing is written to it. "+
		"To recover: `boxwright recover %s %s` copies every row that can still be read into a new project "+
		"and says what was lost (the damaged file is only read); or go back to your last backup of the file",
		e.Path, e.Detail, base, rec)
}

// Is makes errors.Is(err, project.ErrDamaged) true.
func (e *DamagedError) Is(target error) bool { return target == project.ErrDamaged }

// checkHeader compares the page size the database header gives with the
// file: a file that is not a whole number of pages was cut short (a failed
// copy, a full disk). It asks SQLite rather than reading the file: closing
// a descriptor of the file would drop the locks SQLite holds on it for
// other connections of this process.
func checkHeader(db *sql.DB, abs string) (damage string, err error) {
	var pageSize int64
	if err := db.QueryRow("PRAGMA page_size").Scan(&pageSize); err != nil {
		return "", err
	}
	st, err := os.Stat(abs)
	if err != nil {
		return "", err
	}
	if pageSize < 512 || pageSize&(pageSize-1) != 0 {
		return fmt.Sprintf("the header gives page size %d, which SQLite never writes", pageSize), nil
	}
	if st.Size()%pageSize != 0 {
		return fmt.Sprintf("the file is %d bytes, not a whole number of %d-byte pages: it was cut short", st.Size(), pageSize), nil
	}
	return "", nil
}

// quickCheck runs SQLite's quick_check (every page's structure, not the
// indexes' contents) and returns its findings, "" when the file is sound.
func quickCheck(ctx context.Context, db *sql.DB) (string, error) {
	return pragmaCheck(ctx, db, "quick_check(20)")
}

func pragmaCheck(ctx context.Context, db *sql.DB, pragma string) (string, error) {
	rows, err := db.QueryContext(ctx, "PRAGMA "+pragma)
	if err != nil {
		if te := translateCode(err); errorsIsDamaged(te) {
			return err.Error(), nil
		}
		return "", err
	}
	defer rows.Close()
	var found []string
	for rows.Next() {
		var line string
		if err := rows.Scan(&line); err != nil {
			return "", err
		}
		if line = oneLine(line); line != "ok" && line != "" {
			found = append(found, line)
		}
	}
	if err := rows.Err(); err != nil {
		if !errorsIsDamaged(translateCode(err)) {
			return "", err
		}
		if len(found) == 0 { // what was reported before the check stopped says more
			found = append(found, err.Error())
		}
	}
	return strings.Join(found, "; "), nil
}

// oneLine makes SQLite's report of a check fit one line of a message.
func oneLine(report string) string {
	report = strings.ReplaceAll(report, "*** in database main ***", "")
	return strings.Join(strings.Fields(strings.ReplaceAll(report, "\n", " ")), " ")
}

// CheckBeforeBulkWrite runs the quick check before a write that touches
// many rows (imports, intake), so that a damaged file is refused before
// more is written into it. Files small enough were checked on open.
func (s *Store) CheckBeforeBulkWrite(ctx context.Context) error {
	if st, err := os.Stat(s.path); err == nil && st.Size() <= quickCheckLimit {
		return nil
	}
	damage, err := quickCheck(ctx, s.db)
	if err != nil {
		return s.translate(err)
	}
	if damage != "" {
		return &DamagedError{Path: s.path, Detail: damage}
	}
	return nil
}

// Check runs SQLite's full integrity_check (pages, indexes against their
// tables, constraints) and the foreign-key check; it returns what they
// found, nil when the file is sound.
func (s *Store) Check(ctx context.Context) ([]string, error) {
	damage, err := pragmaCheck(ctx, s.db, "integrity_check(100)")
	if err != nil {
		return nil, s.translate(err)
	}
	if strings.HasSuffix(damage, "malformed") {
		// integrity_check stopped at the first bad page without saying
		// which; quick_check, or the check on open, may say.
		if q, err := quickCheck(ctx, s.db); err == nil && q != "" && !strings.HasSuffix(q, "malformed") {
			damage = q
		} else if s.damage != "" {
			damage = s.damage
		}
	}
	var found []string
	seen := map[string]bool{}
	for _, d := range strings.Split(damage, "; ") {
		if d != "" && !seen[d] {
			seen[d] = true
			found = append(found, d)
		}
	}
	if len(found) > 0 {
		return found, nil // references are checked on a sound file only
	}
	rows, err := s.db.QueryContext(ctx, "PRAGMA foreign_key_check")
	if err != nil {
		return append(found, err.Error()), nil
	}
	defer rows.Close()
	for rows.Next() {
		var table, parent string
		var rowid sql.NullInt64
		var fk int
		if err := rows.Scan(&table, &rowid, &parent, &fk); err != nil {
			return append(found, err.Error()), nil
		}
		found = append(found, fmt.Sprintf("row %d of %s refers to a missing row of %s", rowid.Int64, table, parent))
	}
	if err := rows.Err(); err != nil {
		found = append(found, err.Error())
	}
	return found, nil
}

func errorsIsDamaged(err error) bool { return errors.Is(err, project.ErrDamaged) }
