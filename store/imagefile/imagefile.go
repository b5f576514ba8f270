// Package imagefile reads the image files of a project: it identifies them
// without decoding pixels (Probe) or with a full decode that proves the
// pixel data sound (Verify), refuses files that are too large, damaged or
// cut short, decodes them with their EXIF orientation applied and makes
// thumbnails. JPEG, PNG, GIF, BMP, TIFF and WebP are read.
package imagefile

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"image"
	"image/gif"
	"image/jpeg"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"

	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
	"golang.org/x/image/webp"
)

// Info describes an image file without decoding its pixels.
type Info struct {
	Format string // "jpeg", "png", "gif", "bmp", "tiff", "webp"
	// Width and Height are those of the image as displayed, after EXIF
	// orientation (orientations 5-8 swap the stored width and height).
	Width, Height int
	// StoredWidth and StoredHeight are those written in the file.
	StoredWidth, StoredHeight int
	// Orientation is the EXIF orientation 1..8; 1 when absent or unreadable.
	Orientation int
	SHA256      string // lower-case hex digest of the file bytes
	Size        int64  // file size in bytes
}

// DefaultMaxPixels is the pixel count (width × height) above which callers
// should refuse an image unless the user chose otherwise.
const DefaultMaxPixels = 100_000_000

// Errors that Probe and Decode return, wrapped with the file name and what is
// wrong; test with errors.Is.
var (
	// ErrTooLarge means the image has more pixels than the caller allows.
	ErrTooLarge = errors.New("image too large")
	// ErrTruncated means the file ends before the image does.
	ErrTruncated = errors.New("image file cut short")
	// ErrNotImage means the file is not in one of the formats read here.
	ErrNotImage = errors.New("not an image file")
	// ErrEmpty means the file has no bytes at all.
	ErrEmpty = errors.New("empty file")
	// ErrUnreadable means the file is in a known format but is damaged or
	// uses a variant of the format that cannot be decoded.
	ErrUnreadable = errors.New("image cannot be read")
)

// Formats lists the format names that Info.Format can hold.
var Formats = []string{"jpeg", "png", "gif", "bmp", "tiff", "webp"}

// formatTitle is the name of a format as a person writes it.
var formatTitle = map[string]string{
	"jpeg": "JPEG", "png": "PNG", "gif": "GIF", "bmp": "BMP", "tiff": "TIFF", "webp": "WebP",
}

var imageExts = map[string]bool{
	".jpg": true, ".jpeg": true, ".png": true, ".gif": true,
	".bmp": true, ".tif": true, ".tiff": true, ".webp": true,
}

// IsImageName reports whether a file name has the extension of a format read
// here (.jpg .jpeg .png .gif .bmp .tif .tiff .webp, in any case).
func IsImageName(name string) bool {
	return imageExts[strings.ToLower(filepath.Ext(name))]
}

// kindError carries one of the sentinel errors beside a message that already
// says everything; errors.Is finds both the sentinel and any cause.
type kindError struct {
	kind error
	err  error
}

func (e *kindError) Error() string   { return e.err.Error() }
func (e *kindError) Unwrap() []error { return []error{e.kind, e.err} }

// fail builds an error of the given kind whose message starts with the file
// name; the format may use %w for a cause.
func fail(name string, kind error, format string, args ...any) error {
	return &kindError{kind: kind, err: fmt.Errorf("%s: "+format, append([]any{name}, args...)...)}
}

// Probe identifies the image file at path and hashes its bytes without
// decoding its pixels. It refuses an image whose stored width × height
// exceeds maxPixels (DefaultMaxPixels when maxPixels <= 0), and files that
// are empty, not images, or cut short.
func Probe(path string, maxPixels int64) (Info, error) {
	f, size, err := open(path)
	if err != nil {
		return Info{}, err
	}
	defer f.Close()
	info, err := probe(f, size, path, maxPixels)
	if err != nil {
		return Info{}, err
	}
	if info.SHA256, err = hashReader(io.NewSectionReader(f, 0, size)); err != nil {
		return Info{}, fmt.Errorf("reading image %s: %w", path, err)
	}
	return info, nil
}

// Decode reads the whole image file at path and returns its pixels as
// displayed, with the EXIF orientation applied, and its Info. It applies the
// same checks as Probe, the pixel limit among them, before decoding.
func Decode(path string, maxPixels int64) (image.Image, Info, error) {
	img, info, err := read(path, maxPixels, true)
	if err != nil {
		return nil, Info{}, err
	}
	return Orient(img, info.Orientation), info, nil
}

// DecodeAtLeast is Decode for a consumer that needs only minW×minH pixels
// of the image as displayed (a detector's input, a thumbnail): a JPEG is
// decoded by libjpeg-turbo at the smallest of its DCT-domain scales
// (1/8 … 8/8) that is at least that large, which costs a fraction of a
// full decode; other formats, and builds without libjpeg-turbo, decode at
// full size. The image may so be smaller than Info's size, by a factor
// that is not the same on both axes to the pixel (sides round up). The
// file is not hashed (Info.SHA256 is empty).
func DecodeAtLeast(path string, maxPixels int64, minW, minH int) (image.Image, Info, error) {
	f, size, err := open(path)
	if err != nil {
		return nil, Info{}, err
	}
	defer f.Close()
	info, err := probe(f, size, path, maxPixels)
	if err != nil {
		return nil, Info{}, err
	}
	if info.Orientation >= 5 { // stored sideways
		minW, minH = minH, minW
	}
	img, err := decodeScaled(f, size, path, info.Format, minW, minH)
	if err != nil {
		return nil, Info{}, err
	}
	return Orient(img, info.Orientation), info, nil
}

// Verify is Probe that also decodes every pixel and throws them away, so
// that a file whose header and end marker are intact but whose image data
// is damaged (a flipped byte in the compressed data, a wrong checksum, a
// JPEG scan of garbage) is refused now rather than when it is first shown
// or searched. It costs a full decode: for a 1280×960 picture about 6 ms
// of one core as JPEG (libjpeg-turbo; 20 ms with image/jpeg) and 50 ms as
// PNG, against 0.4 ms and 2 ms for Probe
// (BenchmarkVerify, CPU time on a shared 2-core x86-64 server). Decodes
// running at once are bounded to verifyBudget pixels, so that many workers
// do not hold many huge images.
func Verify(path string, maxPixels int64) (Info, error) {
	_, info, err := read(path, maxPixels, false)
	return info, err
}

// read probes, hashes and decodes the file at path; without keep the
// decode runs under verifyBudget and the pixels are dropped.
func read(path string, maxPixels int64, keep bool) (image.Image, Info, error) {
	f, size, err := open(path)
	if err != nil {
		return nil, Info{}, err
	}
	defer f.Close()
	info, err := probe(f, size, path, maxPixels)
	if err != nil {
		return nil, Info{}, err
	}
	if info.SHA256, err = hashReader(io.NewSectionReader(f, 0, size)); err != nil {
		return nil, Info{}, fmt.Errorf("reading image %s: %w", path, err)
	}
	if !keep {
		n := verifyBudget.acquire(int64(info.StoredWidth) * int64(info.StoredHeight))
		defer verifyBudget.release(n)
	}
	img, err := decodeScaled(f, size, path, info.Format, 0, 0)
	if err != nil {
		return nil, Info{}, err
	}
	if b := img.Bounds(); b.Dx() != info.StoredWidth || b.Dy() != info.StoredHeight {
		return nil, Info{}, fail(path, ErrUnreadable, "the %s header says %d×%d pixels but the picture is %d×%d; the file is damaged",
			formatTitle[info.Format], info.StoredWidth, info.StoredHeight, b.Dx(), b.Dy())
	}
	if !keep {
		img = nil
	}
	return img, info, nil
}

// verifyBudget bounds the pixels Verify decodes at once: twice the default
// limit, so two of the largest images allowed, or many ordinary ones.
var verifyBudget = newPixelBudget(2 * DefaultMaxPixels)

// pixelBudget is a counting semaphore of pixels.
type pixelBudget struct {
	mu          sync.Mutex
	cond        *sync.Cond
	free, total int64
}

func newPixelBudget(total int64) *pixelBudget {
	b := &pixelBudget{free: total, total: total}
	b.cond = sync.NewCond(&b.mu)
	return b
}

// acquire waits until n pixels (at most the whole budget, so that an image
// above it still runs, alone) are free, takes them and returns how many.
func (b *pixelBudget) acquire(n int64) int64 {
	n = max(0, min(n, b.total))
	b.mu.Lock()
	defer b.mu.Unlock()
	for b.free < n {
		b.cond.Wait()
	}
	b.free -= n
	return n
}

func (b *pixelBudget) release(n int64) {
	b.mu.Lock()
	b.free += n
	b.mu.Unlock()
	b.cond.Broadcast()
}

// open opens a regular file and returns its size; folders and empty files
// are refused.
func open(path string) (*os.File, int64, error) {
	// Look before opening: opening a named pipe waits for a writer.
	if st, err := os.Stat(path); err == nil && !st.Mode().IsRegular() && !st.IsDir() {
		return nil, 0, fail(path, ErrNotImage, "is a named pipe, device or socket, not an image file")
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, fmt.Errorf("opening image: %w", err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, 0, fmt.Errorf("opening image: %w", err)
	}
	if !st.Mode().IsRegular() {
		f.Close()
		return nil, 0, fail(path, ErrNotImage, "is a folder or device, not an image file")
	}
	if st.Size() == 0 {
		f.Close()
		return nil, 0, fail(path, ErrEmpty, "the file is empty (0 bytes); it may not have finished copying or downloading")
	}
	return f, st.Size(), nil
}

// probe reads the header of an image held by r (size bytes, named name in
// messages) and checks its pixel count and structure; it leaves SHA256
// empty.
func probe(r io.ReaderAt, size int64, name string, maxPixels int64) (Info, error) {
	if size == 0 {
		return Info{}, fail(name, ErrEmpty, "the file is empty (0 bytes); it may not have finished copying or downloading")
	}
	if maxPixels <= 0 {
		maxPixels = DefaultMaxPixels
	}
	cfg, format, err := decodeConfig(io.NewSectionReader(r, 0, size))
	if err != nil {
		if !errors.Is(err, image.ErrFormat) && checkStructure(r, size, format) != nil {
			// A decoder may call a short file damaged; the structure knows better.
			return Info{}, fail(name, ErrTruncated, "the file ends inside its %s header; it was probably not copied or downloaded completely", formatTitle[format])
		}
		return Info{}, configError(name, format, err)
	}
	if formatTitle[format] == "" {
		// Another package of the program may have registered more decoders.
		return Info{}, fail(name, ErrNotImage, "is a %s image; only JPEG, PNG, GIF, BMP, TIFF and WebP files can be used", format)
	}
	title := formatTitle[format]
	if cfg.Width <= 0 || cfg.Height <= 0 {
		return Info{}, fail(name, ErrUnreadable, "the %s header gives a size of %d×%d pixels; the file is damaged", title, cfg.Width, cfg.Height)
	}
	if px := int64(cfg.Width) * int64(cfg.Height); px > maxPixels {
		// Exact pixel counts: rounded megapixels can read the same on both sides.
		return Info{}, fail(name, ErrTooLarge, "%d×%d = %d pixels is above the limit of %d pixels (%s megapixels)",
			cfg.Width, cfg.Height, px, maxPixels, strconv.FormatFloat(float64(maxPixels)/1e6, 'f', -1, 64))
	}
	if err := checkStructure(r, size, format); err != nil {
		return Info{}, fail(name, ErrTruncated, "the file is cut short (%w); it was probably not copied or downloaded completely", err)
	}
	info := Info{
		Format:       format,
		StoredWidth:  cfg.Width,
		StoredHeight: cfg.Height,
		Width:        cfg.Width,
		Height:       cfg.Height,
		Orientation:  orientationAt(r, size, format),
		Size:         size,
	}
	if info.Orientation >= 5 {
		info.Width, info.Height = info.Height, info.Width
	}
	return info, nil
}

// isTIFF reports whether a file starts with a TIFF header (TIFF 6.0,
// section 2).
func isTIFF(head []byte) bool {
	return len(head) >= 4 && (string(head[:4]) == "II*\x00" || string(head[:4]) == "MM\x00*")
}

// decodeConfig reads the header of an image. TIFF goes straight to its
// decoder with random access: through image.DecodeConfig it would get a
// buffered reader and copy everything up to the directory, which the x/image
// encoder writes after the pixels.
func decodeConfig(r *io.SectionReader) (image.Config, string, error) {
	var head [4]byte
	n, _ := r.ReadAt(head[:], 0)
	if isTIFF(head[:n]) {
		cfg, err := tiff.DecodeConfig(r)
		return cfg, "tiff", err
	}
	return image.DecodeConfig(bufio.NewReader(r))
}

// decodeScaled decodes a file probe has identified, at least minW×minH of
// its stored pixels (0×0: full size): JPEGs by libjpeg-turbo where the
// build has it (a DCT-domain scale when smaller will do; at full size
// about three times faster than image/jpeg), the rest, and JPEGs
// libjpeg-turbo does not take (CMYK), by Go's decoders at full size.
func decodeScaled(f *os.File, size int64, path, format string, minW, minH int) (image.Image, error) {
	if format == "jpeg" && TurboJPEG {
		data := make([]byte, size)
		if _, err := f.ReadAt(data, 0); err != nil {
			return nil, fmt.Errorf("reading image %s: %w", path, err)
		}
		rgba, ok, err := turboScaled(data, minW, minH)
		switch {
		case ok && err != nil:
			return nil, decodeError(path, format, err)
		case ok:
			return rgba, nil
		}
	}
	img, err := decodePixels(io.NewSectionReader(f, 0, size), format)
	if err != nil {
		return nil, decodeError(path, format, err)
	}
	return img, nil
}

// decodePixels decodes an image of a format probe has already identified.
func decodePixels(r *io.SectionReader, format string) (image.Image, error) {
	switch format {
	case "tiff":
		return tiff.Decode(r) // random access, see decodeConfig
	case "jpeg":
		return jpeg.Decode(bufio.NewReader(r))
	case "png":
		return png.Decode(bufio.NewReader(r))
	case "gif":
		return gif.Decode(bufio.NewReader(r))
	case "bmp":
		return bmp.Decode(bufio.NewReader(r))
	case "webp":
		return webp.Decode(bufio.NewReader(r))
	}
	return nil, fmt.Errorf("no decoder for format %q", format)
}

func isEOF(err error) bool {
	return errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF)
}

func isUnsupported(err error) bool {
	var tu tiff.UnsupportedError
	var ju jpeg.UnsupportedError
	var pu png.UnsupportedError
	return errors.Is(err, bmp.ErrUnsupported) || errors.As(err, &tu) || errors.As(err, &ju) || errors.As(err, &pu)
}

// configError explains why the header of a file could not be read.
func configError(name, format string, err error) error {
	if errors.Is(err, image.ErrFormat) {
		if IsImageName(name) {
			return fail(name, ErrNotImage, "is not an image file, although its name ends in %s: its content is not JPEG, PNG, GIF, BMP, TIFF or WebP", filepath.Ext(name))
		}
		return fail(name, ErrNotImage, "is not an image file: its content is not JPEG, PNG, GIF, BMP, TIFF or WebP")
	}
	title := formatTitle[format]
	if title == "" {
		title = "image"
	}
	if isEOF(err) {
		return fail(name, ErrTruncated, "the file ends inside its %s header; it was probably not copied or downloaded completely", title)
	}
	if isUnsupported(err) {
		return fail(name, ErrUnreadable, "is a kind of %s file this program cannot read (%w); convert it to PNG or JPEG", title, err)
	}
	return fail(name, ErrUnreadable, "the %s header is damaged (%w)", title, err)
}

// decodeError explains why the pixels of a file could not be decoded.
func decodeError(name, format string, err error) error {
	title := formatTitle[format]
	if isEOF(err) {
		return fail(name, ErrTruncated, "the %s data ends early (%w); the file was probably not copied or downloaded completely: copy it again", title, err)
	}
	if isUnsupported(err) {
		return fail(name, ErrUnreadable, "is a kind of %s file this program cannot read (%w); convert it to PNG or JPEG", title, err)
	}
	return fail(name, ErrUnreadable, "the %s data is damaged (%w); copy it again from where it came from, or save it again from the program that made it", title, err)
}

// hashReader returns the lower-case hex SHA-256 of everything r yields,
// reading it in blocks.
func hashReader(r io.Reader) (string, error) {
	h := sha256.New()
	buf := make([]byte, 256<<10)
	if _, err := io.CopyBuffer(h, r, buf); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
