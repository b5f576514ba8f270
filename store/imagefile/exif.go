package imagefile

import (
	"bytes"
	"encoding/binary"
	"io"
	"strings"
)

// tagOrientation is the Exif Orientation tag (CIPA DC-008-2019, Exif 2.32),
// also a baseline TIFF 6.0 tag.
const tagOrientation = 0x0112

// ReadOrientation returns the EXIF orientation 1..8 held in the bytes of an
// image file of the given format: the APP1 Exif segment of a JPEG, or IFD0
// of a TIFF. It returns 1 for other formats and when the tag is absent,
// malformed or out of range.
func ReadOrientation(data []byte, format string) int {
	return orientationAt(bytes.NewReader(data), int64(len(data)), format)
}

// orientationAt is ReadOrientation for a file read with random access.
func orientationAt(r io.ReaderAt, size int64, format string) int {
	var t *tiffReader
	var ok bool
	switch strings.ToLower(format) {
	case "jpeg", "jpg":
		segs, found := jpegSegments(r, size)
		if !found || segs.exifLen == 0 {
			return 1
		}
		t, ok = newTIFFReader(r, segs.exifOff, segs.exifLen)
	case "tiff", "tif":
		t, ok = newTIFFReader(r, 0, size)
	default:
		return 1
	}
	if !ok {
		return 1
	}
	entries, ok := t.ifd0()
	if !ok {
		return 1
	}
	e, ok := entries[tagOrientation]
	if !ok || e.count != 1 {
		return 1
	}
	var v int64
	switch e.typ {
	case typeShort:
		v = int64(t.order.Uint16(e.value[:2]))
	case typeLong: // not what the standard says, but harmless to accept
		v = int64(t.order.Uint32(e.value[:]))
	default:
		return 1
	}
	if v < 1 || v > 8 {
		return 1
	}
	return int(v)
}

// jpegInfo locates what the header segments of a JPEG hold.
type jpegInfo struct {
	sos     int64 // offset of the start-of-scan marker, or of the last segment read
	exifOff int64 // offset of the TIFF header inside the first APP1 Exif segment
	exifLen int64 // its length; 0 when there is none
}

// jpegSegments walks the marker segments of a JPEG from SOI to the first
// SOS (ITU-T T.81, Annex B), noting the first APP1 segment that starts with
// the Exif identifier "Exif\0\0" (CIPA DC-008-2019, APP1 structure).
func jpegSegments(r io.ReaderAt, size int64) (jpegInfo, bool) {
	soi, ok := readAt(r, size, 0, 2)
	if !ok || soi[0] != 0xFF || soi[1] != 0xD8 {
		return jpegInfo{}, false
	}
	var info jpegInfo
	pos := int64(2)
	for {
		info.sos = pos
		p, ok := readAt(r, size, pos, 2)
		if !ok || p[0] != 0xFF {
			return info, true
		}
		marker := p[1]
		switch {
		case marker == 0xFF: // fill byte before a marker
			pos++
			continue
		case marker == 0xDA || marker == 0xD9: // start of scan, end of image
			return info, true
		case marker == 0x01 || (marker >= 0xD0 && marker <= 0xD7): // no length
			pos += 2
			continue
		}
		l, ok := readAt(r, size, pos+2, 2)
		if !ok {
			return info, true
		}
		n := int64(binary.BigEndian.Uint16(l))
		if n < 2 {
			return info, true
		}
		if marker == 0xE1 && info.exifLen == 0 && n >= 2+6 {
			if id, ok := readAt(r, size, pos+4, 6); ok && string(id) == "Exif\x00\x00" {
				info.exifOff = pos + 4 + 6
				info.exifLen = min(n-2-6, size-info.exifOff)
			}
		}
		pos += 2 + n
	}
}

// TIFF 6.0 field types used here.
const (
	typeShort = 3
	typeLong  = 4
)

// tiffReader reads a TIFF structure (TIFF 6.0, section 2) that starts at
// base and spans n bytes of r; offsets inside it are relative to base.
type tiffReader struct {
	r     io.ReaderAt
	base  int64
	n     int64
	order binary.ByteOrder
}

// ifdEntry is one 12-byte IFD entry.
type ifdEntry struct {
	typ   uint16
	count uint32
	value [4]byte // the value itself when it fits, else its offset
}

func newTIFFReader(r io.ReaderAt, base, n int64) (*tiffReader, bool) {
	t := &tiffReader{r: r, base: base, n: n}
	h, ok := t.read(0, 4)
	if !ok {
		return nil, false
	}
	switch string(h) {
	case "II*\x00":
		t.order = binary.LittleEndian
	case "MM\x00*":
		t.order = binary.BigEndian
	default:
		return nil, false
	}
	return t, true
}

// read returns n bytes at offset off of the structure, bounds-checked.
func (t *tiffReader) read(off, n int64) ([]byte, bool) {
	if off < 0 || n < 0 || off > t.n || n > t.n-off {
		return nil, false
	}
	return readAt(t.r, t.base+t.n, t.base+off, n)
}

// ifd0 returns the entries of the first IFD by tag.
func (t *tiffReader) ifd0() (map[uint16]ifdEntry, bool) {
	p, ok := t.read(4, 4)
	if !ok {
		return nil, false
	}
	off := int64(t.order.Uint32(p))
	c, ok := t.read(off, 2)
	if !ok {
		return nil, false
	}
	count := int64(t.order.Uint16(c))
	raw, ok := t.read(off+2, 12*count)
	if !ok {
		return nil, false
	}
	entries := make(map[uint16]ifdEntry, count)
	for i := int64(0); i < count; i++ {
		b := raw[12*i : 12*i+12]
		tag := t.order.Uint16(b[0:2])
		if _, dup := entries[tag]; dup {
			continue // the first one counts
		}
		e := ifdEntry{typ: t.order.Uint16(b[2:4]), count: t.order.Uint32(b[4:8])}
		copy(e.value[:], b[8:12])
		entries[tag] = e
	}
	return entries, true
}

// maxArray bounds the strip and tile arrays read to check a file.
const maxArray = 4 << 20

// uints returns the SHORT or LONG values of an entry.
func (t *tiffReader) uints(e ifdEntry) ([]int64, bool) {
	var width int64
	switch e.typ {
	case typeShort:
		width = 2
	case typeLong:
		width = 4
	default:
		return nil, false
	}
	n := int64(e.count)
	if n == 0 || n > maxArray {
		return nil, false
	}
	var p []byte
	if n*width <= 4 {
		p = e.value[:n*width]
	} else {
		var ok bool
		if p, ok = t.read(int64(t.order.Uint32(e.value[:])), n*width); !ok {
			return nil, false
		}
	}
	out := make([]int64, n)
	for i := range out {
		if width == 2 {
			out[i] = int64(t.order.Uint16(p[2*i:]))
		} else {
			out[i] = int64(t.order.Uint32(p[4*i:]))
		}
	}
	return out, true
}
