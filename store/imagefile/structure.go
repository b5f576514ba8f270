package imagefile

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
)

// tailWindow is how far from the end of a JPEG or PNG file the end marker is
// looked for: some cameras and tools leave padding or trailing bytes.
const tailWindow = 4 << 10 // common practice

// checkStructure tells whether a file whose header has been read holds its
// whole image, from cheap structural facts and without decoding pixels. The
// error says what is missing.
func checkStructure(r io.ReaderAt, size int64, format string) error {
	switch format {
	case "jpeg":
		return checkJPEG(r, size)
	case "png":
		return checkPNG(r, size)
	case "gif":
		return checkGIF(r, size)
	case "bmp":
		return checkBMP(r, size)
	case "tiff":
		return checkTIFF(r, size)
	case "webp":
		return checkWebP(r, size)
	}
	return nil
}

// readAt reads n bytes at off, or reports false when they are not all there.
func readAt(r io.ReaderAt, size, off, n int64) ([]byte, bool) {
	if off < 0 || n < 0 || off > size || n > size-off {
		return nil, false
	}
	p := make([]byte, n)
	if m, err := r.ReadAt(p, off); int64(m) != n && err != nil {
		return nil, false
	}
	return p, true
}

// tail returns the last bytes of the file from max(from, size-window).
func tail(r io.ReaderAt, size, from, window int64) ([]byte, bool) {
	start := max(from, size-window, 0)
	return readAt(r, size, start, size-start)
}

// checkJPEG looks for the end-of-image marker FF D9 (ITU-T T.81, Table B.1)
// after the start of scan. Entropy-coded data cannot contain it, since every
// FF there is followed by 00 or a restart marker (T.81, Annex B).
func checkJPEG(r io.ReaderAt, size int64) error {
	sos := int64(2)
	if segs, ok := jpegSegments(r, size); ok {
		sos = segs.sos
	}
	t, ok := tail(r, size, sos, tailWindow)
	if !ok || !bytes.Contains(t, []byte{0xFF, 0xD9}) {
		return errors.New("no JPEG end-of-image marker near its end")
	}
	return nil
}

// checkPNG looks for the IEND chunk, zero length then "IEND" (PNG, ISO/IEC
// 15948, section 11.2.5), near the end of the file.
func checkPNG(r io.ReaderAt, size int64) error {
	const ihdrEnd = 8 + 25 // signature, IHDR chunk
	t, ok := tail(r, size, ihdrEnd, tailWindow)
	if !ok || !bytes.Contains(t, []byte("\x00\x00\x00\x00IEND")) {
		return errors.New("no PNG IEND chunk at its end")
	}
	return nil
}

// checkGIF requires the trailer byte 0x3B (GIF89a specification, section 27)
// as the last byte.
func checkGIF(r io.ReaderAt, size int64) error {
	t, ok := readAt(r, size, size-1, 1)
	if !ok || t[0] != 0x3B {
		return errors.New("no GIF trailer at its end")
	}
	return nil
}

// checkBMP compares the file size with the end of the pixel rows the header
// describes (uncompressed rows padded to 4 bytes), or with the declared file
// size when the rows cannot be computed. Layout from the Windows
// BITMAPFILEHEADER and BITMAPINFOHEADER structures.
func checkBMP(r io.ReaderAt, size int64) error {
	h, ok := readAt(r, size, 0, 34)
	if !ok {
		return errors.New("the BMP header is incomplete")
	}
	le := binary.LittleEndian
	declared := int64(le.Uint32(h[2:6]))
	offBits := int64(le.Uint32(h[10:14]))
	infoLen := le.Uint32(h[14:18])
	width := int64(int32(le.Uint32(h[18:22])))
	height := int64(int32(le.Uint32(h[22:26])))
	bpp := int64(le.Uint16(h[28:30]))
	compression := le.Uint32(h[30:34])
	if height < 0 {
		height = -height
	}
	need := declared
	if infoLen >= 40 && (compression == 0 || compression == 3) && width > 0 && bpp > 0 && bpp <= 64 {
		stride := (width*bpp + 31) / 32 * 4
		if height > 0 && stride > (math.MaxInt64-offBits)/height {
			return errors.New("the BMP header describes more pixel data than a file can hold")
		}
		need = offBits + stride*height
	}
	if size < need {
		return fmt.Errorf("the BMP header describes %d bytes, the file has %d", need, size)
	}
	return nil
}

// checkWebP compares the file size with the RIFF header's size field, which
// counts every byte after the first 8 (RFC 9649, the WebP file header).
func checkWebP(r io.ReaderAt, size int64) error {
	h, ok := readAt(r, size, 0, 8)
	if !ok {
		return errors.New("the WebP header is incomplete")
	}
	need := int64(binary.LittleEndian.Uint32(h[4:8])) + 8
	if size < need {
		return fmt.Errorf("the WebP header describes %d bytes, the file has %d", need, size)
	}
	return nil
}

// TIFF 6.0 tags that locate the pixel data.
const (
	tagStripOffsets    uint16 = 273
	tagStripByteCounts uint16 = 279
	tagTileOffsets     uint16 = 324
	tagTileByteCounts  uint16 = 325
)

// checkTIFF requires every strip or tile that IFD0 lists to lie inside the
// file (TIFF 6.0: StripOffsets, StripByteCounts, TileOffsets,
// TileByteCounts).
func checkTIFF(r io.ReaderAt, size int64) error {
	t, ok := newTIFFReader(r, 0, size)
	if !ok {
		return nil // the decoder read the header; nothing cheap to add
	}
	entries, ok := t.ifd0()
	if !ok {
		return nil
	}
	offTag, cntTag := tagStripOffsets, tagStripByteCounts
	if _, tiled := entries[tagTileOffsets]; tiled {
		offTag, cntTag = tagTileOffsets, tagTileByteCounts
	}
	offs, ok1 := t.uints(entries[offTag])
	cnts, ok2 := t.uints(entries[cntTag])
	if !ok1 || !ok2 || len(offs) != len(cnts) {
		return nil
	}
	for i := range offs {
		if end := offs[i] + cnts[i]; end > size {
			return fmt.Errorf("the TIFF header places pixel data up to byte %d, the file has %d", end, size)
		}
	}
	return nil
}
