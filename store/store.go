// Package store keeps a Boxwright project in one SQLite file and reads the
// project's image files. It implements project.Store.
package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"time"

	"github.com/mattn/go-sqlite3"

	"boxwright/project"
)

// Extension is the file extension of a project file.
const Extension = ".boxw"

// applicationID marks an SQLite file as a Boxwright project ("BoxW").
const applicationID = 0x426F7857

// BusyTimeout is how long a writer waits for another connection's lock
// before giving up.
const BusyTimeout = 5 * time.Second

// Errors returned when a file cannot be opened as a project.
var (
	ErrNotProject  = errors.New("not a Boxwright project")
	ErrNewerSchema = errors.New("project was written by a newer Boxwright")
	ErrExists      = errors.New("file already exists")
	ErrMissingFile = errors.New("no such project file")
)

// Store is an open project file.
type Store struct {
	db   *sql.DB
	path string
	dir  string
	now  func() time.Time
}

var _ project.Store = (*Store)(nil)

// Create makes a new, empty project file at path; it refuses to overwrite
// anything that exists there.
func Create(path string) (*Store, error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			return nil, fmt.Errorf("create project %s: %w", path, ErrExists)
		}
		return nil, fmt.Errorf("create project %s: %w", path, err)
	}
	f.Close()
	s, err := open(path)
	if err != nil {
		os.Remove(path)
		os.Remove(path + "-wal")
		os.Remove(path + "-shm")
		return nil, err
	}
	return s, nil
}

// Open opens an existing project file and brings its schema up to date.
// A file from a newer program, or one that is not a project, is refused
// without being changed.
func Open(path string) (*Store, error) {
	st, err := os.Stat(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("open project %s: %w", path, ErrMissingFile)
		}
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	if st.IsDir() {
		return nil, fmt.Errorf("open project %s: is a folder, not a project file: %w", path, ErrNotProject)
	}
	// SQLite would take an empty file for a new database and make it a
	// project; only Create does that. (A WAL-mode project always has its
	// header in the main file, so an empty one is never a project.)
	if st.Size() == 0 {
		return nil, fmt.Errorf("open project %s: the file is empty (0 bytes), not a project; boxwright new makes one: %w", path, ErrNotProject)
	}
	return open(path)
}

func open(path string) (*Store, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	if err := probe(abs); err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	q := url.Values{}
	q.Set("mode", "rw")
	q.Set("_journal_mode", "WAL")
	q.Set("_foreign_keys", "1")
	q.Set("_busy_timeout", fmt.Sprint(BusyTimeout.Milliseconds()))
	q.Set("_synchronous", "NORMAL")
	// Writers take the lock when they begin, so that a busy database makes
	// them wait (up to the busy timeout) instead of failing on upgrade.
	q.Set("_txlock", "immediate")
	db, err := sql.Open("sqlite3", fileURI(abs, q))
	if err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	if err := db.Ping(); err != nil {
		db.Close()
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	s := &Store{db: db, path: abs, dir: filepath.Dir(abs), now: func() time.Time { return time.Now().UTC() }}
	if err := s.migrate(context.Background()); err != nil {
		db.Close()
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	return s, nil
}

func fileURI(abs string, q url.Values) string {
	u := url.URL{Scheme: "file", Path: filepath.ToSlash(abs), RawQuery: q.Encode()}
	return u.String()
}

// probe looks at the file read-only and refuses files that are not
// projects or that come from a newer program, before anything is written.
func probe(abs string) error {
	// A read-only look at a WAL-mode file makes SQLite create the -wal and
	// -shm files; remove them again when nobody else had the file open.
	_, walErr := os.Stat(abs + "-wal")
	_, shmErr := os.Stat(abs + "-shm")
	if walErr != nil && shmErr != nil {
		defer func() {
			if st, err := os.Stat(abs + "-wal"); err == nil && st.Size() == 0 {
				os.Remove(abs + "-wal")
				os.Remove(abs + "-shm")
			}
		}()
	}
	q := url.Values{}
	q.Set("mode", "ro")
	db, err := sql.Open("sqlite3", fileURI(abs, q))
	if err != nil {
		return err
	}
	defer db.Close()
	var appID, tables int
	if err := db.QueryRow("PRAGMA application_id").Scan(&appID); err != nil {
		return notProject(err)
	}
	if err := db.QueryRow("SELECT count(*) FROM sqlite_master").Scan(&tables); err != nil {
		return notProject(err)
	}
	if appID != applicationID {
		if tables == 0 {
			return nil // an empty SQLite file: a project yet to be made
		}
		return fmt.Errorf("an SQLite database of another program: %w", ErrNotProject)
	}
	var version int
	err = db.QueryRow("SELECT coalesce(max(version), 0) FROM schema_migrations").Scan(&version)
	if err != nil {
		return fmt.Errorf("reading schema version: %w", notProject(err))
	}
	if known := latestVersion(); version > known {
		return fmt.Errorf("schema version %d, this program knows up to %d; update Boxwright to open it: %w", version, known, ErrNewerSchema)
	}
	return nil
}

func notProject(err error) error {
	var se sqlite3.Error
	if errors.As(err, &se) && (se.Code == sqlite3.ErrNotADB || se.Code == sqlite3.ErrCorrupt) {
		return fmt.Errorf("not an SQLite database (%v): %w", se.Code, ErrNotProject)
	}
	return err
}

// Path is the absolute path of the project file.
func (s *Store) Path() string { return s.path }

// Dir is the folder holding the project file; relative image paths start
// there.
func (s *Store) Dir() string { return s.dir }

// Close checkpoints the write-ahead log and closes the file.
func (s *Store) Close() error {
	s.db.Exec("PRAGMA wal_checkpoint(TRUNCATE)")
	return s.db.Close()
}

// DB gives tests and maintenance code the underlying database.
func (s *Store) DB() *sql.DB { return s.db }

// tx runs fn in one write transaction; any error rolls everything back.
func (s *Store) tx(ctx context.Context, fn func(*sql.Tx) error) error {
	tx, err := s.db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return err
	}
	return tx.Commit()
}

// readTx starts a deferred (read) transaction on one connection. Write
// transactions begin IMMEDIATE (see open), which a reader must not wait for.
func (s *Store) readTx(ctx context.Context) (*sql.Conn, func(), error) {
	conn, err := s.db.Conn(ctx)
	if err != nil {
		return nil, nil, err
	}
	if _, err := conn.ExecContext(ctx, "BEGIN DEFERRED"); err != nil {
		conn.Close()
		return nil, nil, err
	}
	return conn, func() {
		conn.ExecContext(context.Background(), "ROLLBACK")
		conn.Close()
	}, nil
}

// translate turns database errors into the domain errors of package
// project, keeping the message; it is the one place that knows SQLite's
// error codes.
func translate(err error) error {
	if err == nil {
		return nil
	}
	if errors.Is(err, sql.ErrNoRows) {
		return project.ErrNotFound
	}
	var se sqlite3.Error
	if errors.As(err, &se) {
		switch se.ExtendedCode {
		case sqlite3.ErrConstraintUnique, sqlite3.ErrConstraintPrimaryKey:
			return fmt.Errorf("%v: %w", err, project.ErrDuplicate)
		case sqlite3.ErrConstraintForeignKey:
			return fmt.Errorf("%v: %w", err, project.ErrInUse)
		case sqlite3.ErrConstraintCheck, sqlite3.ErrConstraintNotNull:
			return fmt.Errorf("%v: %w", err, project.ErrInvalid)
		}
	}
	return err
}

const timeFormat = time.RFC3339Nano

func formatTime(t time.Time) string { return t.UTC().Format(timeFormat) }

func parseTime(s string) time.Time {
	t, _ := time.Parse(timeFormat, s)
	return t
}

func parseNullTime(s sql.NullString) time.Time {
	if !s.Valid {
		return time.Time{}
	}
	return parseTime(s.String)
}
