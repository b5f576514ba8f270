package postgres

import (
	"fmt"
	"testing"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
	"boxwright/project/formats"
	"boxwright/store/postgres/pgtest"
)

// benchProject is ownerProject for benchmarks: the project harbour made
// by olga, and olga's own connection.
func benchProject(b *testing.B, srv *pgtest.Server) (*Store, *pgx.Conn) {
	b.Helper()
	srv.Exec(b, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(b, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := Create(bg, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { s.Close() })
	c, err := pgx.Connect(bg, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { c.Close(bg) })
	return s, c
}

// benchDataset is 10,000 images of 1280×960 with 20 boxes each: 200,000
// boxes in four classes.
func benchDataset() *formats.Dataset {
	classes := []string{"sailboat", "motorboat", "buoy", "kayak"}
	ds := &formats.Dataset{Classes: classes}
	for i := 0; i < 10000; i++ {
		rec := formats.ImageRecord{Name: fmt.Sprintf("img/%05d.jpg", i), Width: 1280, Height: 960}
		for k := 0; k < 20; k++ {
			x, y := float64((i*37+k*53)%1200), float64((i*11+k*29)%900)
			rec.Boxes = append(rec.Boxes, formats.BoxRecord{Class: classes[k%4], Box: project.Box{X0: x, Y0: y, X1: x + 40.5, Y1: y + 30.25},
				Where: fmt.Sprintf("record %d box %d", i, k)})
		}
		ds.Images = append(ds.Images, rec)
	}
	return ds
}

// BenchmarkImportDataset200k imports 200,000 boxes on 10,000 images into a
// server project on the private local server (Unix socket), by its
// owner: match, clip, and one transaction of multi-row INSERTs under
// row-level security. Each round imports as a new annotator, so the
// table grows by 200,000 rows a round. Making the server and the images
// is outside the timing.
func BenchmarkImportDataset200k(b *testing.B) {
	srv := pgtest.Start(b)
	s, olga := benchProject(b, srv)
	if _, err := olga.Exec(bg, `INSERT INTO images(path, sha256, width, height, orientation)
		SELECT format('img/%s.jpg', lpad(i::text, 5, '0')), lpad(to_hex(i + 1), 64, '0'), 1280, 960, 1 FROM generate_series(0, 9999) AS i`); err != nil {
		b.Fatal(err)
	}
	ds := benchDataset()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rep, err := s.ImportDataset(bg, ds, project.ImportOptions{Annotator: fmt.Sprintf("bench-%d", i), CreateClasses: true})
		if err != nil || rep.Labels != 200000 {
			b.Fatalf("import: %d labels, %v", rep.Labels, err)
		}
	}
	b.ReportMetric(float64(200000*b.N)/b.Elapsed().Seconds(), "labels/s")
}

// BenchmarkImportSuggestions200k replaces 200,000 pending suggestions of
// one source on 10,000 images, each round after the first deleting the
// previous round's.
func BenchmarkImportSuggestions200k(b *testing.B) {
	srv := pgtest.Start(b)
	s, olga := benchProject(b, srv)
	if _, err := olga.Exec(bg, `INSERT INTO images(path, sha256, width, height, orientation)
		SELECT format('img/%s.jpg', i), lpad(to_hex(i + 1), 64, '0'), 1280, 960, 1 FROM generate_series(0, 9999) AS i;
		INSERT INTO classes(name, color, position) VALUES ('buoy', '#ff8800', 0)`); err != nil {
		b.Fatal(err)
	}
	var first, class int64
	olga.QueryRow(bg, "SELECT min(id) FROM images").Scan(&first)
	olga.QueryRow(bg, "SELECT id FROM classes").Scan(&class)
	gs := make([]project.Suggestion, 200000)
	for i := range gs {
		x := float64(i % 1000)
		gs[i] = project.Suggestion{ImageID: first + int64(i%10000), ClassID: class, Box: project.Box{X0: x, Y0: 0, X1: x + 20, Y1: 20}, Score: float64(i%100) / 100}
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if rep, err := s.ImportSuggestions(bg, "det", gs); err != nil || rep.Added != 200000 {
			b.Fatalf("import: %+v %v", rep, err)
		}
	}
	b.ReportMetric(float64(200000*b.N)/b.Elapsed().Seconds(), "suggestions/s")
}
