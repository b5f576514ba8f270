package imagefile

import (
	"bytes"
	"encoding/binary"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
)

// byteOrder reads and appends; binary.LittleEndian and BigEndian are both.
type byteOrder interface {
	binary.ByteOrder
	binary.AppendByteOrder
}

// writeFile writes data to name in a fresh temporary folder.
func writeFile(t testing.TB, name string, data []byte) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// pattern is an invented w×h picture whose every pixel differs.
func pattern(w, h int) *image.NRGBA {
	m := image.NewNRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			m.SetNRGBA(x, y, color.NRGBA{uint8(x * 255 / w), uint8(y * 255 / h), uint8(x ^ y), 255})
		}
	}
	return m
}

// noise is an invented picture that JPEG cannot compress much, so that a
// cut through the middle of the file falls in the entropy-coded data.
func noise(w, h int) *image.RGBA {
	rng := rand.New(rand.NewPCG(1, 2))
	m := image.NewRGBA(image.Rect(0, 0, w, h))
	for i := range m.Pix {
		m.Pix[i] = uint8(rng.UintN(256))
	}
	return m
}

func encodeJPEG(t testing.TB, m image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := jpeg.Encode(&b, m, &jpeg.Options{Quality: 90}); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func encodePNG(t testing.TB, m image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := png.Encode(&b, m); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func encodeGIF(t testing.TB, m image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := gif.Encode(&b, m, nil); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func encodeBMP(t testing.TB, m image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := bmp.Encode(&b, m); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func encodeTIFF(t testing.TB, m image.Image) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := tiff.Encode(&b, m, nil); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// exifTIFF is a TIFF structure (TIFF 6.0, section 2: byte-order mark, 42,
// offset of IFD0) whose IFD0 holds one Orientation entry of type SHORT,
// count 1, the value left-justified in the 4-byte value field.
func exifTIFF(order byteOrder, orientation uint16) []byte {
	var b []byte
	if order == byteOrder(binary.LittleEndian) {
		b = append(b, "II*\x00"...)
	} else {
		b = append(b, "MM\x00*"...)
	}
	b = order.AppendUint32(b, 8)
	b = order.AppendUint16(b, 1)
	b = order.AppendUint16(b, tagOrientation)
	b = order.AppendUint16(b, 3) // SHORT
	b = order.AppendUint32(b, 1)
	b = order.AppendUint16(b, orientation)
	b = order.AppendUint16(b, 0)
	b = order.AppendUint32(b, 0) // no next IFD
	return b
}

// segment is a JPEG marker segment: FF, marker, 2-byte big-endian length
// that counts itself (ITU-T T.81, Annex B).
func segment(marker byte, payload []byte) []byte {
	b := []byte{0xFF, marker}
	b = binary.BigEndian.AppendUint16(b, uint16(2+len(payload)))
	return append(b, payload...)
}

// exifAPP1 is an APP1 segment with the Exif identifier "Exif\0\0" followed
// by the TIFF structure (CIPA DC-008-2019, Exif 2.32, APP1 layout).
func exifAPP1(order byteOrder, orientation uint16) []byte {
	return segment(0xE1, append([]byte("Exif\x00\x00"), exifTIFF(order, orientation)...))
}

// spliceAfterSOI inserts segments right after the 2-byte SOI of a JPEG.
func spliceAfterSOI(jpg []byte, segs ...[]byte) []byte {
	out := append([]byte{}, jpg[:2]...)
	for _, s := range segs {
		out = append(out, s...)
	}
	return append(out, jpg[2:]...)
}

// grayTIFF writes an uncompressed 8-bit grey TIFF by hand with IFD0 right
// after the header and the pixels after it, as TIFF 6.0 allows (section 2,
// baseline grayscale fields of section 4). orientation 0 leaves the tag out.
func grayTIFF(order byteOrder, w, h int, pix []byte, orientation uint16) []byte {
	type entry struct {
		tag, typ uint16
		val      uint32
	}
	var entries []entry
	add := func(tag, typ uint16, v uint32) { entries = append(entries, entry{tag, typ, v}) }
	n := 9
	if orientation != 0 {
		n++
	}
	dataOff := uint32(8 + 2 + 12*n + 4)
	add(256, 3, uint32(w)) // ImageWidth
	add(257, 3, uint32(h)) // ImageLength
	add(258, 3, 8)         // BitsPerSample
	add(259, 3, 1)         // Compression: none
	add(262, 3, 1)         // PhotometricInterpretation: BlackIsZero
	add(273, 4, dataOff)   // StripOffsets
	if orientation != 0 {
		add(274, 3, uint32(orientation)) // Orientation
	}
	add(277, 3, 1)           // SamplesPerPixel
	add(278, 3, uint32(h))   // RowsPerStrip
	add(279, 4, uint32(w*h)) // StripByteCounts
	var b []byte
	if order == byteOrder(binary.LittleEndian) {
		b = append(b, "II*\x00"...)
	} else {
		b = append(b, "MM\x00*"...)
	}
	b = order.AppendUint32(b, 8)
	b = order.AppendUint16(b, uint16(len(entries)))
	for _, e := range entries {
		b = order.AppendUint16(b, e.tag)
		b = order.AppendUint16(b, e.typ)
		b = order.AppendUint32(b, 1)
		if e.typ == 3 {
			b = order.AppendUint16(b, uint16(e.val))
			b = order.AppendUint16(b, 0)
		} else {
			b = order.AppendUint32(b, e.val)
		}
	}
	b = order.AppendUint32(b, 0)
	return append(b, pix...)
}

// bitWriter packs bits least-significant first, as the WebP lossless
// bitstream reads them (RFC 9649).
type bitWriter struct {
	buf []byte
	n   uint
}

func (w *bitWriter) write(v uint32, bits uint) {
	for i := uint(0); i < bits; i++ {
		if w.n%8 == 0 {
			w.buf = append(w.buf, 0)
		}
		w.buf[len(w.buf)-1] |= byte(v>>i&1) << (w.n % 8)
		w.n++
	}
}

// webpLossless1x1 builds, field by field after RFC 9649 (WebP Image Format,
// lossless bitstream), a 1×1 WebP file holding one pixel c: no transforms,
// no colour cache, no meta prefix codes, and five "simple" prefix codes of
// one 8-bit symbol each (green, red, blue, alpha, distance), which cost no
// bits per pixel.
func webpLossless1x1(c color.NRGBA) []byte {
	var w bitWriter
	w.write(0x2f, 8) // signature
	w.write(0, 14)   // width - 1
	w.write(0, 14)   // height - 1
	w.write(0, 1)    // alpha_is_used hint
	w.write(0, 3)    // version
	w.write(0, 1)    // no transform
	w.write(0, 1)    // no colour cache
	w.write(0, 1)    // no meta prefix codes
	for _, sym := range []uint8{c.G, c.R, c.B, c.A, 0} {
		w.write(1, 1) // simple code
		w.write(0, 1) // one symbol
		w.write(1, 1) // 8-bit symbol
		w.write(uint32(sym), 8)
	}
	chunk := w.buf
	var b []byte
	body := 4 + 8 + len(chunk) + len(chunk)%2
	b = append(b, "RIFF"...)
	b = binary.LittleEndian.AppendUint32(b, uint32(body))
	b = append(b, "WEBPVP8L"...)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(chunk)))
	b = append(b, chunk...)
	if len(chunk)%2 == 1 {
		b = append(b, 0) // chunks are padded to an even length
	}
	return b
}
