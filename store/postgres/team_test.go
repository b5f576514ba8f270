package postgres

import (
	"context"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"boxwright/store/postgres/pgtest"
)

var bg = context.Background()

// The SCRAM-SHA-256 verifier reproduces the worked exchange of RFC 7677,
// section 3 (password "pencil", salt W22ZaJ0SNY7soEsUEjb6gQ==, 4096
// iterations): the client proof and the server signature computed from
// the verifier's keys are the ones printed there.
func TestScramVerifierMatchesRFC7677(t *testing.T) {
	salt, _ := base64.StdEncoding.DecodeString("W22ZaJ0SNY7soEsUEjb6gQ==")
	v, err := scramVerifierWith("pencil", salt, 4096)
	if err != nil {
		t.Fatal(err)
	}
	parts := strings.Split(strings.TrimPrefix(v, "SCRAM-SHA-256$4096:W22ZaJ0SNY7soEsUEjb6gQ==$"), ":")
	if len(parts) != 2 {
		t.Fatalf("verifier %q", v)
	}
	storedKey, _ := base64.StdEncoding.DecodeString(parts[0])
	serverKey, _ := base64.StdEncoding.DecodeString(parts[1])
	auth := "n=user,r=rOprNGfwEbeRWgbNEkqO," +
		"r=rOprNGfwEbeRWgbNEkqO%hvYDpWUa2RaTCAfuxFIlj)hNlF$k0,s=W22ZaJ0SNY7soEsUEjb6gQ==,i=4096," +
		"c=biws,r=rOprNGfwEbeRWgbNEkqO%hvYDpWUa2RaTCAfuxFIlj)hNlF$k0"
	mac := func(key []byte) []byte { h := hmac.New(sha256.New, key); h.Write([]byte(auth)); return h.Sum(nil) }
	if got := base64.StdEncoding.EncodeToString(mac(serverKey)); got != "6rriTRBi23WpRR/wtup+mMhUZUn/dB5nLTJRsjl95G4=" {
		t.Errorf("server signature %s", got)
	}
	// ClientProof = ClientKey XOR ClientSignature, and StoredKey = H(ClientKey).
	proof, _ := base64.StdEncoding.DecodeString("dHzbZapWIk4jUhN+Ute9ytag9zjfMHgsqmmiz7AndVQ=")
	sig := mac(storedKey)
	clientKey := make([]byte, len(proof))
	for i := range proof {
		clientKey[i] = proof[i] ^ sig[i]
	}
	if h := sha256.Sum256(clientKey); !hmac.Equal(h[:], storedKey) {
		t.Error("the stored key is not the hash of the client key the RFC's proof carries")
	}
}

// teamProject is a server project made by owner "olga" (a login role
// that may create roles, not a superuser: a superuser is above row-level
// security), with annotators ines and tomas and reviewer rita.
func teamProject(t *testing.T) (*pgtest.Server, *Store) {
	t.Helper()
	srv, s := ownerProject(t)
	for _, m := range []struct{ name, kind string }{{"ines", KindAnnotator}, {"tomas", KindAnnotator}, {"rita", KindReviewer}} {
		if _, err := s.AddMember(bg, m.name, m.kind, m.name+"-pw"); err != nil {
			t.Fatal(err)
		}
	}
	return srv, s
}

func connectAs(t *testing.T, srv *pgtest.Server, user string) *pgx.Conn {
	t.Helper()
	c, err := pgx.Connect(bg, srv.DSN(user, user+"-pw", "harbour"))
	if err != nil {
		t.Fatalf("connect as %s: %v", user, err)
	}
	t.Cleanup(func() { c.Close(bg) })
	return c
}

// With raw SQL through an annotator's own connection, the server refuses
// what the role may not do: another annotator's labels cannot be
// changed, deleted or forged, suggestions cannot be decided without the
// reviewer role, classes cannot be added without the owner role. Reading
// everyone's labels works.
func TestRowLevelSecurityAtTheServer(t *testing.T) {
	srv, _ := teamProject(t)
	olga := connectAs(t, srv, "olga")
	for _, q := range []string{
		`INSERT INTO classes(name, color, position) VALUES ('buoy', '#00aa88', 1)`,
		`INSERT INTO images(path, sha256, width, height, orientation) VALUES ('a.jpg', repeat('a', 64), 100, 100, 1)`,
		`INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin)
		 SELECT 1, 1, id, 1, 1, 9, 9, 'drawn' FROM annotators WHERE name IN ('ines', 'tomas')`,
		`INSERT INTO suggestions(image_id, class_id, x0, y0, x1, y1, score, source, state) VALUES (1, 1, 2, 2, 8, 8, 0.9, 'm', 'pending')`,
	} {
		if _, err := olga.Exec(bg, q); err != nil {
			t.Fatalf("owner: %s: %v", q, err)
		}
	}
	ines := connectAs(t, srv, "ines")
	refused := func(q string) {
		t.Helper()
		_, err := ines.Exec(bg, q)
		var pe *pgconn.PgError
		if !errors.As(err, &pe) || pe.Code != "42501" {
			t.Errorf("ines: %s: %v, want a refusal (42501)", q, err)
		}
	}
	untouched := func(q string) {
		t.Helper()
		tag, err := ines.Exec(bg, q)
		if err != nil || tag.RowsAffected() != 0 {
			t.Errorf("ines: %s: %v rows, %v; want none touched", q, tag.RowsAffected(), err)
		}
	}
	untouched(`UPDATE labels SET x1 = 50 WHERE annotator_id = (SELECT id FROM annotators WHERE name = 'tomas')`)
	untouched(`DELETE FROM labels WHERE annotator_id = (SELECT id FROM annotators WHERE name = 'tomas')`)
	refused(`INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin)
		SELECT 1, 1, id, 1, 1, 5, 5, 'drawn' FROM annotators WHERE name = 'tomas'`)
	refused(`UPDATE labels SET annotator_id = (SELECT id FROM annotators WHERE name = 'tomas') WHERE annotator_id = (SELECT id FROM annotators WHERE name = 'ines')`)
	untouched(`UPDATE suggestions SET state = 'accepted'`)
	refused(`INSERT INTO classes(name, color, position) VALUES ('kayak', '#ffee00', 2)`)
	untouched(`DELETE FROM images`)
	refused(`UPDATE members SET kind = 'owner' WHERE role_name = 'ines'`)

	var n int
	if err := ines.QueryRow(bg, `SELECT count(*) FROM labels`).Scan(&n); err != nil || n != 2 {
		t.Errorf("ines reads %d labels (%v), want both annotators' 2", n, err)
	}
	if _, err := ines.Exec(bg, `INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin)
		SELECT 1, 1, id, 20, 20, 30, 30, 'drawn' FROM annotators WHERE name = 'ines'`); err != nil {
		t.Errorf("ines cannot add her own label: %v", err)
	}
	var x1 float64
	olga.QueryRow(bg, `SELECT x1 FROM labels l JOIN annotators a ON a.id = l.annotator_id WHERE a.name = 'tomas'`).Scan(&x1)
	if x1 != 9 {
		t.Errorf("tomas's label has x1 %v after ines's attempts, want 9", x1)
	}
	var state string
	olga.QueryRow(bg, `SELECT state FROM suggestions`).Scan(&state)
	if state != "pending" {
		t.Errorf("the suggestion is %s after ines's attempt, want pending", state)
	}
	rita := connectAs(t, srv, "rita")
	if tag, err := rita.Exec(bg, `UPDATE suggestions SET state = 'rejected'`); err != nil || tag.RowsAffected() != 1 {
		t.Errorf("the reviewer cannot decide: %v, %d rows", err, tag.RowsAffected())
	}
}

// A wrong password and an unreachable server each give one plain line
// that names the project but never the password.
func TestLoginFailuresSayWhy(t *testing.T) {
	srv, _ := teamProject(t)
	_, err := Open(bg, srv.DSN("ines", "wrong-secret", "harbour"))
	if err == nil || !strings.Contains(err.Error(), "wrong user name or password") || strings.Contains(err.Error(), "wrong-secret") {
		t.Errorf("wrong password: %v", err)
	}
	_, err = Open(bg, "host=/nonexistent-socket-dir port=1 user=ines password=hush dbname=harbour connect_timeout=2")
	if err == nil || !strings.Contains(err.Error(), "cannot be reached") || strings.Contains(err.Error(), "hush") {
		t.Errorf("unreachable server: %v", err)
	}
	if s, err := Open(bg, srv.DSN("ines", "ines-pw", "harbour")); err != nil {
		t.Errorf("the right password: %v", err)
	} else {
		s.Close()
	}
}

// Opening runs each migration once even when clients open at the same
// time (the advisory lock), and a schema newer than this program is
// refused.
func TestMigrationsOnceAndNewerRefused(t *testing.T) {
	srv, s := teamProject(t)
	errs := make(chan error, 4)
	for range 4 {
		go func() {
			o, err := Open(bg, srv.DSN("ines", "ines-pw", "harbour"))
			if err == nil {
				o.Close()
			}
			errs <- err
		}()
	}
	for range 4 {
		if err := <-errs; err != nil {
			t.Errorf("concurrent open: %v", err)
		}
	}
	if v, err := s.SchemaVersion(bg); err != nil || v != LatestVersion() {
		t.Errorf("schema version %d, %v", v, err)
	}
	srv.Exec(t, "harbour", `INSERT INTO schema_migrations(version, name) VALUES (999, 'future')`)
	if _, err := Open(bg, srv.DSN("olga", "olga-pw", "harbour")); !errors.Is(err, ErrNewerSchema) {
		t.Errorf("a newer schema: %v, want ErrNewerSchema", err)
	}
	if _, err := Create(bg, srv.DSN("olga", "olga-pw", "harbour")); err == nil {
		t.Error("Create over an existing project succeeded")
	}
}

// The SQL that team changes run is given back for the person to see,
// with the password's verifier, never the password.
func TestTeamSQLShowsNoPassword(t *testing.T) {
	_, s := teamProject(t)
	ran, err := s.AddMember(bg, "omar", KindAnnotator, "omar-secret")
	if err != nil {
		t.Fatal(err)
	}
	all := strings.Join(ran, "\n")
	if strings.Contains(all, "omar-secret") || !strings.Contains(all, "SCRAM-SHA-256$4096:") || !strings.Contains(all, `GRANT "harbour_team" TO "omar"`) {
		t.Errorf("SQL run:\n%s", all)
	}
	team, _ := s.Team(bg)
	if len(team) != 5 {
		t.Errorf("team %v, want olga, ines, tomas, rita, omar", team)
	}
	if _, err := s.RemoveMember(bg, "omar"); err != nil {
		t.Fatal(err)
	}
	if _, err := s.RemoveMember(bg, "omar"); err == nil {
		t.Error("removing a non-member succeeded")
	}
}
