package imagefile

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// sameImage compares two images pixel by pixel in 16-bit RGBA.
func sameImage(t *testing.T, got, want image.Image) {
	t.Helper()
	if got.Bounds().Size() != want.Bounds().Size() {
		t.Fatalf("size %v, want %v", got.Bounds().Size(), want.Bounds().Size())
	}
	gb, wb := got.Bounds(), want.Bounds()
	for y := 0; y < wb.Dy(); y++ {
		for x := 0; x < wb.Dx(); x++ {
			r1, g1, b1, a1 := got.At(gb.Min.X+x, gb.Min.Y+y).RGBA()
			r2, g2, b2, a2 := want.At(wb.Min.X+x, wb.Min.Y+y).RGBA()
			if r1 != r2 || g1 != g2 || b1 != b2 || a1 != a2 {
				t.Fatalf("pixel (%d,%d) = %v, want %v", x, y, got.At(gb.Min.X+x, gb.Min.Y+y), want.At(wb.Min.X+x, wb.Min.Y+y))
			}
		}
	}
}

func sha(data []byte) string {
	s := sha256.Sum256(data)
	return hex.EncodeToString(s[:])
}

// Expected digests come from crypto/sha256 (Go 1.26.8), expected pixels
// from the images handed to the encoders of the standard library and
// golang.org/x/image v0.48.0 (bmp, tiff), or to the hand-built TIFF and
// WebP writers in helpers_test.go; JPEG is lossy, so only its size is
// compared.
func TestProbeAndDecodeFormats(t *testing.T) {
	src := pattern(40, 30)
	pal := image.NewPaletted(src.Rect, []color.Color{color.Black, color.White, color.NRGBA{200, 10, 10, 255}})
	for i := range pal.Pix {
		pal.Pix[i] = uint8(i % 3)
	}
	grayPix := make([]byte, 5*3)
	for i := range grayPix {
		grayPix[i] = uint8(i * 16)
	}
	gray := &image.Gray{Pix: grayPix, Stride: 5, Rect: image.Rect(0, 0, 5, 3)}
	webpPixel := color.NRGBA{R: 0xC0, G: 0x40, B: 0x20, A: 0xFF}
	webpWant := image.NewNRGBA(image.Rect(0, 0, 1, 1))
	webpWant.SetNRGBA(0, 0, webpPixel)

	cases := []struct {
		name   string
		data   []byte
		format string
		w, h   int
		want   image.Image // nil for lossy formats
	}{
		{"a.png", encodePNG(t, src), "png", 40, 30, src},
		{"a.jpg", encodeJPEG(t, src), "jpeg", 40, 30, nil},
		{"a.gif", encodeGIF(t, pal), "gif", 40, 30, pal},
		{"a.bmp", encodeBMP(t, src), "bmp", 40, 30, src},
		{"a.tif", encodeTIFF(t, src), "tiff", 40, 30, src},
		{"le.tiff", grayTIFF(binary.LittleEndian, 5, 3, grayPix, 0), "tiff", 5, 3, gray},
		{"be.tiff", grayTIFF(binary.BigEndian, 5, 3, grayPix, 1), "tiff", 5, 3, gray},
		{"a.webp", webpLossless1x1(webpPixel), "webp", 1, 1, webpWant},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := writeFile(t, c.name, c.data)
			info, err := Probe(path, DefaultMaxPixels)
			if err != nil {
				t.Fatal(err)
			}
			want := Info{Format: c.format, Width: c.w, Height: c.h, StoredWidth: c.w, StoredHeight: c.h,
				Orientation: 1, SHA256: sha(c.data), Size: int64(len(c.data))}
			if info != want {
				t.Fatalf("Probe = %+v\nwant    %+v", info, want)
			}
			img, dinfo, err := Decode(path, DefaultMaxPixels)
			if err != nil {
				t.Fatal(err)
			}
			if dinfo != info {
				t.Fatalf("Decode info %+v, Probe info %+v", dinfo, info)
			}
			if got := img.Bounds().Size(); got != image.Pt(c.w, c.h) {
				t.Fatalf("decoded size %v", got)
			}
			if c.want != nil {
				sameImage(t, img, c.want)
			}
		})
	}
}

func TestWebPRegistered(t *testing.T) {
	data := webpLossless1x1(color.NRGBA{1, 2, 3, 255})
	cfg, format, err := image.DecodeConfig(bytes.NewReader(data))
	if err != nil || format != "webp" || cfg.Width != 1 || cfg.Height != 1 {
		t.Fatalf("DecodeConfig = %+v, %q, %v", cfg, format, err)
	}
}

// The digest of "abc" is the SHA-256 example of FIPS 180-4 (NIST, example
// values, SHA256.pdf).
func TestHashKnownVector(t *testing.T) {
	got, err := hashReader(strings.NewReader("abc"))
	if err != nil {
		t.Fatal(err)
	}
	if want := "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"; got != want {
		t.Fatalf("SHA-256(abc) = %s, want %s", got, want)
	}
}

// quadrants is a 64×32 picture: red, green over blue, white; flat areas
// survive JPEG well enough to tell them apart.
func quadrants() *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, 64, 32))
	for y := 0; y < 32; y++ {
		for x := 0; x < 64; x++ {
			c := [2][2]color.RGBA{
				{{255, 0, 0, 255}, {0, 255, 0, 255}},
				{{0, 0, 255, 255}, {255, 255, 255, 255}},
			}[y/16][x/32]
			m.SetRGBA(x, y, c)
		}
	}
	return m
}

func near(a, b uint8) bool { return int(a)-int(b) < 48 && int(b)-int(a) < 48 }

func TestJPEGExifOrientation6(t *testing.T) {
	jpg := encodeJPEG(t, quadrants())
	for _, tc := range []struct {
		name string
		data []byte
	}{
		{"mm.jpg", spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 6))},
		// A JFIF APP0 and an XMP APP1 before the Exif APP1, as many tools write.
		{"ii.jpg", spliceAfterSOI(jpg,
			segment(0xE0, []byte("JFIF\x00\x01\x01\x00\x00\x01\x00\x01\x00\x00")),
			segment(0xE1, []byte("http://ns.adobe.com/xap/1.0/\x00<x/>")),
			exifAPP1(binary.LittleEndian, 6))},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := writeFile(t, tc.name, tc.data)
			info, err := Probe(path, 0)
			if err != nil {
				t.Fatal(err)
			}
			if info.Orientation != 6 || info.Width != 32 || info.Height != 64 || info.StoredWidth != 64 || info.StoredHeight != 32 {
				t.Fatalf("Probe = %+v", info)
			}
			img, _, err := Decode(path, 0)
			if err != nil {
				t.Fatal(err)
			}
			if img.Bounds() != image.Rect(0, 0, 32, 64) {
				t.Fatalf("decoded bounds %v", img.Bounds())
			}
			// Rotating [[red, green], [blue, white]] 90° clockwise gives
			// [[blue, red], [white, green]] (Exif 2.32, orientation 6: the
			// stored top row is the displayed right column).
			want := map[image.Point]color.RGBA{
				{8, 16}: {0, 0, 255, 255}, {24, 16}: {255, 0, 0, 255},
				{8, 48}: {255, 255, 255, 255}, {24, 48}: {0, 255, 0, 255},
			}
			for p, w := range want {
				r, g, b, _ := img.At(p.X, p.Y).RGBA()
				if !near(uint8(r>>8), w.R) || !near(uint8(g>>8), w.G) || !near(uint8(b>>8), w.B) {
					t.Errorf("pixel %v = %v, want about %v", p, img.At(p.X, p.Y), w)
				}
			}
		})
	}
}

func TestTIFFOrientationDecoded(t *testing.T) {
	pix := []byte{10, 20, 30, 40, 50, 60} // 3×2
	path := writeFile(t, "o.tif", grayTIFF(binary.BigEndian, 3, 2, pix, 8))
	img, info, err := Decode(path, 0)
	if err != nil {
		t.Fatal(err)
	}
	if info.Orientation != 8 || info.Width != 2 || info.Height != 3 {
		t.Fatalf("info %+v", info)
	}
	// Orientation 8, rotated 270° clockwise: the stored right column becomes
	// the top row (Exif 2.32).
	want := &image.Gray{Pix: []byte{30, 60, 20, 50, 10, 40}, Stride: 2, Rect: image.Rect(0, 0, 2, 3)}
	sameImage(t, img, want)
}

// Each cut removes what the format's end check looks for: JPEG's EOI (ITU-T
// T.81), PNG's IEND (ISO/IEC 15948), GIF's trailer (GIF89a), the pixel rows
// a BMP or TIFF header points at, the length in WebP's RIFF header.
func TestTruncated(t *testing.T) {
	big := noise(256, 256)
	half := func(b []byte) []byte { return b[:len(b)/2] }
	jpg := encodeJPEG(t, big)
	cases := []struct {
		name string
		data []byte
	}{
		{"half.jpg", half(jpg)},
		{"noeoi.jpg", jpg[:len(jpg)-2]},
		{"half.png", half(encodePNG(t, big))},
		{"header.png", encodePNG(t, big)[:20]},
		{"half.gif", half(encodeGIF(t, big))},
		{"half.bmp", half(encodeBMP(t, big))},
		{"half.tif", half(encodeTIFF(t, big))},
		{"stripfirst.tif", half(grayTIFF(binary.LittleEndian, 64, 64, make([]byte, 64*64), 0))},
		{"short.webp", webpLossless1x1(color.NRGBA{1, 2, 3, 255})[:22]},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := writeFile(t, c.name, c.data)
			_, err := Probe(path, 0)
			if !errors.Is(err, ErrTruncated) {
				t.Fatalf("Probe error %v, want ErrTruncated", err)
			}
			if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "cut short") && !strings.Contains(err.Error(), "ends") {
				t.Errorf("message %q does not name the file and the problem", err)
			}
			t.Log(err)
			if _, _, err := Decode(path, 0); !errors.Is(err, ErrTruncated) {
				t.Fatalf("Decode error %v, want ErrTruncated", err)
			}
		})
	}
}

// Trailing bytes after the end marker are tolerated (common practice:
// cameras pad JPEGs, some tools append data).
func TestTrailingBytesAccepted(t *testing.T) {
	src := pattern(16, 16)
	for name, data := range map[string][]byte{
		"pad.jpg": append(encodeJPEG(t, src), make([]byte, 1000)...),
		"pad.png": append(encodePNG(t, src), "trailing"...),
	} {
		if _, _, err := Decode(writeFile(t, name, data), 0); err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
}

func TestEmptyFile(t *testing.T) {
	path := writeFile(t, "empty.jpg", nil)
	if _, err := Probe(path, 0); !errors.Is(err, ErrEmpty) || !strings.Contains(err.Error(), path) {
		t.Fatalf("Probe error %v, want ErrEmpty naming the file", err)
	}
	if _, _, err := Decode(path, 0); !errors.Is(err, ErrEmpty) {
		t.Fatalf("Decode error %v, want ErrEmpty", err)
	}
}

func TestTextNamedPNG(t *testing.T) {
	path := writeFile(t, "notes.png", []byte("these are my notes, not a picture\n"))
	_, err := Probe(path, 0)
	if !errors.Is(err, ErrNotImage) {
		t.Fatalf("Probe error %v, want ErrNotImage", err)
	}
	if msg := err.Error(); !strings.Contains(msg, path) || !strings.Contains(msg, ".png") {
		t.Errorf("message %q should name the file and its misleading extension", msg)
	}
	if _, _, err := Decode(path, 0); !errors.Is(err, ErrNotImage) {
		t.Fatalf("Decode error %v, want ErrNotImage", err)
	}
}

func TestMissingAndFolder(t *testing.T) {
	if _, err := Probe(filepath.Join(t.TempDir(), "gone.jpg"), 0); !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("missing file: %v", err)
	}
	dir := filepath.Join(t.TempDir(), "pics.jpg")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if _, err := Probe(dir, 0); !errors.Is(err, ErrNotImage) {
		t.Fatalf("folder: %v", err)
	}
}

// pngChunk is length, type, data, CRC-32 of type and data (PNG, ISO/IEC
// 15948, section 5.3; the CRC is the ISO 3309 one that hash/crc32's IEEE
// table computes).
func pngChunk(typ string, data []byte) []byte {
	b := binary.BigEndian.AppendUint32(nil, uint32(len(data)))
	b = append(b, typ...)
	b = append(b, data...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(append([]byte(typ), data...)))
}

// hugePNG claims w×h RGB pixels in IHDR (section 11.2.2: width, height,
// bit depth, colour type, compression, filter, interlace) but carries only a
// stub IDAT.
func hugePNG(w, h uint32) []byte {
	ihdr := binary.BigEndian.AppendUint32(nil, w)
	ihdr = binary.BigEndian.AppendUint32(ihdr, h)
	ihdr = append(ihdr, 8, 2, 0, 0, 0)
	b := []byte("\x89PNG\r\n\x1a\n")
	b = append(b, pngChunk("IHDR", ihdr)...)
	b = append(b, pngChunk("IDAT", []byte{0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01})...)
	return append(b, pngChunk("IEND", nil)...)
}

func TestTooLarge(t *testing.T) {
	path := writeFile(t, "photo.png", hugePNG(60000, 60000))
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	_, perr := Probe(path, DefaultMaxPixels)
	_, _, derr := Decode(path, DefaultMaxPixels)
	runtime.ReadMemStats(&after)
	for _, err := range []error{perr, derr} {
		if !errors.Is(err, ErrTooLarge) {
			t.Fatalf("error %v, want ErrTooLarge", err)
		}
		want := path + ": 60000×60000 = 3600000000 pixels is above the limit of 100000000 pixels (100 megapixels)"
		if err.Error() != want {
			t.Errorf("message %q\nwant    %q", err, want)
		}
	}
	// The pixels would take 10.8 GB; both calls together read headers only.
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 16<<20 {
		t.Fatalf("allocated %d bytes", alloc)
	}
	// The same file passes under a higher limit, so the refusal above came
	// from the limit and not from the stub pixel data.
	info, err := Probe(path, 4_000_000_000)
	if err != nil || info.Width != 60000 || info.Height != 60000 {
		t.Fatalf("Probe with a high limit: %+v, %v", info, err)
	}
	if _, err := Probe(writeFile(t, "small.png", encodePNG(t, pattern(20, 10))), 199); !errors.Is(err, ErrTooLarge) {
		t.Fatalf("200 pixels against a limit of 199: %v", err)
	}
}

func TestDamagedHeader(t *testing.T) {
	data := encodePNG(t, pattern(8, 8))
	data[20] ^= 0xFF // inside IHDR, so its CRC no longer matches
	_, err := Probe(writeFile(t, "bad.png", data), 0)
	if !errors.Is(err, ErrUnreadable) || !strings.Contains(err.Error(), "damaged") {
		t.Fatalf("error %v, want ErrUnreadable saying damaged", err)
	}
}

func TestIsImageName(t *testing.T) {
	for name, want := range map[string]bool{
		"a.jpg": true, "b.JPEG": true, "c.Png": true, "d.gif": true, "e.bmp": true,
		"f.tif": true, "g.TIFF": true, "h.webp": true, "dir/x.y.jpg": true,
		"notes.txt": false, "jpg": false, "a.jpg.bak": false, "a.heic": false, "": false,
	} {
		if got := IsImageName(name); got != want {
			t.Errorf("IsImageName(%q) = %v", name, got)
		}
	}
}

func BenchmarkProbe(b *testing.B) {
	data := encodeJPEG(b, noise(1280, 960))
	path := writeFile(b, "bench.jpg", data)
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		if _, err := Probe(path, DefaultMaxPixels); err != nil {
			b.Fatal(err)
		}
	}
}
