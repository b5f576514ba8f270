package store

import (
	"bytes"
	"context"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
)

func picture(w, h int, seed uint8) *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			m.Set(x, y, color.RGBA{uint8(x*7) + seed, uint8(y * 5), seed, 255})
		}
	}
	return m
}

func jpegBytes(t *testing.T, w, h int, seed uint8) []byte {
	var b bytes.Buffer
	if err := jpeg.Encode(&b, picture(w, h, seed), nil); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// withOrientation splices an Exif APP1 segment holding only the
// Orientation tag right after the JPEG's SOI marker. Layout per the Exif
// standard (CIPA DC-008): "Exif\0\0", a little-endian TIFF header, IFD0
// with one SHORT entry for tag 0x0112.
func withOrientation(jpg []byte, o uint16) []byte {
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

// hugePNG is a PNG whose header claims w×h pixels, with a tiny IDAT.
func hugePNG(w, h uint32) []byte {
	chunk := func(typ string, data []byte) []byte {
		var b bytes.Buffer
		binary.Write(&b, binary.BigEndian, uint32(len(data)))
		b.WriteString(typ)
		b.Write(data)
		binary.Write(&b, binary.BigEndian, crc32.ChecksumIEEE(append([]byte(typ), data...)))
		return b.Bytes()
	}
	ihdr := make([]byte, 13)
	binary.BigEndian.PutUint32(ihdr[0:], w)
	binary.BigEndian.PutUint32(ihdr[4:], h)
	ihdr[8], ihdr[9] = 8, 2 // 8-bit RGB
	out := []byte("\x89PNG\r\n\x1a\n")
	out = append(out, chunk("IHDR", ihdr)...)
	out = append(out, chunk("IDAT", []byte{0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01})...)
	return append(out, chunk("IEND", nil)...)
}

func write(t *testing.T, path string, data []byte) string {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestIntakeFolderMixedFiles(t *testing.T) {
	root := t.TempDir()
	s, err := Create(filepath.Join(root, "p.boxw"))
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	dir := filepath.Join(root, "shots")
	good := jpegBytes(t, 64, 48, 1)
	write(t, filepath.Join(dir, "a.jpg"), good)
	write(t, filepath.Join(dir, "sub", "rotated.JPG"), withOrientation(jpegBytes(t, 80, 30, 2), 6))
	var pb bytes.Buffer
	png.Encode(&pb, picture(20, 10, 3))
	write(t, filepath.Join(dir, "sub", "deeper", "c.png"), pb.Bytes())
	write(t, filepath.Join(dir, "cut.jpg"), jpegBytes(t, 64, 48, 4)[:300])
	write(t, filepath.Join(dir, "empty.jpg"), nil)
	write(t, filepath.Join(dir, "notes.png"), []byte("these are notes, not a picture\n"))
	write(t, filepath.Join(dir, "huge.png"), hugePNG(60000, 60000))
	write(t, filepath.Join(dir, "readme.txt"), []byte("ignored: not an image name"))
	write(t, filepath.Join(dir, ".cache", "hidden.jpg"), jpegBytes(t, 8, 8, 5))

	rep, err := s.AddImages(bg, []string{dir, filepath.Join(root, "nowhere")}, project.IntakeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added != 3 || rep.Duplicates != 0 || rep.Relinked != 0 {
		t.Errorf("report %+v, want 3 added", rep)
	}
	reasons := map[string]string{}
	for _, f := range rep.Failed {
		reasons[filepath.Base(f.Path)] = f.Error
	}
	for name, want := range map[string]string{"cut.jpg": "", "empty.jpg": "", "notes.png": "", "huge.png": "60000×60000", "nowhere": "no such file"} {
		got, ok := reasons[name]
		if !ok || !strings.Contains(got, want) {
			t.Errorf("failure for %s: %q (present %v), want it to mention %q", name, got, ok, want)
		}
	}
	if len(rep.Failed) != 5 {
		t.Errorf("%d failures, want 5: %+v", len(rep.Failed), rep.Failed)
	}
	ims, _ := s.Images(bg)
	paths := map[string]project.Image{}
	for _, im := range ims {
		paths[im.Path] = im
	}
	rot, ok := paths["shots/sub/rotated.JPG"]
	if !ok {
		t.Fatalf("relative paths not stored: %v", paths)
	}
	if rot.Orientation != 6 || rot.Width != 30 || rot.Height != 80 {
		t.Errorf("orientation-6 image stored as %dx%d orientation %d, want 30x80 orientation 6", rot.Width, rot.Height, rot.Orientation)
	}
	if a := paths["shots/a.jpg"]; a.Width != 64 || a.Height != 48 || a.Orientation != 1 {
		t.Errorf("a.jpg stored as %+v", a)
	}

	// The same folder again adds nothing.
	rep, err = s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil || rep.Added != 0 || rep.Duplicates != 3 {
		t.Errorf("second intake: %+v %v", rep, err)
	}
	// A copy of a known file elsewhere is a duplicate while the original exists.
	copyPath := write(t, filepath.Join(t.TempDir(), "copy.jpg"), good)
	rep, _ = s.AddImages(bg, []string{copyPath}, project.IntakeOptions{})
	if rep.Duplicates != 1 || rep.Added != 0 {
		t.Errorf("copy of a known file: %+v", rep)
	}
}

func TestIntakeRelinksMovedFilesKeepingLabels(t *testing.T) {
	root := t.TempDir()
	s, err := Create(filepath.Join(root, "p.boxw"))
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	orig := write(t, filepath.Join(root, "in", "boat.jpg"), jpegBytes(t, 40, 30, 9))
	if rep, err := s.AddImages(bg, []string{orig}, project.IntakeOptions{}); err != nil || rep.Added != 1 {
		t.Fatal(rep, err)
	}
	ims, _ := s.Images(bg)
	cl, _ := s.AddClass(bg, project.Class{Name: "motorboat"})
	an, _ := s.AddAnnotator(bg, "Ines")
	s.AddLabel(bg, project.Label{ImageID: ims[0].ID, ClassID: cl.ID, AnnotatorID: an.ID, Box: project.Box{X0: 1, Y0: 1, X1: 9, Y1: 9}})

	outside := t.TempDir()
	moved := filepath.Join(outside, "renamed.jpg")
	if err := os.Rename(orig, moved); err != nil {
		t.Fatal(err)
	}
	missing, _ := s.MissingImages(bg)
	if len(missing) != 1 {
		t.Fatalf("missing after move: %v", missing)
	}
	write(t, filepath.Join(outside, "new.jpg"), jpegBytes(t, 40, 30, 10))
	rep, err := s.Relink(bg, outside, project.IntakeOptions{})
	if err != nil || rep.Relinked != 1 || rep.Added != 0 {
		t.Fatalf("relink: %+v %v", rep, err)
	}
	im, _ := s.Image(bg, ims[0].ID)
	if im.Path != filepath.ToSlash(moved) || !filepath.IsAbs(filepath.FromSlash(im.Path)) {
		t.Errorf("relinked path %q, want absolute %q", im.Path, moved)
	}
	if ls, _ := s.Labels(bg, project.LabelFilter{ImageID: im.ID}); len(ls) != 1 {
		t.Errorf("labels after relink: %d", len(ls))
	}
	if missing, _ := s.MissingImages(bg); len(missing) != 0 {
		t.Errorf("still missing: %v", missing)
	}
	// An ordinary intake also relinks, and adds the unknown file.
	os.Rename(moved, filepath.Join(root, "back.jpg"))
	rep, _ = s.AddImages(bg, []string{root}, project.IntakeOptions{})
	if rep.Relinked != 1 {
		t.Errorf("intake over a moved file: %+v", rep)
	}
	if im, _ := s.Image(bg, ims[0].ID); im.Path != "back.jpg" {
		t.Errorf("path after second move: %q", im.Path)
	}
}

func TestIntakePixelLimitIsSettable(t *testing.T) {
	s := newStore(t)
	p := write(t, filepath.Join(t.TempDir(), "wide.jpg"), jpegBytes(t, 200, 100, 1))
	rep, err := s.AddImages(bg, []string{p}, project.IntakeOptions{MaxPixels: 10_000})
	if err != nil || rep.Added != 0 || len(rep.Failed) != 1 || !strings.Contains(rep.Failed[0].Error, "200×100") {
		t.Errorf("limit 10000 px: %+v %v", rep, err)
	}
	if rep, _ := s.AddImages(bg, []string{p}, project.IntakeOptions{MaxPixels: 20_000}); rep.Added != 1 {
		t.Errorf("limit 20000 px: %+v", rep)
	}
}

func TestIntakeStopsOnCancelKeepingWhatWasAdded(t *testing.T) {
	s := newStore(t)
	dir := t.TempDir()
	for i := 0; i < 20; i++ {
		write(t, filepath.Join(dir, "im"+string(rune('a'+i))+".jpg"), jpegBytes(t, 16, 16, uint8(i)))
	}
	ctx, cancel := withCancel()
	rep, err := s.AddImages(ctx, []string{dir}, project.IntakeOptions{Progress: func(done, total int) {
		if done == 5 {
			cancel()
		}
	}})
	if !errors.Is(err, errCanceled) {
		t.Fatalf("cancelled intake: %v", err)
	}
	c, _ := s.Counts(bg)
	if c.Images != rep.Added || rep.Added < 5 || rep.Added == 20 {
		t.Errorf("after cancel: report %+v, %d images stored", rep, c.Images)
	}
}

var errCanceled = context.Canceled

func withCancel() (context.Context, context.CancelFunc) { return context.WithCancel(bg) }

// Files whose header and end are intact but whose image data is damaged are
// refused at intake with a reason in the report (issue 14: a PNG with a bad
// zlib checksum was added and failed later in the exemplar search). Each is
// built from a valid encoding: the PNG's chunks are length, type, data,
// CRC-32 (ISO/IEC 15948, section 5.3), its zlib stream ends in an Adler-32
// (RFC 1950, section 2.2); the JPEG's scan follows the SOS segment (ITU-T
// T.81, B.2.3) and the file ends in EOI, FF D9.
func TestIntakeRefusesDamagedImageData(t *testing.T) {
	s := newStore(t)
	dir := t.TempDir()
	var pb bytes.Buffer
	if err := png.Encode(&pb, picture(300, 200, 9)); err != nil {
		t.Fatal(err)
	}
	good := pb.Bytes()
	// The last IDAT chunk: where its data starts and how long it is.
	var at, n int
	for off := 8; off+12 <= len(good); {
		l := int(binary.BigEndian.Uint32(good[off:]))
		if string(good[off+4:off+8]) == "IDAT" {
			at, n = off+8, l
		}
		off += 12 + l
	}
	if n < 8 {
		t.Fatalf("no IDAT chunk in the encoding")
	}
	fixCRC := func(b []byte) {
		binary.BigEndian.PutUint32(b[at+n:], crc32.ChecksumIEEE(b[at-4:at+n]))
	}
	adler := bytes.Clone(good)
	adler[at+n-1] ^= 0xFF // the Adler-32's last byte
	fixCRC(adler)
	flipped := bytes.Clone(good)
	flipped[at+n/2] ^= 0x10 // the CRC now disagrees
	jpg := jpegBytes(t, 300, 200, 9)
	sos := bytes.Index(jpg, []byte{0xFF, 0xDA})
	scan := sos + 2 + int(binary.BigEndian.Uint16(jpg[sos+2:]))
	garbage := append(bytes.Clone(jpg[:scan]), bytes.Repeat([]byte{0xA5, 0xFF, 0x3C}, 500)...)
	garbage = append(garbage, 0xFF, 0xD9)
	cut := append(bytes.Clone(jpg[:len(jpg)/2]), 0xFF, 0xD9)

	write(t, filepath.Join(dir, "good.png"), good)
	write(t, filepath.Join(dir, "good.jpg"), jpg)
	write(t, filepath.Join(dir, "png-named.jpg"), good) // a PNG behind a .jpg name
	write(t, filepath.Join(dir, "bad-adler.png"), adler)
	write(t, filepath.Join(dir, "flipped.png"), flipped)
	write(t, filepath.Join(dir, "flipped-named.jpg"), flipped)
	write(t, filepath.Join(dir, "garbage.jpg"), garbage)
	write(t, filepath.Join(dir, "cut-with-eoi.jpg"), cut)
	write(t, filepath.Join(dir, "cut.png"), good[:len(good)/2])
	write(t, filepath.Join(dir, "empty.png"), nil)

	rep, err := s.AddImages(bg, []string{dir}, project.IntakeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// png-named.jpg has the bytes of good.png: one image, one duplicate.
	if rep.Added != 2 || rep.Duplicates != 1 {
		t.Errorf("report %+v, want good.png and good.jpg added, png-named.jpg a duplicate", rep)
	}
	reasons := map[string]string{}
	for _, f := range rep.Failed {
		reasons[filepath.Base(f.Path)] = f.Error
	}
	for name, want := range map[string]string{
		"bad-adler.png":     "PNG data is damaged",
		"flipped.png":       "PNG data is damaged",
		"flipped-named.jpg": "PNG data is damaged",
		"garbage.jpg":       "JPEG data is damaged",
		"cut-with-eoi.jpg":  "JPEG data",
		"cut.png":           "cut short",
		"empty.png":         "empty",
	} {
		if got := reasons[name]; !strings.Contains(got, want) || !strings.Contains(got, name) {
			t.Errorf("%s: reason %q, want one naming the file and saying %q", name, got, want)
		}
	}
	if len(rep.Failed) != 7 {
		t.Errorf("%d failures, want 7: %+v", len(rep.Failed), rep.Failed)
	}
	ims, _ := s.Images(bg)
	for _, im := range ims {
		if b := filepath.Base(im.Path); b != "good.png" && b != "good.jpg" {
			t.Errorf("%s was added", im.Path)
		}
	}
}
