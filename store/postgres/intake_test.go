package postgres

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"boxwright/project"
	"boxwright/store/postgres/pgtest"
)

// imgPicture is a smooth test picture (it compresses well).
func imgPicture(w, h int, seed uint8) *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			m.Set(x, y, color.RGBA{uint8(x*7) + seed, uint8(y * 5), seed, 255})
		}
	}
	return m
}

func imgJPEG(t testing.TB, w, h int, seed uint8) []byte {
	var b bytes.Buffer
	if err := jpeg.Encode(&b, imgPicture(w, h, seed), nil); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// imgNoisePNG is a PNG of random pixels: it hardly compresses, so its
// size is about 4·w·h bytes and it spans many chunks.
func imgNoisePNG(t testing.TB, w, h int, seed uint64) []byte {
	r := rand.New(rand.NewPCG(seed, 7))
	m := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := range m.Pix {
		m.Pix[i] = uint8(r.Uint32())
	}
	var b bytes.Buffer
	if err := (&png.Encoder{CompressionLevel: png.NoCompression}).Encode(&b, m); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func imgWrite(t testing.TB, path string, data []byte) string {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// imgProject is ownerProject with the image cache in a folder of the
// test (never the user's).
func imgProject(t *testing.T) (*pgtest.Server, *Store) {
	t.Helper()
	srv, s := ownerProject(t)
	s.SetImageCache(t.TempDir(), 0)
	return srv, s
}

// openAs opens the project harbour as user (password user-pw) with its
// own image cache.
func openAs(t *testing.T, srv *pgtest.Server, user string) *Store {
	t.Helper()
	pw := user + "-pw"
	s, err := Open(bg, srv.DSN(user, pw, "harbour"))
	if err != nil {
		t.Fatalf("open as %s: %v", user, err)
	}
	t.Cleanup(func() { s.Close() })
	s.SetImageCache(t.TempDir(), 0)
	return s
}

// smallChunks lowers ChunkSize for one test.
func smallChunks(t *testing.T, n int) {
	old := ChunkSize
	ChunkSize = n
	t.Cleanup(func() { ChunkSize = old })
}

// countChunks counts the chunk rows and complete contents on the server.
func countChunks(t *testing.T, s *Store) (chunks, complete, contents int) {
	t.Helper()
	if err := s.pool.QueryRow(bg, `SELECT (SELECT count(*) FROM image_chunks), (SELECT count(*) FROM image_contents WHERE complete),
		(SELECT count(*) FROM image_contents)`).Scan(&chunks, &complete, &contents); err != nil {
		t.Fatal(err)
	}
	return
}

// The intake of a folder on a server project is the file intake's
// (store/intake_test.go TestIntakeFolderMixedFiles and
// TestIntakeSkipsPipesAndDanglingLinks): the same images taken, the same
// files skipped with the same reasons, orientation read, names recorded
// from the folder given; a second intake and a copy elsewhere are
// duplicates. Each image gets a JPEG thumbnail on the server.
func TestServerIntakeFolderMixedFiles(t *testing.T) {
	_, s := imgProject(t)
	root := t.TempDir()
	dir := filepath.Join(root, "shots")
	good := imgJPEG(t, 64, 48, 1)
	imgWrite(t, filepath.Join(dir, "a.jpg"), good)
	var rot bytes.Buffer
	rot.Write(withExifOrientation(imgJPEG(t, 80, 30, 2), 6))
	imgWrite(t, filepath.Join(dir, "sub", "rotated.JPG"), rot.Bytes())
	var pb bytes.Buffer
	png.Encode(&pb, imgPicture(300, 200, 3))
	imgWrite(t, filepath.Join(dir, "sub", "deeper", "c.png"), pb.Bytes())
	imgWrite(t, filepath.Join(dir, "cut.jpg"), imgJPEG(t, 64, 48, 4)[:300])
	imgWrite(t, filepath.Join(dir, "empty.jpg"), nil)
	imgWrite(t, filepath.Join(dir, "notes.png"), []byte("these are notes, not a picture\n"))
	imgWrite(t, filepath.Join(dir, "readme.txt"), []byte("ignored: not an image name"))
	imgWrite(t, filepath.Join(dir, ".cache", "hidden.jpg"), imgJPEG(t, 8, 8, 5))
	// A JPEG whose scan is garbage: header and end marker intact.
	jpg := imgJPEG(t, 300, 200, 9)
	sos := bytes.Index(jpg, []byte{0xFF, 0xDA})
	scan := sos + 2 + int(jpg[sos+2])<<8 + int(jpg[sos+3])
	garbage := append(bytes.Clone(jpg[:scan]), bytes.Repeat([]byte{0xA5, 0xFF, 0x3C}, 500)...)
	imgWrite(t, filepath.Join(dir, "garbage.jpg"), append(garbage, 0xFF, 0xD9))
	pipe := filepath.Join(dir, "pipe.jpg")
	if err := imgMkfifo(pipe); err != nil {
		t.Skipf("no named pipe for the test: %v", err)
	}
	os.Symlink(filepath.Join(dir, "gone.jpg"), filepath.Join(dir, "dangling.jpg"))

	var progress []int
	rep, err := s.AddImages(bg, []string{dir, filepath.Join(root, "nowhere")}, project.IntakeOptions{Progress: func(done, total int) {
		progress = append(progress, done, total)
	}})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added != 3 || rep.Duplicates != 0 || rep.Relinked != 0 || len(rep.AddedIDs) != 3 {
		t.Errorf("report %+v, want 3 added", rep)
	}
	reasons := map[string]string{}
	for _, f := range rep.Failed {
		reasons[filepath.Base(f.Path)] = f.Error
	}
	for name, want := range map[string]string{"cut.jpg": "completely", "empty.jpg": "empty", "notes.png": "not", "nowhere": "no such file",
		"garbage.jpg": "JPEG data is damaged", "pipe.jpg": "named pipe", "dangling.jpg": "link to nothing"} {
		if got, ok := reasons[name]; !ok || !strings.Contains(got, want) {
			t.Errorf("failure for %s: %q (present %v), want it to mention %q", name, got, ok, want)
		}
	}
	if len(rep.Failed) != 7 {
		t.Errorf("%d failures, want 7: %+v", len(rep.Failed), rep.Failed)
	}
	// The files read: a, cut, empty, garbage, notes, c, rotated (the
	// pipe, the link and the missing path are skipped before reading).
	if len(progress) != 2*7 || progress[0] != 1 || progress[len(progress)-2] != 7 || progress[len(progress)-1] != 7 {
		t.Errorf("progress calls %v, want 1..7 of 7", progress)
	}
	ims, err := s.Images(bg)
	if err != nil {
		t.Fatal(err)
	}
	paths := map[string]project.Image{}
	for _, im := range ims {
		paths[im.Path] = im
	}
	r, ok := paths["shots/sub/rotated.JPG"]
	if !ok {
		t.Fatalf("names from the folder given not stored: %v", paths)
	}
	if r.Orientation != 6 || r.Width != 30 || r.Height != 80 || r.Status != project.StatusNew || r.Added.IsZero() {
		t.Errorf("orientation-6 image stored as %+v, want 30x80 orientation 6, new", r)
	}
	if a := paths["shots/a.jpg"]; a.Width != 64 || a.Height != 48 || a.Orientation != 1 {
		t.Errorf("a.jpg stored as %+v", a)
	}
	if ims[0].Path != "shots/a.jpg" || ims[2].Path != "shots/sub/rotated.JPG" {
		t.Errorf("images not in path order: %v", ims)
	}
	// The thumbnail: a JPEG of at most ThumbnailSide, turned as shown.
	th, err := s.Thumbnail(bg, paths["shots/sub/deeper/c.png"].ID)
	if err != nil {
		t.Fatal(err)
	}
	cfg, err := jpeg.DecodeConfig(bytes.NewReader(th))
	if err != nil || cfg.Width != ThumbnailSide || cfg.Height != 128 {
		t.Errorf("thumbnail of the 300×200 PNG: %+v %v, want a %d×128 JPEG", cfg, err, ThumbnailSide)
	}
	th, _ = s.Thumbnail(bg, r.ID)
	if cfg, err := jpeg.DecodeConfig(bytes.NewReader(th)); err != nil || cfg.Width != 30 || cfg.Height != 80 {
		t.Errorf("thumbnail of the turned image: %+v %v, want 30×80 as displayed", cfg, err)
	}

	// The same folder again adds nothing; nor does a copy elsewhere.
	chunks, _, _ := countChunks(t, s)
	rep, err = s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 0 || rep.Duplicates != 3 {
		t.Errorf("second intake: %+v %v", rep, err)
	}
	copyPath := imgWrite(t, filepath.Join(t.TempDir(), "copy.jpg"), good)
	rep, _ = s.AddImages(bg, []string{copyPath}, project.IntakeOptions{})
	if rep.Duplicates != 1 || rep.Added != 0 {
		t.Errorf("copy of a known file: %+v", rep)
	}
	if again, _, _ := countChunks(t, s); again != chunks {
		t.Errorf("%d chunk rows after the duplicates, %d before", again, chunks)
	}
	// A file given by itself is recorded under its own name.
	single := imgWrite(t, filepath.Join(t.TempDir(), "deep", "er", "single.jpg"), imgJPEG(t, 20, 20, 77))
	rep, _ = s.AddImages(bg, []string{single}, project.IntakeOptions{})
	if im, _ := s.Image(bg, rep.AddedIDs[0]); im.Path != "single.jpg" {
		t.Errorf("a file given by itself recorded as %q", im.Path)
	}
}

// A multi-chunk image goes up in chunks and comes back byte-identical to
// another member (another cache); bytes already on the server are not
// sent again, neither by a second file of the same intake nor by a later
// intake; and an annotator may not add images.
func TestServerUploadChunksFetchBackNotResent(t *testing.T) {
	srv, s := teamProject(t)
	s.SetImageCache(t.TempDir(), 0)
	smallChunks(t, 4096)
	var mu sync.Mutex
	sent := 0
	chunkSent = func(string, int) { mu.Lock(); sent++; mu.Unlock() }
	t.Cleanup(func() { chunkSent = nil })

	dir := t.TempDir()
	big := imgNoisePNG(t, 100, 100, 1) // about 40 kB: 10 chunks of 4 kB
	imgWrite(t, filepath.Join(dir, "big.png"), big)
	imgWrite(t, filepath.Join(dir, "same-bytes.png"), big)
	small := imgJPEG(t, 16, 16, 3)
	imgWrite(t, filepath.Join(dir, "small.jpg"), small)
	rep, err := s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added != 2 || rep.Duplicates != 1 {
		t.Errorf("report %+v, want big.png and small.jpg added, same-bytes.png a duplicate", rep)
	}
	want := (len(big)+4095)/4096 + (len(small)+4095)/4096
	chunks, complete, contents := countChunks(t, s)
	if want < 11 || chunks != want || sent != want || complete != 2 || contents != 2 {
		t.Errorf("%d chunk rows, %d sent, %d complete of %d contents; want %d chunks sent once, 2 complete", chunks, sent, complete, contents, want)
	}

	ines := openAs(t, srv, "ines")
	ims, _ := ines.Images(bg)
	var bigIm project.Image
	for _, im := range ims {
		if im.Path != filepath.Base(dir)+"/small.jpg" {
			bigIm = im
		}
	}
	p, err := ines.FetchImage(bg, bigIm)
	if err != nil {
		t.Fatal(err)
	}
	got, _ := os.ReadFile(p)
	if !bytes.Equal(got, big) {
		t.Errorf("fetched %d bytes, not the %d sent", len(got), len(big))
	}
	if want := filepath.Join(ines.Dir(), bigIm.SHA256[:2], bigIm.SHA256); p != want || ines.ImagePath(bigIm) != want {
		t.Errorf("cached at %s, want %s", p, want)
	}

	// Later intakes of the same bytes send nothing.
	sent = 0
	other := imgWrite(t, filepath.Join(t.TempDir(), "elsewhere.png"), big)
	if rep, err := s.AddImages(bg, []string{other, dir}, project.IntakeOptions{}); err != nil || rep.Duplicates != 4 || rep.Added != 0 {
		t.Errorf("again: %+v %v", rep, err)
	}
	if again, _, _ := countChunks(t, s); sent != 0 || again != chunks {
		t.Errorf("the same bytes again: %d chunks sent, %d rows (were %d)", sent, again, chunks)
	}

	// An annotator adds nothing, with a clear message, and changes nothing.
	fresh := imgWrite(t, filepath.Join(t.TempDir(), "fresh.jpg"), imgJPEG(t, 30, 30, 99))
	_, err = ines.AddImages(bg, []string{fresh}, project.IntakeOptions{})
	if !errors.Is(err, project.ErrNotAllowed) || !strings.Contains(err.Error(), "only an owner") || !strings.Contains(err.Error(), "annotator") {
		t.Errorf("an annotator's intake: %v, want ErrNotAllowed saying only an owner may", err)
	}
	if _, err := ines.Relink(bg, dir, project.IntakeOptions{}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator's relink: %v", err)
	}
	if _, err := ines.AddImage(bg, project.Image{Path: "x.jpg", SHA256: strings.Repeat("c", 64), Width: 1, Height: 1, Orientation: 1}); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator's image record: %v", err)
	}
	if ims, _ := s.Images(bg); len(ims) != 2 {
		t.Errorf("%d images after the annotator's tries, want 2", len(ims))
	}
	// Even with raw SQL the server refuses her content rows.
	if _, err := ines.pool.Exec(bg, `INSERT INTO image_contents(sha256, size, chunks) VALUES (repeat('d', 64), 1, 1)`); !errors.Is(ines.translate(err), project.ErrNotAllowed) {
		t.Errorf("an annotator's raw content row: %v", err)
	}
}

// Cancelled in the middle of an image's upload, an intake leaves no
// images row and no complete content for it, and the images finished
// before stay and are in the report; the next intake sends only the
// chunks that are missing and the image comes back whole.
func TestServerCancelledIntakeLeavesNothingHalfWritten(t *testing.T) {
	_, s := imgProject(t)
	smallChunks(t, 2048)
	dir := t.TempDir()
	big := imgNoisePNG(t, 80, 80, 5) // about 25 kB: 13 chunks
	path := imgWrite(t, filepath.Join(dir, "big.png"), big)
	total := (len(big) + 2047) / 2048

	ctx, cancel := context.WithCancel(bg)
	var mu sync.Mutex
	sent := 0
	chunkSent = func(string, int) {
		mu.Lock()
		defer mu.Unlock()
		if sent++; sent == 4 {
			cancel()
		}
	}
	t.Cleanup(func() { chunkSent = nil })
	rep, err := s.AddImages(ctx, []string{path}, project.IntakeOptions{})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled intake: %v (report %+v)", err, rep)
	}
	chunks, complete, _ := countChunks(t, s)
	ims, _ := s.Images(bg)
	if len(ims) != 0 || complete != 0 || rep.Added != 0 || chunks != 4 {
		t.Errorf("after the cancel: %d images, %d complete contents, %d chunks, report %+v; want none, none, the 4 sent", len(ims), complete, chunks, rep)
	}

	sent = 0
	rep, err = s.AddImages(bg, []string{path}, project.IntakeOptions{})
	if err != nil || rep.Added != 1 {
		t.Fatalf("again: %+v %v", rep, err)
	}
	if sent != total-4 {
		t.Errorf("the resumed upload sent %d chunks, want the %d missing", sent, total-4)
	}
	ims, _ = s.Images(bg)
	p, err := s.FetchImage(bg, ims[0])
	if got, _ := os.ReadFile(p); err != nil || !bytes.Equal(got, big) {
		t.Errorf("fetched after the resumed upload: %d bytes, %v", len(got), err)
	}

	// A file that changes while it is sent is skipped with the reason,
	// and what was sent of it is removed.
	changing := imgWrite(t, filepath.Join(t.TempDir(), "changing.png"), imgNoisePNG(t, 60, 60, 6))
	chunkSent = func(_ string, n int) {
		if n == 1 {
			imgWrite(t, changing, imgNoisePNG(t, 60, 60, 7))
		}
	}
	before, _, contents := countChunks(t, s)
	rep, err = s.AddImages(bg, []string{changing}, project.IntakeOptions{})
	if err != nil || rep.Added != 0 || len(rep.Failed) != 1 || !strings.Contains(rep.Failed[0].Error, "changed while it was being added") {
		t.Errorf("a file changing during its upload: %+v %v", rep, err)
	}
	if after, _, contentsAfter := countChunks(t, s); after != before || contentsAfter != contents {
		t.Errorf("a changed file left %d chunks and %d contents (were %d and %d)", after, contentsAfter, before, contents)
	}
	// An unfinished upload no one touched for a day is removed by the
	// next intake; a recent one stays (another client may be sending it).
	chunkSent = nil
	s.pool.Exec(bg, `INSERT INTO image_contents(sha256, size, chunks, touched_at) VALUES (repeat('1', 64), 10, 1, now() - interval '25 hours'),
		(repeat('2', 64), 10, 1, now() - interval '1 hour')`)
	s.pool.Exec(bg, `INSERT INTO image_chunks(sha256, n, bytes) VALUES (repeat('1', 64), 0, 'abc'), (repeat('2', 64), 0, 'abc')`)
	if _, err := s.AddImages(bg, nil, project.IntakeOptions{}); err != nil {
		t.Fatal(err)
	}
	var left []string
	rows, _ := s.pool.Query(bg, "SELECT left(sha256, 1) FROM image_contents WHERE NOT complete ORDER BY 1")
	for rows.Next() {
		var k string
		rows.Scan(&k)
		left = append(left, k)
	}
	if strings.Join(left, ",") != "2" {
		t.Errorf("unfinished uploads left: %v, want only the recent one", left)
	}

	// Cancelled between files (the file intake's test), every image
	// finished is stored and counted, and no more.
	chunkSent = nil
	many := t.TempDir()
	for i := range 20 {
		imgWrite(t, filepath.Join(many, "im"+string(rune('a'+i))+".jpg"), imgJPEG(t, 16, 16, uint8(i)))
	}
	ctx, cancel = context.WithCancel(bg)
	defer cancel()
	rep, err = s.AddImages(ctx, []string{many}, project.IntakeOptions{Progress: func(done, total int) {
		if done == 5 {
			cancel()
		}
	}})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled intake: %v", err)
	}
	c, _ := s.Counts(bg)
	if c.Images != rep.Added+1 || rep.Added < 5 || rep.Added == 20 {
		t.Errorf("after cancel: report %+v, %d images stored (one from before)", rep, c.Images)
	}
	// Uploads cut off by the cancel are not complete.
	if _, complete, _ := countChunks(t, s); complete != c.Images {
		t.Errorf("%d complete contents for %d images", complete, c.Images)
	}
}

// An image record without its bytes (a project copied without its image
// files) is missing; showing it fails with a message that names it and
// wraps fs.ErrNotExist; Relink finds its file by content, sends its
// bytes, keeps its name and adds nothing else.
func TestServerMissingImagesAndRelink(t *testing.T) {
	_, s := imgProject(t)
	data := imgJPEG(t, 40, 30, 9)
	dir := t.TempDir()
	imgWrite(t, filepath.Join(dir, "found", "renamed.jpg"), data)
	imgWrite(t, filepath.Join(dir, "unrelated.jpg"), imgJPEG(t, 40, 30, 10))
	sum := sha256Hex(data)
	im, err := s.AddImage(bg, project.Image{Path: "boats/boat.jpg", SHA256: sum, Width: 40, Height: 30, Orientation: 1})
	if err != nil {
		t.Fatal(err)
	}
	missing, err := s.MissingImages(bg)
	if err != nil || len(missing) != 1 || missing[0].ID != im.ID {
		t.Fatalf("missing: %v %v", missing, err)
	}
	_, err = s.FetchImage(bg, im)
	if !errors.Is(err, os.ErrNotExist) || !strings.Contains(err.Error(), "boats/boat.jpg") || !strings.Contains(err.Error(), "Find moved images") {
		t.Errorf("fetching a missing image: %v", err)
	}
	p := s.ImagePath(im)
	if _, statErr := os.Stat(p); !errors.Is(statErr, os.ErrNotExist) {
		t.Errorf("ImagePath of a missing image gave %s, which exists", p)
	}
	if ferr := s.FetchError(p); ferr == nil || !strings.Contains(ferr.Error(), "not on the server") {
		t.Errorf("FetchError(%s) = %v", p, ferr)
	}

	rep, err := s.Relink(bg, dir, project.IntakeOptions{})
	if err != nil || rep.Relinked != 1 || rep.Added != 0 || len(rep.Relinks) != 1 || rep.Relinks[0].ImageID != im.ID {
		t.Fatalf("relink: %+v %v", rep, err)
	}
	if missing, _ := s.MissingImages(bg); len(missing) != 0 {
		t.Errorf("still missing: %v", missing)
	}
	if got, _ := s.Image(bg, im.ID); got.Path != "boats/boat.jpg" {
		t.Errorf("relinked image named %q, want its name kept", got.Path)
	}
	if ims, _ := s.Images(bg); len(ims) != 1 {
		t.Errorf("relink added images: %v", ims)
	}
	if th, _ := s.Thumbnail(bg, im.ID); len(th) == 0 {
		t.Error("relink made no thumbnail")
	}
	p = s.ImagePath(im)
	if got, _ := os.ReadFile(p); !bytes.Equal(got, data) || s.FetchError(p) != nil {
		t.Errorf("after relink the image file has %d bytes, error %v", len(got), s.FetchError(p))
	}
	// An ordinary intake also sends missing bytes, counted as relinked.
	other, _ := s.AddImage(bg, project.Image{Path: "other.jpg", SHA256: sha256Hex(imgJPEG(t, 40, 30, 10)), Width: 40, Height: 30, Orientation: 1})
	rep, err = s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Relinked != 1 || rep.Duplicates != 1 || rep.Added != 0 {
		t.Errorf("intake over a missing image: %+v %v", rep, err)
	}
	if missing, _ := s.MissingImages(bg); len(missing) != 0 {
		t.Errorf("still missing: %v (other is %d)", missing, other.ID)
	}
}

// BenchmarkServerUpload10MB adds one 10 MB image (a PNG of noise) to a
// project on the private server, 1 MiB chunks, and fetches it back into
// an empty cache; it reports MB/s of each.
func BenchmarkServerUpload10MB(b *testing.B) {
	srv := pgtest.Start(b)
	srv.Exec(b, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(b, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := Create(bg, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	data := imgNoisePNG(b, 1600, 1600, 3) // 4 bytes a pixel: 10.24 MB
	dir := b.TempDir()
	path := imgWrite(b, filepath.Join(dir, "noise.png"), data)
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for range b.N {
		b.StopTimer()
		s.pool.Exec(bg, "DELETE FROM images")
		s.pool.Exec(bg, "DELETE FROM image_contents")
		s.SetImageCache(b.TempDir(), 0)
		b.StartTimer()
		rep, err := s.AddImages(bg, []string{path}, project.IntakeOptions{})
		if err != nil || rep.Added != 1 {
			b.Fatal(rep, err)
		}
	}
}

// BenchmarkServerFetch10MB fetches a 10 MB image into an empty cache.
func BenchmarkServerFetch10MB(b *testing.B) {
	srv := pgtest.Start(b)
	srv.Exec(b, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	srv.Exec(b, "postgres", `CREATE DATABASE harbour OWNER olga`)
	s, err := Create(bg, srv.DSN("olga", "olga-pw", "harbour"))
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	data := imgNoisePNG(b, 1600, 1600, 3)
	path := imgWrite(b, filepath.Join(b.TempDir(), "noise.png"), data)
	rep, err := s.AddImages(bg, []string{path}, project.IntakeOptions{})
	if err != nil || rep.Added != 1 {
		b.Fatal(rep, err)
	}
	im, _ := s.Image(bg, rep.AddedIDs[0])
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for range b.N {
		b.StopTimer()
		s.SetImageCache(b.TempDir(), 0)
		b.StartTimer()
		if _, err := s.FetchImage(bg, im); err != nil {
			b.Fatal(err)
		}
	}
}

func sha256Hex(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// withExifOrientation splices an Exif APP1 segment holding only the
// Orientation tag right after the JPEG's SOI marker. Layout per the Exif
// standard (CIPA DC-008): "Exif\0\0", a little-endian TIFF header, IFD0
// with one SHORT entry for tag 0x0112.
func withExifOrientation(jpg []byte, o uint16) []byte {
	var tiff bytes.Buffer
	le := binary.LittleEndian
	tiff.WriteString("II")
	binary.Write(&tiff, le, uint16(42))
	binary.Write(&tiff, le, uint32(8))
	binary.Write(&tiff, le, uint16(1))       // one entry
	binary.Write(&tiff, le, uint16(0x0112))  // tag Orientation
	binary.Write(&tiff, le, uint16(3))       // type SHORT
	binary.Write(&tiff, le, uint32(1))       // count
	binary.Write(&tiff, le, [2]uint16{o, 0}) // value, padded to 4 bytes
	binary.Write(&tiff, le, uint32(0))       // no next IFD
	payload := append([]byte("Exif\x00\x00"), tiff.Bytes()...)
	seg := []byte{0xFF, 0xE1, byte((len(payload) + 2) >> 8), byte(len(payload) + 2)}
	out := append([]byte{}, jpg[:2]...)
	out = append(out, seg...)
	out = append(out, payload...)
	return append(out, jpg[2:]...)
}
