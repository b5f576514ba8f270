package imagefile

import (
	"bytes"
	"encoding/binary"
	"image/color"
	"testing"
)

// The byte layouts below follow CIPA DC-008-2019 (Exif 2.32: APP1 with
// "Exif\0\0", then a TIFF structure) and TIFF 6.0 (section 2: header, IFD of
// 12-byte entries; Orientation is tag 274 = 0x0112, type SHORT).
func TestReadOrientation(t *testing.T) {
	jpg := encodeJPEG(t, pattern(8, 8))
	withIFDOffset := func(off uint32) []byte {
		b := exifTIFF(binary.BigEndian, 6)
		binary.BigEndian.PutUint32(b[4:8], off)
		return b
	}
	longType := exifTIFF(binary.LittleEndian, 3)
	binary.LittleEndian.PutUint16(longType[12:14], 4) // LONG, value 3 in the low bytes
	wrongCount := exifTIFF(binary.BigEndian, 6)
	binary.BigEndian.PutUint32(wrongCount[14:18], 2)
	app1 := func(tiff []byte) []byte { return segment(0xE1, append([]byte("Exif\x00\x00"), tiff...)) }

	cases := []struct {
		name   string
		data   []byte
		format string
		want   int
	}{
		{"jpeg MM 6", spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 6)), "jpeg", 6},
		{"jpeg II 3", spliceAfterSOI(jpg, exifAPP1(binary.LittleEndian, 3)), "jpeg", 3},
		{"jpg alias", spliceAfterSOI(jpg, exifAPP1(binary.LittleEndian, 2)), "JPG", 2},
		{"jpeg no exif", jpg, "jpeg", 1},
		{"jpeg value 9", spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 9)), "jpeg", 1},
		{"jpeg value 0", spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 0)), "jpeg", 1},
		{"jpeg second exif ignored", spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 5), exifAPP1(binary.BigEndian, 7)), "jpeg", 5},
		{"jpeg LONG type", spliceAfterSOI(jpg, app1(longType)), "jpeg", 3},
		{"jpeg count 2", spliceAfterSOI(jpg, app1(wrongCount)), "jpeg", 1},
		{"jpeg IFD beyond segment", spliceAfterSOI(jpg, app1(withIFDOffset(1000))), "jpeg", 1},
		{"jpeg IFD offset huge", spliceAfterSOI(jpg, app1(withIFDOffset(0xFFFFFFF0))), "jpeg", 1},
		{"jpeg cut inside IFD", spliceAfterSOI(jpg, app1(exifTIFF(binary.BigEndian, 6)[:15])), "jpeg", 1},
		{"jpeg exif after SOS not read", append(jpg[:len(jpg)-2:len(jpg)-2], exifAPP1(binary.BigEndian, 6)...), "jpeg", 1},
		{"tiff II 8", grayTIFF(binary.LittleEndian, 2, 2, make([]byte, 4), 8), "tiff", 8},
		{"tiff MM 5", grayTIFF(binary.BigEndian, 2, 2, make([]byte, 4), 5), "tiff", 5},
		{"tiff none", grayTIFF(binary.BigEndian, 2, 2, make([]byte, 4), 0), "tiff", 1},
		{"png", encodePNG(t, pattern(2, 2)), "png", 1},
		{"webp", webpLossless1x1(color.NRGBA{A: 255}), "webp", 1},
		{"empty", nil, "jpeg", 1},
		{"soi only", []byte{0xFF, 0xD8}, "jpeg", 1},
		{"zero-length segment", []byte{0xFF, 0xD8, 0xFF, 0xE1, 0x00, 0x00}, "jpeg", 1},
		{"bare tiff header", []byte("II*\x00"), "tiff", 1},
	}
	for _, c := range cases {
		if got := ReadOrientation(c.data, c.format); got != c.want {
			t.Errorf("%s: ReadOrientation = %d, want %d", c.name, got, c.want)
		}
	}
}

// FuzzReadOrientation checks that no input panics and every answer is a
// valid orientation; the seeds run as a plain test.
func FuzzReadOrientation(f *testing.F) {
	jpg := encodeJPEG(f, pattern(8, 8))
	f.Add(spliceAfterSOI(jpg, exifAPP1(binary.BigEndian, 6)), true)
	f.Add(spliceAfterSOI(jpg[:100:100], exifAPP1(binary.LittleEndian, 8)), true)
	f.Add(exifAPP1(binary.BigEndian, 3), true)
	f.Add(grayTIFF(binary.LittleEndian, 2, 2, make([]byte, 4), 7), false)
	f.Add(exifTIFF(binary.BigEndian, 2), false)
	f.Add([]byte("MM\x00*\xff\xff\xff\xff"), false)
	f.Add([]byte{0xFF, 0xD8, 0xFF, 0xFF, 0xFF, 0xE1, 0xFF, 0xFF}, true)
	f.Fuzz(func(t *testing.T, data []byte, jpeg bool) {
		format := "tiff"
		if jpeg {
			format = "jpeg"
		}
		if o := ReadOrientation(data, format); o < 1 || o > 8 {
			t.Fatalf("orientation %d", o)
		}
	})
}

// FuzzProbe checks that reading headers and structure never panics and
// never accepts an image over the pixel limit.
func FuzzProbe(f *testing.F) {
	src := pattern(12, 9)
	f.Add(encodePNG(f, src))
	f.Add(encodeJPEG(f, src))
	f.Add(spliceAfterSOI(encodeJPEG(f, src), exifAPP1(binary.BigEndian, 6)))
	f.Add(encodeGIF(f, src))
	f.Add(encodeBMP(f, src))
	f.Add(encodeTIFF(f, src))
	f.Add(grayTIFF(binary.BigEndian, 3, 2, make([]byte, 6), 6))
	f.Add(webpLossless1x1(color.NRGBA{A: 255}))
	f.Add(hugePNG(60000, 60000))
	const limit = 1 << 16
	f.Fuzz(func(t *testing.T, data []byte) {
		info, err := probe(bytes.NewReader(data), int64(len(data)), "fuzz", limit)
		if err != nil {
			return
		}
		if int64(info.StoredWidth)*int64(info.StoredHeight) > limit || info.Orientation < 1 || info.Orientation > 8 {
			t.Fatalf("accepted %+v", info)
		}
	})
}
