package cli

import (
	"context"
	"path/filepath"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"boxwright/store/postgres"
	"boxwright/store/postgres/pgtest"
)

// team add, list and remove on a server project: the SQL run is printed
// with the password's verifier only, the new member logs in with the
// password given on standard input, and a file project is refused.
func TestTeamCommand(t *testing.T) {
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(t, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := postgres.Create(context.Background(), srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		t.Fatal(err)
	}
	s.Close()
	url := srv.URL("olga", "olga-pw", "harbour")

	passwordIn = strings.NewReader("ines secret\n")
	defer func() { passwordIn = nil }()
	out := mustCLI(t, "team", url, "add", "ines", "--role", "annotator")
	if !strings.Contains(out, `CREATE ROLE "ines" LOGIN PASSWORD 'SCRAM-SHA-256$4096:`) || strings.Contains(out, "ines secret") {
		t.Errorf("team add printed:\n%s", out)
	}
	c, err := pgx.Connect(context.Background(), srv.DSN("ines", "ines secret", "harbour"))
	if err != nil {
		t.Fatalf("the new member cannot log in with the password given: %v", err)
	}
	c.Close(context.Background())
	if out := mustCLI(t, "team", url, "list"); !strings.Contains(out, "ines") || !strings.Contains(out, "annotator") || !strings.Contains(out, "olga") {
		t.Errorf("team list:\n%s", out)
	}
	if out := mustCLI(t, "team", url, "remove", "ines"); !strings.Contains(out, "REVOKE") {
		t.Errorf("team remove:\n%s", out)
	}
	if code, _, errs := cli(t, "team", url, "add", "omar", "--role", "boss"); code != 2 || !strings.Contains(errs, "annotator, reviewer or owner") {
		t.Errorf("a bad role: exit %d, %q", code, errs)
	}
	file := filepath.Join(t.TempDir(), "p.boxw")
	mustCLI(t, "new", file)
	if code, _, errs := cli(t, "team", file, "list"); code != 1 || !strings.Contains(errs, "server project") {
		t.Errorf("team on a file: exit %d, %q", code, errs)
	}
}

// assign hands every image to k of the annotators named, and --show
// reads it back; a file project is refused.
func TestAssignCommand(t *testing.T) {
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(t, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := postgres.Create(context.Background(), srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		t.Fatal(err)
	}
	for _, who := range []string{"ines", "tomas", "rita"} {
		if _, err := s.AddMember(context.Background(), who, postgres.KindAnnotator, who+"-pw"); err != nil {
			t.Fatal(err)
		}
	}
	s.Close()
	srv.Exec(t, "harbour", `INSERT INTO images(path, sha256, width, height, orientation)
		SELECT 'im' || g || '.jpg', lpad(to_hex(g), 64, '0'), 64, 48, 1 FROM generate_series(1, 9) g`)
	url := srv.URL("olga", "olga-pw", "harbour")
	out := mustCLI(t, "assign", url, "--annotators", "ines,tomas,rita", "--each", "2")
	for _, want := range []string{"9 images assigned", "ines                 6 images", "tomas                6 images", "rita                 6 images"} {
		if !strings.Contains(out, want) {
			t.Errorf("assign printed:\n%s\nwant %q", out, want)
		}
	}
	if out := mustCLI(t, "assign", url, "--show"); !strings.Contains(out, "9 images assigned") {
		t.Errorf("assign --show:\n%s", out)
	}
	if code, _, errs := cli(t, "assign", url, "--annotators", "ines", "--each", "2"); code != 2 || !strings.Contains(errs, "at most the 1") {
		t.Errorf("--each above the annotators: exit %d, %q", code, errs)
	}
	file := filepath.Join(t.TempDir(), "p.boxw")
	mustCLI(t, "new", file)
	if code, _, errs := cli(t, "assign", file, "--show"); code != 1 || !strings.Contains(errs, "server project") {
		t.Errorf("assign on a file: exit %d, %q", code, errs)
	}
}
