package store

import (
	"context"
	"database/sql"
	"embed"
	"fmt"
	"io/fs"
	"sort"
	"strconv"
	"strings"
)

//go:embed migrations/*.sql
var migrationFiles embed.FS

type migration struct {
	version int
	name    string
	sql     string
}

// migrations lists the embedded files NNNN_name.sql in version order.
func migrations() []migration {
	entries, err := fs.ReadDir(migrationFiles, "migrations")
	if err != nil {
		panic(err) // the files are compiled in; this cannot fail at run time
	}
	var ms []migration
	for _, e := range entries {
		num, name, ok := strings.Cut(strings.TrimSuffix(e.Name(), ".sql"), "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil {
			panic("store: migration file name must be NNNN_name.sql: " + e.Name())
		}
		body, _ := migrationFiles.ReadFile("migrations/" + e.Name())
		ms = append(ms, migration{v, name, string(body)})
	}
	sort.Slice(ms, func(i, j int) bool { return ms[i].version < ms[j].version })
	return ms
}

func latestVersion() int {
	ms := migrations()
	return ms[len(ms)-1].version
}

// SchemaVersion is the schema version of the open file.
func (s *Store) SchemaVersion(ctx context.Context) (int, error) {
	var v int
	err := s.db.QueryRowContext(ctx, "SELECT coalesce(max(version), 0) FROM schema_migrations").Scan(&v)
	return v, err
}

// migrate applies every migration the file lacks, each in its own
// transaction together with the record that it was applied. A file that
// is up to date is not written at all, so that opening it changes neither
// its bytes nor its time stamp and waits for no other writer.
func (s *Store) migrate(ctx context.Context, l look) error {
	if l.marked && l.version == latestVersion() {
		return nil
	}
	err := s.tx(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
			version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)`)
		if err != nil {
			return err
		}
		_, err = tx.ExecContext(ctx, fmt.Sprintf("PRAGMA application_id = %d", applicationID))
		return err
	})
	if err != nil {
		return fmt.Errorf("preparing schema: %w", s.damaged(err))
	}
	current, err := s.SchemaVersion(ctx)
	if err != nil {
		return fmt.Errorf("reading schema version: %w", s.damaged(err))
	}
	for _, m := range migrations() {
		if m.version <= current {
			continue
		}
		err := s.tx(ctx, func(tx *sql.Tx) error {
			if _, err := tx.ExecContext(ctx, m.sql); err != nil {
				return err
			}
			if _, err := tx.ExecContext(ctx, "INSERT INTO schema_migrations(version, name, applied_at) VALUES (?, ?, ?)",
				m.version, m.name, formatTime(s.now())); err != nil {
				return err
			}
			_, err := tx.ExecContext(ctx, fmt.Sprintf("PRAGMA user_version = %d", m.version))
			return err
		})
		if err != nil {
			return fmt.Errorf("applying schema migration %04d_%s: %w", m.version, m.name, err)
		}
	}
	return nil
}
