package imagefile

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image/color"
	"math/rand/v2"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
)

// pngChunkAt is one chunk of a PNG file: where its length field starts,
// its data length and its type.
type pngChunkAt struct {
	off, n int
	typ    string
}

// pngChunks lists the chunks after the signature (PNG, ISO/IEC 15948,
// section 5.3: length, type, data, CRC).
func pngChunks(t *testing.T, b []byte) []pngChunkAt {
	t.Helper()
	var cs []pngChunkAt
	for off := 8; off+12 <= len(b); {
		n := int(binary.BigEndian.Uint32(b[off:]))
		cs = append(cs, pngChunkAt{off, n, string(b[off+4 : off+8])})
		off += 12 + n
	}
	return cs
}

// fixCRC rewrites a chunk's CRC-32 over its type and data, so that only the
// damage inside the data is left to find.
func fixCRC(b []byte, c pngChunkAt) {
	binary.BigEndian.PutUint32(b[c.off+8+c.n:], crc32.ChecksumIEEE(b[c.off+4:c.off+8+c.n]))
}

// damaged builds, from valid encodings of an invented picture, files whose
// header and end marker are intact but whose image data is not; Probe,
// which reads only the header and looks for the end, passes every one.
func damaged(t *testing.T) map[string][]byte {
	src := noise(256, 192)
	pngb := encodePNG(t, src)
	cs := pngChunks(t, pngb)
	var first, last pngChunkAt
	for _, c := range cs {
		if c.typ == "IDAT" {
			if first.typ == "" {
				first = c
			}
			last = c
		}
	}
	if first.typ == "" || cs[len(cs)-1].typ != "IEND" {
		t.Fatalf("the encoder wrote chunks %v", cs)
	}
	out := map[string][]byte{}
	// A byte flipped in the IDAT data: the chunk's CRC no longer matches.
	b := bytes.Clone(pngb)
	b[first.off+8+100] ^= 0x10
	out["flipped-idat.png"] = b
	// The zlib stream's Adler-32 (RFC 1950, section 2.2: its last four
	// bytes) wrong, the chunk CRC made right: the case of issue 14.
	b = bytes.Clone(pngb)
	b[last.off+8+last.n-1] ^= 0xFF
	fixCRC(b, last)
	out["bad-adler.png"] = b
	// A byte flipped in the middle of the compressed data, CRC made right.
	b = bytes.Clone(pngb)
	b[first.off+8+first.n/2] ^= 0x10
	fixCRC(b, first)
	out["flipped-deflate.png"] = b
	// The same damage behind a .jpg name: the content, not the name, is read.
	out["flipped-idat-named.jpg"] = out["flipped-idat.png"]

	jpg := encodeJPEG(t, src)
	segs, ok := jpegSegments(bytes.NewReader(jpg), int64(len(jpg)))
	if !ok || jpg[segs.sos] != 0xFF || jpg[segs.sos+1] != 0xDA {
		t.Fatalf("no start of scan found at %d", segs.sos)
	}
	// End of the SOS segment (ITU-T T.81, B.2.3: its length counts itself).
	scan := int(segs.sos) + 2 + int(binary.BigEndian.Uint16(jpg[segs.sos+2:]))
	// Cut in half, the end-of-image marker put back.
	out["cut-with-eoi.jpg"] = append(bytes.Clone(jpg[:len(jpg)/2]), 0xFF, 0xD9)
	// Garbage after the headers: the scan replaced by random bytes.
	rng := rand.New(rand.NewPCG(14, 15))
	b = bytes.Clone(jpg[:scan])
	for range 4000 {
		b = append(b, byte(rng.UintN(256)))
	}
	out["garbage-scan.jpg"] = append(b, 0xFF, 0xD9)
	// Zeros after the headers, as a disk or a download leaves a hole.
	b = append(bytes.Clone(jpg[:scan]), make([]byte, 4000)...)
	out["zeroed-scan.jpg"] = append(b, 0xFF, 0xD9)
	return out
}

// Probe lets damaged image data through (it reads only the header and the
// end); Verify decodes it and refuses each file with ErrUnreadable or
// ErrTruncated, naming the file, the format found in its content and what
// to do.
func TestVerifyRefusesDamagedImageData(t *testing.T) {
	for name, data := range damaged(t) {
		t.Run(name, func(t *testing.T) {
			path := writeFile(t, name, data)
			if _, err := Probe(path, 0); err != nil {
				t.Fatalf("Probe already refuses it (%v): the case tests nothing", err)
			}
			_, err := Verify(path, 0)
			if !errors.Is(err, ErrUnreadable) && !errors.Is(err, ErrTruncated) {
				t.Fatalf("Verify error %v, want ErrUnreadable or ErrTruncated", err)
			}
			format := "JPEG"
			if strings.Contains(name, "idat") || strings.Contains(name, ".png") {
				format = "PNG"
			}
			msg := err.Error()
			if !strings.Contains(msg, path) || !strings.Contains(msg, format) || !strings.Contains(msg, "copy it again") {
				t.Errorf("message %q does not name the file, the %s format and what to do", msg, format)
			}
		})
	}
}

// What Probe already refused, Verify refuses the same way; sound files of
// every format pass, whatever their name says.
func TestVerifyNeighbours(t *testing.T) {
	big := noise(256, 256)
	jpg := encodeJPEG(t, big)
	for name, c := range map[string]struct {
		data []byte
		kind error
	}{
		"half.jpg":   {jpg[:len(jpg)/2], ErrTruncated},
		"half.png":   {encodePNG(t, big)[:len(encodePNG(t, big))/2], ErrTruncated},
		"empty.png":  {nil, ErrEmpty},
		"zero.png":   {hugePNG(0, 0), ErrUnreadable},    // a 0×0 image in IHDR
		"wide.png":   {hugePNG(5000, 0), ErrUnreadable}, // 5000×0
		"notes.jpg":  {[]byte("a shopping list\n"), ErrNotImage},
		"stub.png":   {hugePNG(64, 64), ErrUnreadable}, // IHDR says 64×64, IDAT holds nothing
		"header.jpg": {jpg[:200], ErrTruncated},
	} {
		if _, err := Verify(writeFile(t, name, c.data), 0); !errors.Is(err, c.kind) {
			t.Errorf("%s: error %v, want %v", name, err, c.kind)
		}
	}
	src := pattern(40, 30)
	for name, c := range map[string]struct {
		data   []byte
		format string
	}{
		"a.jpg":          {encodeJPEG(t, src), "jpeg"},
		"a.png":          {encodePNG(t, src), "png"},
		"a.gif":          {encodeGIF(t, src), "gif"},
		"a.bmp":          {encodeBMP(t, src), "bmp"},
		"a.tif":          {encodeTIFF(t, src), "tiff"},
		"a.webp":         {webpLossless1x1(color.NRGBA{1, 2, 3, 255}), "webp"},
		"png-named.jpg":  {encodePNG(t, src), "png"},
		"jpeg-named.png": {encodeJPEG(t, src), "jpeg"},
		"trailing.jpg":   {append(encodeJPEG(t, src), make([]byte, 1000)...), "jpeg"},
		"trailing.png":   {append(encodePNG(t, src), "trailing"...), "png"},
	} {
		path := writeFile(t, name, c.data)
		info, err := Verify(path, 0)
		if err != nil || info.Format != c.format || info.SHA256 != sha(c.data) {
			t.Errorf("%s: %+v, %v; want format %s", name, info, err, c.format)
		}
		if p, _ := Probe(path, 0); p != info {
			t.Errorf("%s: Verify says %+v, Probe %+v", name, info, p)
		}
	}
}

// Decodes at once stay within the budget, and an image above the whole
// budget still runs (alone).
func TestPixelBudget(t *testing.T) {
	b := newPixelBudget(100)
	var inUse, most atomic.Int64
	var wg sync.WaitGroup
	for i := range 40 {
		wg.Go(func() {
			n := b.acquire(int64(10 + i%5*20)) // 10..90
			cur := inUse.Add(n)
			for {
				m := most.Load()
				if cur <= m || most.CompareAndSwap(m, cur) {
					break
				}
			}
			inUse.Add(-n)
			b.release(n)
		})
	}
	wg.Wait()
	if most.Load() > 100 {
		t.Errorf("%d pixels decoding at once, budget 100", most.Load())
	}
	if n := b.acquire(1000); n != 100 {
		t.Errorf("an image of 1000 took %d of a budget of 100", n)
	}
	b.release(100)
}

// BenchmarkVerify is the cost intake pays per image over Probe: a full
// decode of a 1280×960 picture (an invented scene: smooth gradients with
// noise), as JPEG (quality 90) and as PNG.
func BenchmarkVerify(b *testing.B) {
	m := pattern(1280, 960)
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range m.Pix {
		if i%4 != 3 {
			m.Pix[i] = uint8(max(0, min(255, int(m.Pix[i])+int(rng.IntN(25))-12)))
		}
	}
	for _, f := range []struct {
		name string
		data []byte
	}{{"jpeg-1280x960", encodeJPEG(b, m)}, {"png-1280x960", encodePNG(b, m)}} {
		path := writeFile(b, f.name, f.data)
		b.Run(f.name, func(b *testing.B) {
			b.SetBytes(int64(len(f.data)))
			for b.Loop() {
				if _, err := Verify(path, DefaultMaxPixels); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(f.name+"-probe", func(b *testing.B) {
			for b.Loop() {
				if _, err := Probe(path, DefaultMaxPixels); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
