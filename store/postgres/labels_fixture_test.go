package postgres

import (
	"fmt"
	"testing"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
	"boxwright/store/postgres/pgtest"
)

// labFix is a server project for the tests of labels, suggestions,
// models, import and export. Its classes, annotators and images are made
// with plain SQL by the owner olga, not through the Store's own methods
// for them, so that these tests stand on their own.
type labFix struct {
	srv         *pgtest.Server
	s           *Store     // opened by olga, the owner
	sql         *pgx.Conn  // olga's own connection, for the rows made by hand
	olga        int64      // olga's annotator
	im1, im2    int64      // 640×480 images a.jpg and b.jpg
	boat, kayak int64      // classes "motorboat" and "kayak"
	names       []string   // classes in display order
	t           *testing.T // for the helpers below
}

// newLabFix is an owner-only project (team false) or one with annotators
// ines and tomas and reviewer rita (team true).
func newLabFix(t *testing.T, team bool) *labFix {
	t.Helper()
	f := &labFix{t: t}
	if team {
		f.srv, f.s = teamProject(t)
	} else {
		f.srv, f.s = ownerProject(t)
	}
	f.sql = connectAs(t, f.srv, "olga")
	f.olga = f.annotator("olga")
	f.im1 = f.image("harbour/a.jpg", 640, 480)
	f.im2 = f.image("harbour/b.jpg", 640, 480)
	f.boat = f.class("motorboat")
	f.kayak = f.class("kayak")
	return f
}

func (f *labFix) id(q string, args ...any) int64 {
	f.t.Helper()
	var id int64
	if err := f.sql.QueryRow(bg, q, args...).Scan(&id); err != nil {
		f.t.Fatalf("%s: %v", q, err)
	}
	return id
}

var imageCount int

// image adds an image row with a made-up digest.
func (f *labFix) image(path string, w, h int) int64 {
	imageCount++
	return f.id("INSERT INTO images(path, sha256, width, height, orientation) VALUES ($1, $2, $3, $4, 1) RETURNING id",
		path, fmt.Sprintf("%064x", imageCount), w, h)
}

func (f *labFix) class(name string) int64 {
	f.names = append(f.names, name)
	return f.id("INSERT INTO classes(name, color, position) SELECT $1, '#ff8800', coalesce(max(position), -1) + 1 FROM classes RETURNING id", name)
}

// annotator is the annotator of that name, added if new.
func (f *labFix) annotator(name string) int64 {
	return f.id("WITH n AS (INSERT INTO annotators(name) VALUES ($1) ON CONFLICT (name) DO NOTHING RETURNING id) SELECT id FROM n UNION ALL SELECT id FROM annotators WHERE name = $1", name)
}

// label adds a label row by hand.
func (f *labFix) label(img, class, ann int64, b project.Box) int64 {
	return f.id("INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin) VALUES ($1, $2, $3, $4, $5, $6, $7, 'drawn') RETURNING id",
		img, class, ann, b.X0, b.Y0, b.X1, b.Y1)
}

func (f *labFix) count(q string, args ...any) int {
	f.t.Helper()
	var n int
	if err := f.sql.QueryRow(bg, q, args...).Scan(&n); err != nil {
		f.t.Fatalf("%s: %v", q, err)
	}
	return n
}

// status is an annotator's status of an image ("" for none).
func (f *labFix) status(img, ann int64) string {
	f.t.Helper()
	var st string
	err := f.sql.QueryRow(bg, "SELECT status FROM image_status WHERE image_id = $1 AND annotator_id = $2", img, ann).Scan(&st)
	if err != nil && err != pgx.ErrNoRows {
		f.t.Fatal(err)
	}
	return st
}

// as opens the project as a team member (password NAME-pw).
func (f *labFix) as(name string) *Store {
	f.t.Helper()
	s, err := Open(bg, f.srv.DSN(name, name+"-pw", "harbour"))
	if err != nil {
		f.t.Fatalf("open as %s: %v", name, err)
	}
	f.t.Cleanup(func() { s.Close() })
	return s
}

func box(x0, y0, x1, y1 float64) project.Box { return project.Box{X0: x0, Y0: y0, X1: x1, Y1: y1} }
