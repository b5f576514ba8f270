package storetest

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"os"
	"path/filepath"

	"boxwright/project"
)

// pic is one picture file a test makes: its name (a relative path, folders
// allowed) and its size as stored (before any EXIF orientation).
type pic struct {
	name string
	w, h int
	png  bool
	// orientation, when non-zero, adds an EXIF orientation tag (JPEG only).
	orientation uint16
}

// picture is a w×h image whose pixels depend on seed, so that pictures of
// different seeds have different bytes.
func picture(w, h, seed int) *image.RGBA {
	m := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			m.Set(x, y, color.RGBA{uint8(x*7 + seed), uint8(y*5 + seed*3), uint8(seed), 255})
		}
	}
	return m
}

// encode makes the file bytes of p with the next seed of the subtest.
func (e *env) encode(p pic) []byte {
	e.t.Helper()
	e.seed++
	var b bytes.Buffer
	var err error
	if p.png {
		err = png.Encode(&b, picture(p.w, p.h, e.seed))
	} else {
		err = jpeg.Encode(&b, picture(p.w, p.h, e.seed), nil)
	}
	e.fatal("encode "+p.name, err)
	if p.orientation != 0 {
		return withOrientation(b.Bytes(), p.orientation)
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

// writeFile writes data to path, making its folders.
func (e *env) writeFile(path string, data []byte) string {
	e.t.Helper()
	e.fatal("make folder", os.MkdirAll(filepath.Dir(path), 0o755))
	e.fatal("write "+path, os.WriteFile(path, data, 0o644))
	return path
}

func sum(data []byte) string {
	s := sha256.Sum256(data)
	return hex.EncodeToString(s[:])
}

// placed is a picture written to disk.
type placed struct {
	path string // absolute
	sha  string
	data []byte
}

// place writes the pictures under a new folder and returns them in order
// with the folder.
func (e *env) place(ps ...pic) (string, []placed) {
	e.t.Helper()
	dir := e.t.TempDir()
	out := make([]placed, len(ps))
	for i, p := range ps {
		data := e.encode(p)
		out[i] = placed{path: e.writeFile(filepath.Join(dir, filepath.FromSlash(p.name)), data), sha: sum(data), data: data}
	}
	return dir, out
}

// pictures adds the pictures to the project in one intake of their
// folder and returns their images in the order given (found by content).
func (e *env) pictures(ps ...pic) []project.Image {
	e.t.Helper()
	dir, files := e.place(ps...)
	rep, err := e.b.AddImages(e.ctx, []string{dir}, project.IntakeOptions{})
	e.fatal("add images", err)
	if rep.Added != len(ps) || len(rep.Failed) != 0 {
		e.t.Fatalf("intake of %d pictures: %+v", len(ps), rep)
	}
	return e.byContent(files)
}

// byContent finds the project images of the files by their SHA-256.
func (e *env) byContent(files []placed) []project.Image {
	e.t.Helper()
	ims, err := e.b.Images(e.ctx)
	e.fatal("list images", err)
	bySum := map[string]project.Image{}
	for _, im := range ims {
		bySum[im.SHA256] = im
	}
	out := make([]project.Image, len(files))
	for i, f := range files {
		im, ok := bySum[f.sha]
		if !ok {
			e.t.Fatalf("no image with the SHA-256 of %s", f.path)
		}
		out[i] = im
	}
	return out
}

// images adds n distinct 64×48 JPEG pictures.
func (e *env) images(n int) []project.Image {
	e.t.Helper()
	ps := make([]pic, n)
	for i := range ps {
		ps[i] = pic{name: "im" + string(rune('a'+i/26)) + string(rune('a'+i%26)) + ".jpg", w: 64, h: 48}
	}
	return e.pictures(ps...)
}
