// Package pgtest starts a private PostgreSQL server for tests, from the
// programs of Debian's postgresql package: initdb into a temporary folder,
// the server listening only on a Unix socket in that folder (no TCP port,
// so nothing else on the machine sees it or is disturbed by it), stopped
// and removed when the test ends. Nothing depends on a server that is
// already running.
package pgtest

import (
	"bytes"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// Admin is the server's superuser. Over the socket it logs in without a
// password; every other role needs its password (scram-sha-256), so tests
// of wrong passwords and of one annotator's rights are real.
const Admin = "boxwright_admin"

// Server is a running private server.
type Server struct {
	bin    string // folder of initdb, pg_ctl and postgres
	dir    string // everything of this server: data, socket, log
	Socket string // folder of the Unix socket (the "host" of a DSN)
	Port   int
	asUser string // the user the server runs as when the test runs as root
}

// Start starts a server for the test and stops it when the test ends.
// Without Debian's postgresql package it skips the test, saying so
// loudly, except under CI (CI set), where it fails.
func Start(tb testing.TB) *Server {
	tb.Helper()
	bin, err := findBin()
	if err != nil {
		if os.Getenv("CI") != "" {
			tb.Fatalf("PostgreSQL tests cannot run under CI: %v (make test-deps installs the postgresql package)", err)
		}
		tb.Skipf("SKIPPING the PostgreSQL tests: %v (apt-get install postgresql, or make test-deps)", err)
	}
	s := &Server{bin: bin, Port: 20000 + rand.IntN(40000)}
	// initdb refuses to run as root: the server then runs as the
	// postgres user the package made, in a folder that user owns.
	if os.Geteuid() == 0 {
		s.asUser = "postgres"
	}
	s.dir, err = os.MkdirTemp("", "boxwright-pg-")
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { os.RemoveAll(s.dir) })
	s.Socket = s.dir
	if s.asUser != "" {
		if err := os.Chmod(s.dir, 0o755); err != nil {
			tb.Fatal(err)
		}
		u, err := user.Lookup(s.asUser)
		if err != nil {
			tb.Fatalf("running as root, PostgreSQL needs the %s user of the postgresql package: %v", s.asUser, err)
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		if err := os.Chown(s.dir, uid, gid); err != nil {
			tb.Fatal(err)
		}
	}
	hba := filepath.Join(s.dir, "hba.conf")
	if err := s.initData(); err != nil {
		tb.Fatalf("initdb: %v", err)
	}
	conf := fmt.Sprintf("local all %s trust\nlocal all all scram-sha-256\n", Admin)
	if err := os.WriteFile(hba, []byte(conf), 0o644); err != nil {
		tb.Fatal(err)
	}
	if s.asUser != "" {
		s.run("chown_hba") // see run: hands the file to the server's user
	}
	if err := s.start(); err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { s.Stop() })
	return s
}

func (s *Server) data() string { return filepath.Join(s.dir, "data") }

// template is a data folder made by initdb once per test process and
// copied for each server: initdb takes most of a server's start-up.
var template struct {
	sync.Mutex
	dir string
}

// initData fills the server's data folder: a copy of the process's
// template, made first when there is none.
func (s *Server) initData() error {
	template.Lock()
	defer template.Unlock()
	if template.dir == "" {
		// Test processes cannot clean up after themselves at exit; the
		// templates of runs long over are removed here instead.
		old, _ := filepath.Glob(filepath.Join(os.TempDir(), "boxwright-pgtemplate-*"))
		for _, o := range old {
			if st, err := os.Stat(o); err == nil && time.Since(st.ModTime()) > 6*time.Hour {
				os.RemoveAll(o)
			}
		}
		dir, err := os.MkdirTemp("", "boxwright-pgtemplate-")
		if err != nil {
			return err
		}
		if s.asUser != "" {
			os.Chmod(dir, 0o755)
			exec.Command("chown", s.asUser, dir).Run()
		}
		t := &Server{bin: s.bin, dir: dir, asUser: s.asUser}
		if err := t.run("initdb", "-D", t.data(), "-U", Admin, "-E", "UTF8", "--locale=C", "--no-sync", "--auth=trust"); err != nil {
			os.RemoveAll(dir)
			return err
		}
		template.dir = t.data()
	}
	// cp -a keeps the owner and the 0700 mode the server insists on.
	if out, err := exec.Command("cp", "-a", template.dir, s.data()).CombinedOutput(); err != nil {
		return fmt.Errorf("copying the template data folder: %v: %s", err, out)
	}
	return nil
}
func (s *Server) log() string { return filepath.Join(s.dir, "server.log") }

func (s *Server) start() error {
	opts := fmt.Sprintf("-k %s -c listen_addresses='' -p %d -c hba_file=%s -c fsync=off -c max_connections=100",
		s.Socket, s.Port, filepath.Join(s.dir, "hba.conf"))
	if err := s.run("pg_ctl", "start", "-w", "-t", "60", "-D", s.data(), "-l", s.log(), "-o", opts); err != nil {
		logText, _ := os.ReadFile(s.log())
		return fmt.Errorf("pg_ctl start: %v\n%s", err, logText)
	}
	return nil
}

// Stop stops the server (fast shutdown: open sessions are ended).
func (s *Server) Stop() {
	s.run("pg_ctl", "stop", "-w", "-m", "fast", "-D", s.data())
}

// Start starts a server that Stop stopped (a test of a server that is
// down for a while).
func (s *Server) Start(tb testing.TB) {
	tb.Helper()
	if err := s.start(); err != nil {
		tb.Fatal(err)
	}
}

// Restart stops and starts the server as an administrator's
// `pg_ctl restart -m fast` would, cutting every open connection.
func (s *Server) Restart(tb testing.TB) {
	tb.Helper()
	if err := s.run("pg_ctl", "stop", "-w", "-m", "fast", "-D", s.data()); err != nil {
		tb.Fatalf("pg_ctl stop: %v", err)
	}
	if err := s.start(); err != nil {
		tb.Fatal(err)
	}
}

// DSN is a connection string for user (with password, "" for none) to
// database db on this server.
func (s *Server) DSN(user, password, db string) string {
	d := fmt.Sprintf("host=%s port=%d user=%s dbname=%s sslmode=disable connect_timeout=10", s.Socket, s.Port, user, db)
	if password != "" {
		d += " password=" + quote(password)
	}
	return d
}

// URL is DSN as a postgres:// URL, the form a person types.
func (s *Server) URL(user, password, db string) string {
	cred := user
	if password != "" {
		cred += ":" + password
	}
	return fmt.Sprintf("postgres://%s@/%s?host=%s&port=%d&sslmode=disable", cred, db, s.Socket, s.Port)
}

// CreateDatabase makes an empty database owned by the superuser.
func (s *Server) CreateDatabase(tb testing.TB, name string) {
	tb.Helper()
	if err := s.psql("postgres", fmt.Sprintf(`CREATE DATABASE %q`, name)); err != nil {
		tb.Fatal(err)
	}
}

// Exec runs SQL as the superuser in database db.
func (s *Server) Exec(tb testing.TB, db, sql string) {
	tb.Helper()
	if err := s.psql(db, sql); err != nil {
		tb.Fatal(err)
	}
}

func (s *Server) psql(db, sql string) error {
	cmd := exec.CommandContext(context.Background(), filepath.Join(s.bin, "psql"), "-X", "-q", "-v", "ON_ERROR_STOP=1",
		"-h", s.Socket, "-p", strconv.Itoa(s.Port), "-U", Admin, "-d", db, "-c", sql)
	out, err := cmd.CombinedOutput()
	if err != nil {
		return fmt.Errorf("psql %q: %v: %s", sql, err, out)
	}
	return nil
}

// run runs one of the server's programs, as the server's user when the
// test runs as root.
func (s *Server) run(prog string, args ...string) error {
	var cmd *exec.Cmd
	switch {
	case prog == "chown_hba":
		cmd = exec.Command("chown", s.asUser, filepath.Join(s.dir, "hba.conf"))
	case s.asUser != "":
		cmd = exec.Command("runuser", append([]string{"-u", s.asUser, "--", filepath.Join(s.bin, prog)}, args...)...)
	default:
		cmd = exec.Command(filepath.Join(s.bin, prog), args...)
	}
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	cmd.Dir = s.dir
	done := make(chan error, 1)
	if err := cmd.Start(); err != nil {
		return err
	}
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		if err != nil {
			return fmt.Errorf("%s: %v: %s", prog, err, strings.TrimSpace(out.String()))
		}
		return nil
	case <-time.After(2 * time.Minute):
		cmd.Process.Kill()
		return fmt.Errorf("%s: still running after 2 minutes: %s", prog, out.String())
	}
}

// findBin finds the newest installed server version's programs (Debian
// keeps them under /usr/lib/postgresql/VERSION/bin).
func findBin() (string, error) {
	dirs, _ := filepath.Glob("/usr/lib/postgresql/*/bin")
	sort.Slice(dirs, func(i, j int) bool {
		vi, _ := strconv.Atoi(filepath.Base(filepath.Dir(dirs[i])))
		vj, _ := strconv.Atoi(filepath.Base(filepath.Dir(dirs[j])))
		return vi > vj
	})
	for _, d := range dirs {
		if _, err := os.Stat(filepath.Join(d, "initdb")); err == nil {
			return d, nil
		}
	}
	return "", fmt.Errorf("no PostgreSQL server programs under /usr/lib/postgresql/*/bin")
}

func quote(v string) string {
	return "'" + strings.NewReplacer(`\`, `\\`, `'`, `\'`).Replace(v) + "'"
}
