package imagefile

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/jpeg"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/assets/demo"
)

// djpeg runs libjpeg-turbo's own command-line decoder (Debian's
// libjpeg-turbo-progs) at a scale and returns its PPM pixels.
func djpeg(t *testing.T, path, scale string) (w, h int, rgb []byte) {
	t.Helper()
	out, err := exec.Command("djpeg", "-scale", scale, "-ppm", path).Output()
	if err != nil {
		t.Fatalf("djpeg -scale %s: %v", scale, err)
	}
	var maxv int
	n, err := fmt.Sscanf(string(out), "P6\n%d %d\n%d\n", &w, &h, &maxv)
	if n != 3 || err != nil {
		t.Fatalf("djpeg output: %v", err)
	}
	return w, h, out[len(out)-3*w*h:]
}

// DecodeAtLeast picks the smallest DCT-domain scale of libjpeg-turbo at
// least as large as asked, and its pixels are those of libjpeg-turbo's
// own decoder at that scale (djpeg -scale, Debian's libjpeg-turbo-progs
// 2.1.5) exactly; EXIF orientation is applied after the scaling (the
// size asked is of the image as displayed).
func TestDecodeAtLeastMatchesDjpeg(t *testing.T) {
	if !TurboJPEG {
		t.Skip("built without libjpeg-turbo (noturbojpeg)")
	}
	if _, err := exec.LookPath("djpeg"); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatal("CI must install libjpeg-turbo-progs for this check")
		}
		t.Skip("djpeg is not installed")
	}
	jpg := encodeJPEG(t, pattern(1283, 721))
	path := writeFile(t, "wide.jpg", jpg)
	cases := []struct {
		minW, minH int
		scale      string
		w, h       int
	}{
		{0, 0, "1/1", 1283, 721},
		{640, 360, "1/2", 642, 361}, // sides round up: 1283/2 → 642
		{643, 0, "5/8", 802, 451},
		{160, 90, "1/8", 161, 91},
		{1283, 721, "1/1", 1283, 721},
		{5000, 5000, "1/1", 1283, 721}, // never enlarged
	}
	for _, c := range cases {
		img, info, err := DecodeAtLeast(path, 0, c.minW, c.minH)
		if err != nil {
			t.Fatal(err)
		}
		if info.Width != 1283 || info.Height != 721 {
			t.Errorf("info %+v", info)
		}
		b := img.Bounds()
		if b.Dx() != c.w || b.Dy() != c.h {
			t.Errorf("at least %d×%d: %d×%d, want %d×%d (scale %s)", c.minW, c.minH, b.Dx(), b.Dy(), c.w, c.h, c.scale)
			continue
		}
		w, h, rgb := djpeg(t, path, c.scale)
		if w != c.w || h != c.h {
			t.Fatalf("djpeg -scale %s: %d×%d", c.scale, w, h)
		}
		rgba := img.(*image.RGBA)
		for i := range w * h {
			p := rgba.Pix[4*i : 4*i+3]
			if !bytes.Equal(p, rgb[3*i:3*i+3]) {
				t.Fatalf("scale %s, pixel %d: %v, djpeg %v", c.scale, i, p, rgb[3*i:3*i+3])
			}
		}
	}

	// Orientation 6 (turned a quarter clockwise): displayed 721×1283. The
	// size asked is of the displayed image.
	turned := writeFile(t, "turned.jpg", spliceAfterSOI(jpg, exifAPP1(byteOrder(binary.BigEndian), 6)))
	img, info, err := DecodeAtLeast(turned, 0, 361, 642)
	if err != nil || info.Width != 721 || info.Height != 1283 || img.Bounds().Dx() != 361 || img.Bounds().Dy() != 642 {
		t.Errorf("orientation 6: %v %+v %v", img.Bounds(), info, err)
	}
}

// Damaged JPEG data is refused as unreadable, naming the file; other
// formats decode at full size.
func TestDecodeAtLeastRefusesDamageAndKeepsOtherFormats(t *testing.T) {
	jpg := encodeJPEG(t, noise(200, 100))
	bad := append([]byte{}, jpg...)
	for i := len(bad) / 2; i < len(bad)/2+200; i++ {
		bad[i] = 0xFF
	}
	path := writeFile(t, "bad.jpg", bad)
	if _, _, err := DecodeAtLeast(path, 0, 50, 25); err == nil || !errors.Is(err, ErrUnreadable) || !strings.Contains(err.Error(), path) {
		t.Errorf("damaged JPEG: %v", err)
	}
	png := writeFile(t, "p.png", encodePNG(t, pattern(200, 100)))
	if img, _, err := DecodeAtLeast(png, 0, 50, 25); err != nil || img.Bounds().Dx() != 200 {
		t.Errorf("PNG: %v %v", img.Bounds(), err)
	}
}

// BenchmarkDecodeAtLeast: a 1280×960 JPEG decoded at full size by Go's
// image/jpeg (Decode without the hash), by libjpeg-turbo at full size and
// at the scales a 512-pixel detector input and a 192-pixel thumbnail need.
func BenchmarkDecodeAtLeast(b *testing.B) {
	path := writeFile(b, "b.jpg", encodeJPEG(b, noise(1280, 960)))
	b.Run("go-image-jpeg", func(b *testing.B) { benchGoJPEG(b, path) })
	for _, c := range []struct {
		name string
		w, h int
	}{{"turbo-full", 0, 0}, {"turbo-for-512", 512, 384}, {"turbo-for-192", 192, 144}} {
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				if _, _, err := DecodeAtLeast(path, 0, c.w, c.h); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// benchGoJPEG decodes the file with Go's image/jpeg, the decoder of
// builds without libjpeg-turbo.
func benchGoJPEG(b *testing.B, path string) {
	for b.Loop() {
		f, _ := os.Open(path)
		if _, err := decodePixels(newSection(f), "jpeg"); err != nil {
			b.Fatal(err)
		}
		f.Close()
	}
}

func newSection(f *os.File) *io.SectionReader {
	st, _ := f.Stat()
	return io.NewSectionReader(f, 0, st.Size())
}

// BenchmarkDecode12MP: a 4000×3000 JPEG (a frame of the invented harbour
// demo at its quality) decoded at full size by Go's image/jpeg, by Decode
// (libjpeg-turbo through cgo, with the probe) and, side by side in the same
// run, by libjpeg-turbo's own djpeg (Debian libjpeg-turbo-progs, writing
// to /dev/null; its process start included); and at the 1/8 scale a
// thumbnail or a zoomed-out view needs.
func BenchmarkDecode12MP(b *testing.B) {
	img := demo.Generate(demo.Config{Seed: 1, Images: 1, Width: 4000, Height: 3000}).Render(0)
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, img, &jpeg.Options{Quality: demo.JPEGQuality}); err != nil {
		b.Fatal(err)
	}
	path := writeFile(b, "12mp.jpg", buf.Bytes())
	if dir := os.Getenv("BENCH_DATA"); dir != "" {
		// The same file for compare_djpeg.py (make bench).
		if err := os.WriteFile(filepath.Join(dir, "12mp.jpg"), buf.Bytes(), 0o644); err != nil {
			b.Fatal(err)
		}
	}
	b.Run("go-image-jpeg", func(b *testing.B) { benchGoJPEG(b, path) })
	b.Run("boxwright-full", func(b *testing.B) {
		for b.Loop() {
			if _, _, err := DecodeAtLeast(path, 0, 0, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
	if _, err := exec.LookPath("djpeg"); err == nil {
		b.Run("djpeg-full", func(b *testing.B) {
			for b.Loop() {
				if err := exec.Command("djpeg", "-outfile", "/dev/null", path).Run(); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
	b.Run("boxwright-1/8", func(b *testing.B) {
		for b.Loop() {
			if _, _, err := DecodeAtLeast(path, 0, 500, 375); err != nil {
				b.Fatal(err)
			}
		}
	})
}
