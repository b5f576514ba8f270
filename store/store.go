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
	"strings"
	"sync"
	"time"

	"github.com/mattn/go-sqlite3"

	"boxwright/project"
	"boxwright/project/formats"
)

// Extension is the file extension of a project file.
const Extension = ".boxw"

// applicationID marks an SQLite file as a Boxwright project ("BoxW").
const applicationID = 0x426F7857

// busyTimeout is how long SQLite's own busy handler waits for a lock
// before handing the wait back to begin, which says who holds the file
// and keeps waiting up to Store.WriteWait.
const busyTimeout = time.Second

// DefaultWriteWait is how long a writer waits for another program that
// is writing to the same project before giving up.
const DefaultWriteWait = 2 * time.Minute

// quickCheckLimit is the largest file whose every page is checked on
// open (SQLite's quick_check reads the whole file, about 0.2 s per
// 100 MB here); bigger files are checked before bulk writes only.
var quickCheckLimit int64 = 32 << 20

// Errors returned when a file cannot be opened as a project.
var (
	ErrNotProject  = errors.New("not a Boxwright project")
	ErrNewerSchema = errors.New("project was written by a newer Boxwright")
	ErrOlderSchema = errors.New("project was written by an older Boxwright")
	ErrExists      = errors.New("file already exists")
	ErrMissingFile = errors.New("no such project file")
)

// Store is an open project file.
type Store struct {
	db       *sql.DB
	path     string
	dir      string
	now      func() time.Time
	readOnly bool
	// tidy: a read-only open made the -wal/-shm files; Close removes them
	tidy bool
	// damage is what the check on open found wrong with a file opened
	// read-only; a damaged file is never opened for writing.
	damage string
	// WriteWait is how long a write waits for another program's write
	// to finish; Notice, when set, hears about the wait every few seconds.
	WriteWait time.Duration
	Notice    func(string)
}

var _ project.Store = (*Store)(nil)

// Create makes a new, empty project file at path; it refuses to overwrite
// anything that exists there.
func Create(path string) (*Store, error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			if _, serr := os.Stat(path); errors.Is(serr, os.ErrNotExist) {
				return nil, project.Explained(ErrExists, "create project %s: a link of that name exists, leading nowhere; remove it or choose another name", path)
			}
			return nil, fmt.Errorf("create project %s: %w", path, ErrExists)
		}
		if dir := filepath.Dir(path); errors.Is(err, os.ErrNotExist) {
			return nil, project.Explained(os.ErrNotExist, "create project %s: the folder %s does not exist (make it first)", path, dir)
		}
		return nil, fmt.Errorf("create project %s: %w", path, err)
	}
	f.Close()
	s, err := open(path, false)
	if err != nil {
		os.Remove(path)
		os.Remove(path + "-wal")
		os.Remove(path + "-shm")
		return nil, err
	}
	return s, nil
}

// Open opens an existing project file for reading and writing and brings
// its schema up to date. A file from a newer program, one that is not a
// project, and a damaged one are refused without being changed.
func Open(path string) (*Store, error) {
	if err := existingFile(path); err != nil {
		return nil, err
	}
	return open(path, false)
}

// OpenReadOnly opens an existing project for looking only: nothing is
// written to the file or its folder (beyond SQLite's shared-memory file
// while open, where the folder allows it), so it works on read-only files
// and folders and leaves the file's bytes and time stamp alone. A damaged
// file opens, so that what is still readable can be looked at and
// exported; Damage says what is wrong. A file of an older schema is
// refused with ErrOlderSchema: it needs one read-write open to update.
func OpenReadOnly(path string) (*Store, error) {
	if err := existingFile(path); err != nil {
		return nil, err
	}
	return open(path, true)
}

func existingFile(path string) error {
	st, err := os.Stat(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("open project %s: %w", path, ErrMissingFile)
		}
		return fmt.Errorf("open project %s: %w", path, err)
	}
	if st.IsDir() {
		return project.Explained(ErrNotProject, "open project %s: it is a folder, not a project file", path)
	}
	if !st.Mode().IsRegular() {
		return project.Explained(ErrNotProject, "open project %s: it is %s, not a project file", path, formats.Kind(st.Mode()))
	}
	// SQLite would take an empty file for a new database and make it a
	// project; only Create does that. (A WAL-mode project always has its
	// header in the main file, so an empty one is never a project.)
	if st.Size() == 0 {
		return project.Explained(ErrNotProject, "open project %s: the file is empty (0 bytes), not a project; boxwright new makes one", path)
	}
	return nil
}

func open(path string, readOnly bool) (*Store, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	look, err := probe(abs)
	if err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, err)
	}
	if look.damage != "" && !readOnly {
		return nil, &DamagedError{Path: abs, Detail: look.damage}
	}
	if readOnly && look.fresh {
		return nil, fmt.Errorf("open project %s: an empty SQLite file: %w", path, ErrNotProject)
	}
	if readOnly && look.version < latestVersion() {
		return nil, fmt.Errorf("open project %s: schema version %d, this program writes %d; open it once for writing to update it: %w",
			path, look.version, latestVersion(), ErrOlderSchema)
	}
	var db *sql.DB
	tidy := readOnly && !sidecarsExist(abs)
	if readOnly {
		db, err = openRO(abs, url.Values{"_foreign_keys": {"1"}})
	} else {
		db, err = openRW(abs)
	}
	if err != nil {
		return nil, fmt.Errorf("open project %s: %w", path, translateCode(err))
	}
	s := &Store{db: db, path: abs, dir: filepath.Dir(abs), now: func() time.Time { return time.Now().UTC() },
		readOnly: readOnly, tidy: tidy, damage: look.damage, WriteWait: DefaultWriteWait}
	openHere.add(abs, 1)
	if !readOnly {
		if err := s.migrate(context.Background(), look); err != nil {
			db.Close()
			openHere.add(abs, -1)
			return nil, fmt.Errorf("open project %s: %w", path, s.translate(err))
		}
	}
	return s, nil
}

func openRW(abs string) (*sql.DB, error) {
	q := url.Values{}
	q.Set("mode", "rw")
	q.Set("_journal_mode", "WAL")
	q.Set("_foreign_keys", "1")
	q.Set("_busy_timeout", fmt.Sprint(busyTimeout.Milliseconds()))
	q.Set("_synchronous", "NORMAL")
	// Writers take the lock when they begin, so that a busy database makes
	// them wait (see begin) instead of failing on upgrade.
	q.Set("_txlock", "immediate")
	db, err := sql.Open("sqlite3", fileURI(abs, q))
	if err != nil {
		return nil, err
	}
	if err := db.Ping(); err != nil {
		db.Close()
		return nil, err
	}
	return db, nil
}

// openRO opens the file read-only. A WAL-mode file needs its -shm file;
// where the folder is read-only and none exists, SQLite cannot make one,
// and the file is then read as immutable (no other program can be
// writing it through this folder either).
func openRO(abs string, extra url.Values) (*sql.DB, error) {
	try := func(immutable bool) (*sql.DB, error) {
		q := url.Values{}
		for k, v := range extra {
			q[k] = v
		}
		q.Set("mode", "ro")
		// database/sql hands a connection to one goroutine at a time, so
		// SQLite's own lock around every call on it (every column of every
		// row read) is not needed: about a fifth of the cost of reading
		// many rows.
		q.Set("_mutex", "no")
		if immutable {
			q.Set("immutable", "1")
		}
		db, err := sql.Open("sqlite3", fileURI(abs, q))
		if err != nil {
			return nil, err
		}
		var n int
		if err := db.QueryRow("SELECT count(*) FROM sqlite_master").Scan(&n); err != nil {
			db.Close()
			return nil, err
		}
		return db, nil
	}
	db, err := try(false)
	var se sqlite3.Error
	if err != nil && errors.As(err, &se) && (se.Code == sqlite3.ErrCantOpen || se.Code == sqlite3.ErrReadonly) {
		return try(true)
	}
	return db, err
}

func fileURI(abs string, q url.Values) string {
	u := url.URL{Scheme: "file", Path: filepath.ToSlash(abs), RawQuery: q.Encode()}
	return u.String()
}

// look is what probe found in a file before anything was written.
type look struct {
	fresh   bool // an empty SQLite database, for Create to make a project of
	marked  bool // carries the project's application id
	version int
	damage  string
}

// probe looks at the file read-only and refuses files that are not
// projects or that come from a newer program, before anything is written.
func probe(abs string) (look, error) {
	if !sidecarsExist(abs) {
		defer removeIdleSidecars(abs)
	}
	var l look
	if st, err := os.Stat(abs); err == nil && st.Size() == 0 {
		l.fresh = true // only Create gets here with an empty file
		return l, nil
	}
	db, err := openRO(abs, nil)
	if err != nil {
		if errors.Is(translateCode(err), project.ErrDamaged) && !errors.Is(notProject(err), ErrNotProject) {
			l.damage = err.Error()
			return l, nil
		}
		return look{}, notProject(err)
	}
	defer db.Close()
	if l.damage, err = checkHeader(db, abs); err != nil || l.damage != "" {
		return l, err
	}
	var appID, tables int
	if err := db.QueryRow("PRAGMA application_id").Scan(&appID); err != nil {
		return l, notProject(err)
	}
	if err := db.QueryRow("SELECT count(*) FROM sqlite_master").Scan(&tables); err != nil {
		return l, notProject(err)
	}
	l.marked = appID == applicationID
	if !l.marked {
		switch {
		case tables == 0:
			l.fresh = true
			return l, nil // an empty SQLite file: a project yet to be made
		case appID == 0 && recoveredProject(db):
			// sqlite3's .dump/.recover keep the tables but not the mark.
		default:
			return l, fmt.Errorf("an SQLite database of another program: %w", ErrNotProject)
		}
	}
	err = db.QueryRow("SELECT coalesce(max(version), 0) FROM schema_migrations").Scan(&l.version)
	if err != nil {
		if errors.Is(translateCode(err), project.ErrDamaged) {
			l.damage = err.Error()
			return l, nil
		}
		return l, fmt.Errorf("reading schema version: %w", notProject(err))
	}
	if known := latestVersion(); l.version > known {
		return l, fmt.Errorf("schema version %d, this program knows up to %d; update Boxwright to open it: %w", l.version, known, ErrNewerSchema)
	}
	if st, err := os.Stat(abs); err == nil && st.Size() <= quickCheckLimit {
		l.damage, err = quickCheck(context.Background(), db)
		if err != nil {
			return l, err
		}
	}
	return l, nil
}

// recoveredProject says whether an unmarked database holds a project's
// schema record, as a copy made by the sqlite3 tool does.
func recoveredProject(db *sql.DB) bool {
	var name string
	err := db.QueryRow("SELECT name FROM schema_migrations WHERE version = 1").Scan(&name)
	return err == nil && name == migrations()[0].name
}

// A read-only connection to a WAL-mode file makes SQLite create the -wal
// and -shm files but not remove them; removeIdleSidecars does, when the
// log is empty and no other process has the file open, so that reading a
// project leaves its folder as it was.
func removeIdleSidecars(abs string) {
	if openHere.count(abs) > 0 {
		return
	}
	if st, err := os.Stat(abs + "-wal"); err == nil && st.Size() == 0 && !inUseElsewhere(abs) {
		os.Remove(abs + "-wal")
		os.Remove(abs + "-shm")
	}
}

// openHere counts the Stores of this process on each file, which the
// kernel's lock table does not tell apart from this one.
var openHere = openCount{n: map[string]int{}}

type openCount struct {
	mu sync.Mutex
	n  map[string]int
}

func (o *openCount) add(abs string, d int) {
	o.mu.Lock()
	o.n[abs] += d
	if o.n[abs] <= 0 {
		delete(o.n, abs)
	}
	o.mu.Unlock()
}

func (o *openCount) count(abs string) int {
	o.mu.Lock()
	defer o.mu.Unlock()
	return o.n[abs]
}

func sidecarsExist(abs string) bool {
	_, walErr := os.Stat(abs + "-wal")
	_, shmErr := os.Stat(abs + "-shm")
	return walErr == nil || shmErr == nil
}

func notProject(err error) error {
	var se sqlite3.Error
	if errors.As(err, &se) && (se.Code == sqlite3.ErrNotADB || se.Code == sqlite3.ErrCorrupt) {
		return fmt.Errorf("not an SQLite database (%v): %w", se.Code, ErrNotProject)
	}
	return err
}

// ReadOnly says whether the project was opened for reading only.
func (s *Store) ReadOnly() bool { return s.readOnly }

// SetWaitNotice routes the messages of a writer waiting for another.
func (s *Store) SetWaitNotice(f func(string)) { s.Notice = f }

// Damage is what the check on open found wrong with a file opened
// read-only ("" when the check passed or was not run).
func (s *Store) Damage() string { return s.damage }

// Path is the absolute path of the project file.
func (s *Store) Path() string { return s.path }

// Dir is the folder holding the project file; relative image paths start
// there.
func (s *Store) Dir() string { return s.dir }

// Close checkpoints the write-ahead log and closes the file.
func (s *Store) Close() error {
	if !s.readOnly {
		s.db.Exec("PRAGMA wal_checkpoint(TRUNCATE)")
	}
	err := s.db.Close()
	openHere.add(s.path, -1)
	if s.tidy {
		removeIdleSidecars(s.path)
	}
	return err
}

// DB gives tests and maintenance code the underlying database.
func (s *Store) DB() *sql.DB { return s.db }

// tx runs fn in one write transaction; any error rolls everything back.
func (s *Store) tx(ctx context.Context, fn func(*sql.Tx) error) error {
	tx, err := s.begin(ctx)
	return s.runTx(tx, err, fn)
}

// runTx runs fn in tx, just begun (or failed to begin with err), and
// commits; any error rolls everything back.
func (s *Store) runTx(tx *sql.Tx, err error, fn func(*sql.Tx) error) error {
	if err != nil {
		return s.damaged(err)
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return s.damaged(err)
	}
	return s.damaged(tx.Commit())
}

// damaged turns an error that met a damaged page into a DamagedError
// naming this file, and one that met a read-only file into the reason
// naming it; every other error is left as it is.
func (s *Store) damaged(err error) error {
	if c := translateCode(err); errors.Is(c, project.ErrDamaged) || errors.Is(c, project.ErrReadOnly) {
		return s.translate(err)
	}
	return err
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

// translateCode turns database errors into the domain errors of package
// project, keeping the message; it is the one place that knows SQLite's
// error codes.
func translateCode(err error) error {
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
			return project.Explained(project.ErrInvalid, "%v", err)
		}
		switch se.Code {
		case sqlite3.ErrCorrupt, sqlite3.ErrNotADB:
			return fmt.Errorf("%v: %w", err, project.ErrDamaged)
		case sqlite3.ErrReadonly:
			return fmt.Errorf("%v: %w", err, project.ErrReadOnly)
		case sqlite3.ErrBusy, sqlite3.ErrLocked:
			return fmt.Errorf("%v: %w", err, project.ErrBusy)
		}
	}
	return err
}

// translate is translateCode with this file named where a person needs
// it to act: a damaged file gets the recovery advice, a read-only one the
// reason.
func (s *Store) translate(err error) error {
	err = translateCode(err)
	var de *DamagedError
	switch {
	case err == nil || errors.As(err, &de):
		return err
	case errors.Is(err, project.ErrDamaged):
		return &DamagedError{Path: s.path, Detail: strings.TrimSuffix(err.Error(), ": "+project.ErrDamaged.Error())}
	case errors.Is(err, project.ErrReadOnly) && !s.readOnly:
		// The database's own words ("attempt to write a readonly
		// database: read-only") add nothing a person can act on.
		return project.Explained(project.ErrReadOnly, "cannot write to %s: the file or its folder is read-only for this user (make both writable, or work on a copy)", s.path)
	case errors.Is(err, project.ErrReadOnly):
		return fmt.Errorf("%s is open read-only, so nothing can be changed: %w", s.path, project.ErrReadOnly)
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
