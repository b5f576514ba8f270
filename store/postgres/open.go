// Package postgres keeps a project on a PostgreSQL server, for teams: one
// database per project, each annotator logging in as their own role, and
// row-level security in the schema deciding who may change what (see
// migrations/0001_initial.sql). It uses github.com/jackc/pgx/v5.
package postgres

import (
	"context"
	"embed"
	"errors"
	"fmt"
	"io/fs"
	"net"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"

	"boxwright/project"
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
		panic(err) // compiled in; cannot fail at run time
	}
	var ms []migration
	for _, e := range entries {
		num, name, ok := strings.Cut(strings.TrimSuffix(e.Name(), ".sql"), "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil {
			panic("postgres: migration file name must be NNNN_name.sql: " + e.Name())
		}
		body, _ := migrationFiles.ReadFile("migrations/" + e.Name())
		ms = append(ms, migration{v, name, string(body)})
	}
	sort.Slice(ms, func(i, j int) bool { return ms[i].version < ms[j].version })
	return ms
}

// LatestVersion is the schema version this program writes.
func LatestVersion() int {
	ms := migrations()
	return ms[len(ms)-1].version
}

// migrateLock is the key of the advisory lock held while migrating, so
// that two clients opening a project at once never migrate it together
// (an arbitrary constant: "boxw" in ASCII).
const migrateLock = 0x626f7877

// ErrNewerSchema is a project written by a newer Boxwright.
var ErrNewerSchema = errors.New("the project was made by a newer Boxwright")

// Store is an open server project.
type Store struct {
	pool   *pgxpool.Pool
	name   string       // the connection string without its password, for messages
	notice func(string) // SetWaitNotice
	cache  imageCache   // this machine's copies of the image bytes (imagecache.go)
}

// Open connects to an existing server project and brings its schema up
// to date. A database without the project's tables is refused; Create
// makes them.
func Open(ctx context.Context, dsn string) (*Store, error) {
	return open(ctx, dsn, false)
}

// Create makes a project in an empty database; the connecting role
// becomes its first owner. It needs the right to create roles (for the
// project's team role).
func Create(ctx context.Context, dsn string) (*Store, error) {
	return open(ctx, dsn, true)
}

func open(ctx context.Context, dsn string, create bool) (*Store, error) {
	cfg, err := pgxpool.ParseConfig(dsn)
	if err != nil {
		return nil, fmt.Errorf("server project: the connection string cannot be read: %v", redact(err))
	}
	s := &Store{name: describe(cfg.ConnConfig)}
	s.pool, err = pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		return nil, s.connectError(err)
	}
	if err := s.pool.Ping(ctx); err != nil {
		s.pool.Close()
		return nil, s.connectError(err)
	}
	if err := s.migrate(ctx, create); err != nil {
		s.pool.Close()
		return nil, err
	}
	if !create {
		if err := s.checkCopyFinished(ctx); err != nil {
			s.pool.Close()
			return nil, err
		}
	}
	return s, nil
}

// Close ends the connections.
func (s *Store) Close() error {
	s.pool.Close()
	return nil
}

// Path names the project: its server and database, without a password.
func (s *Store) Path() string { return s.name }

// SchemaVersion is the schema version of the project.
func (s *Store) SchemaVersion(ctx context.Context) (int, error) {
	var v int
	err := s.pool.QueryRow(ctx, "SELECT coalesce(max(version), 0) FROM schema_migrations").Scan(&v)
	return v, s.translate(err)
}

// migrate applies the migrations the database lacks, each in its own
// transaction with the record that it was applied, under an advisory lock.
func (s *Store) migrate(ctx context.Context, create bool) error {
	conn, err := s.pool.Acquire(ctx)
	if err != nil {
		return s.connectError(err)
	}
	defer conn.Release()
	if _, err := conn.Exec(ctx, "SELECT pg_advisory_lock($1)", migrateLock); err != nil {
		return fmt.Errorf("%s: waiting for another client's schema update: %w", s.name, s.translate(err))
	}
	defer conn.Exec(context.Background(), "SELECT pg_advisory_unlock($1)", migrateLock)

	var exists bool
	if err := conn.QueryRow(ctx, "SELECT to_regclass('schema_migrations') IS NOT NULL").Scan(&exists); err != nil {
		return fmt.Errorf("%s: %w", s.name, s.translate(err))
	}
	current := 0
	if exists {
		if err := conn.QueryRow(ctx, "SELECT coalesce(max(version), 0) FROM schema_migrations").Scan(&current); err != nil {
			return fmt.Errorf("%s: reading the schema version: %w", s.name, s.translate(err))
		}
		if create && current > 0 {
			return project.Explained(project.ErrDuplicate, "%s already holds a Boxwright project: open it instead", s.name)
		}
	} else if !create {
		return project.Explained(project.ErrNotFound, "%s holds no Boxwright project: boxwright new makes one in an empty database", s.name)
	}
	if current > LatestVersion() {
		return fmt.Errorf("%s has schema version %d; this program knows up to %d: update Boxwright: %w", s.name, current, LatestVersion(), ErrNewerSchema)
	}
	for _, m := range migrations() {
		if m.version <= current {
			continue
		}
		err := inTx(ctx, conn, func(tx pgx.Tx) error {
			if _, err := tx.Exec(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
				version integer PRIMARY KEY, name text NOT NULL, applied_at timestamptz NOT NULL DEFAULT now())`); err != nil {
				return err
			}
			if _, err := tx.Exec(ctx, m.sql); err != nil {
				return err
			}
			if _, err := tx.Exec(ctx, "INSERT INTO schema_migrations(version, name) VALUES ($1, $2)", m.version, m.name); err != nil {
				return err
			}
			_, err := tx.Exec(ctx, fmt.Sprintf("GRANT SELECT ON schema_migrations TO %s", pgx.Identifier{teamRole(s.database(ctx, tx))}.Sanitize()))
			return err
		})
		if err != nil {
			return fmt.Errorf("%s: schema update %d (%s): %w", s.name, m.version, m.name, s.translate(err))
		}
	}
	return nil
}

func (s *Store) database(ctx context.Context, q interface {
	QueryRow(context.Context, string, ...any) pgx.Row
}) string {
	var db string
	q.QueryRow(ctx, "SELECT current_database()").Scan(&db)
	return db
}

// teamRole is the group role that holds a project's table privileges.
func teamRole(database string) string { return database + "_team" }

// connectError says in one line why the server could not be reached or
// refused the login.
func (s *Store) connectError(err error) error {
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		switch pe.Code {
		case "28P01", "28000":
			return fmt.Errorf("%s: the server refused the login (wrong user name or password)", s.name)
		case "3D000":
			return fmt.Errorf("%s: the server has no such database", s.name)
		}
		return fmt.Errorf("%s: %s", s.name, pe.Message)
	}
	var ne net.Error
	var oe *net.OpError
	if errors.As(err, &oe) || errors.As(err, &ne) || strings.Contains(err.Error(), "dial") {
		return fmt.Errorf("%s: the server cannot be reached (is it running, and are host and port right?)", s.name)
	}
	return fmt.Errorf("%s: %v", s.name, redact(err))
}

// describe names a connection for messages: database, server and user;
// never the password. "harbour on db.example.org:5432 (as ines)".
func describe(c *pgx.ConnConfig) string {
	return fmt.Sprintf("%s on %s:%d (as %s)", c.Database, c.Host, c.Port, c.User)
}

// redact keeps a password that a parse error quotes out of the message.
func redact(err error) string {
	msg := err.Error()
	if i := strings.Index(msg, "password="); i >= 0 {
		end := strings.IndexAny(msg[i:], " &'\"")
		if end < 0 {
			end = len(msg) - i
		}
		msg = msg[:i] + "password=…" + msg[i+end:]
	}
	return msg
}

// tx runs fn in one transaction: every edit is its own, all or nothing.
func (s *Store) tx(ctx context.Context, fn func(pgx.Tx) error) error {
	return s.translate(inTx(ctx, s.pool, fn))
}

// inTx is pgx.BeginFunc with a commit that a cancel does not cut off.
// Once fn's work is done the COMMIT goes out whatever happens to ctx: a
// cancel arriving while it is on the wire would otherwise close the
// connection with the outcome unknown, and the server may still commit
// what the caller was told had failed.
func inTx(ctx context.Context, db interface {
	Begin(context.Context) (pgx.Tx, error)
}, fn func(pgx.Tx) error) error {
	tx, err := db.Begin(ctx)
	if err != nil {
		return err
	}
	settle, done := context.WithTimeout(context.WithoutCancel(ctx), 30*time.Second)
	defer done()
	defer tx.Rollback(settle) // a no-op after the commit
	if err := fn(tx); err != nil {
		return err
	}
	return tx.Commit(settle)
}
