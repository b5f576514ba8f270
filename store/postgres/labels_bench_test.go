package postgres

import (
	"testing"

	"boxwright/store/postgres/pgtest"
)

// BenchmarkBoxesByImage200kAsMember reads 200,000 boxes on 10,000 images
// through an annotator's own login, so that row-level security applies:
// what agreement reads.
func BenchmarkBoxesByImage200kAsMember(b *testing.B) {
	srv := pgtest.Start(b)
	s, _ := benchProject(b, srv)
	if _, err := s.AddMember(bg, "ines", KindAnnotator, "ines-pw"); err != nil {
		b.Fatal(err)
	}
	srv.Exec(b, "harbour", `INSERT INTO images(path, sha256, width, height, orientation)
		SELECT format('img/%s.jpg', i), lpad(to_hex(i + 1), 64, '0'), 1280, 960, 1 FROM generate_series(0, 9999) AS i;
		INSERT INTO classes(name, color, position) VALUES ('buoy', '#ff8800', 0);
		INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin)
		SELECT (SELECT min(id) FROM images) + i % 10000, (SELECT id FROM classes), (SELECT id FROM annotators WHERE name = 'ines'), i % 1000, 0, i % 1000 + 20, 20, 'drawn'
		FROM generate_series(1, 200000) AS i`)
	ines, err := Open(bg, srv.DSN("ines", "ines-pw", "harbour"))
	if err != nil {
		b.Fatal(err)
	}
	defer ines.Close()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		ibs, err := ines.BoxesByImage(bg, nil)
		if err != nil || len(ibs) != 10000 {
			b.Fatalf("%d images, %v", len(ibs), err)
		}
	}
	b.ReportMetric(float64(200000*b.N)/b.Elapsed().Seconds(), "boxes/s")
}
