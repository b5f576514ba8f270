package postgres

import (
	"testing"

	"boxwright/store/postgres/pgtest"
)

// ownerProject is a fresh server project on a private server, opened by
// its owner olga (a role that may create roles, not a superuser) who also
// labels as annotator 1, for the tests of one package's methods;
// teamProject adds annotators.
func ownerProject(t *testing.T) (*pgtest.Server, *Store) {
	t.Helper()
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(t, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := Create(bg, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	// olga labels too, as annotator 1 (a maker becomes an annotator only
	// when adding one of their own name).
	if a, err := s.EnsureAnnotator(bg, "olga"); err != nil || a.ID != 1 {
		t.Fatalf("olga as an annotator: %+v, %v", a, err)
	}
	return srv, s
}
