package postgres

import (
	"strings"
	"testing"
)

// Check finds an image whose upload did not finish, a stored content
// missing a chunk, and a member whose role was dropped on the server.
func TestCheckFindsWhatConstraintsCannot(t *testing.T) {
	srv, s := teamProject(t)
	if found, err := s.Check(bg); err != nil || len(found) != 0 {
		t.Fatalf("a sound project: %v, %v", found, err)
	}
	srv.Exec(t, "harbour", `
		INSERT INTO image_contents(sha256, size, chunks, complete) VALUES (repeat('a', 64), 10, 1, false), (repeat('b', 64), 8, 2, true);
		INSERT INTO image_chunks(sha256, n, bytes) VALUES (repeat('b', 64), 0, '\x01020304');
		INSERT INTO images(path, sha256, width, height, orientation) VALUES ('half.jpg', repeat('a', 64), 10, 10, 1);
		DELETE FROM members WHERE role_name = 'tomas'`)
	srv.Exec(t, "postgres", `DROP ROLE IF EXISTS ghost; CREATE ROLE ghost LOGIN`)
	srv.Exec(t, "harbour", `INSERT INTO annotators(name) VALUES ('ghost'); INSERT INTO members(role_name, annotator_id, kind) SELECT 'ghost', id, 'annotator' FROM annotators WHERE name = 'ghost'`)
	srv.Exec(t, "postgres", `DROP ROLE ghost`)
	found, err := s.Check(bg)
	if err != nil {
		t.Fatal(err)
	}
	all := strings.Join(found, "\n")
	for _, want := range []string{"half.jpg", "1 of 2 chunks, 4 of 8 bytes", "member ghost"} {
		if !strings.Contains(all, want) {
			t.Errorf("Check found:\n%s\nwant %q", all, want)
		}
	}
}
