package formats

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Limits on what one record of a label or prediction file may hold. The
// readers stream their input and refuse a record beyond these limits with
// the file and line, so a wrong or hostile file costs a few megabytes of
// memory, not its own size.
const (
	// MaxRecordBytes is the most one record may hold: one line of a
	// centre-normalised text or class-names file, one CSV record (quoted
	// line breaks included), or one element of a JSON array (an image, a
	// category, an annotation with its segmentation, a prediction). A
	// hand-made or exported annotation is a few hundred bytes.
	MaxRecordBytes = 1 << 20
	// MaxNameBytes is the longest file name, path, class name or pose a
	// reader accepts (4096 bytes is Linux's PATH_MAX, common practice).
	MaxNameBytes = 4096
	// MaxXMLFileBytes is the largest per-image XML file: one image's
	// boxes, about 60,000 objects of the usual size.
	MaxXMLFileBytes = 16 << 20
	// maxNesting is the deepest nesting of JSON arrays and objects or of
	// XML elements that a reader follows.
	maxNesting = 1000
)

// utf8BOM is the UTF-8 byte-order mark, which some editors write at the
// start of a text file; the readers drop it.
var utf8BOM = []byte("\xef\xbb\xbf")

// newInput returns a buffered reader of size bytes on r with a UTF-8
// byte-order mark at its start dropped.
func newInput(r io.Reader, size int) *bufio.Reader {
	br := bufio.NewReaderSize(r, size)
	if head, _ := br.Peek(len(utf8BOM)); bytes.Equal(head, utf8BOM) {
		br.Discard(len(utf8BOM))
	}
	return br
}

// startProblem describes the first bytes of a file that cannot be what
// the reader wants: head is the file from its first byte that is not
// white space, and what is "JSON" or "XML". Known binary signatures get a
// hint about what to do.
func startProblem(head []byte, what string) string {
	switch {
	case bytes.HasPrefix(head, []byte{0xff, 0xfe}) || bytes.HasPrefix(head, []byte{0xfe, 0xff}):
		return fmt.Sprintf("the file starts with a UTF-16 byte-order mark (bytes 0x%02x 0x%02x), not UTF-8 %s; save it as UTF-8", head[0], head[1], what)
	case bytes.HasPrefix(head, []byte{0x1f, 0x8b}):
		return fmt.Sprintf("the file starts with bytes 0x1f 0x8b, which begin a gzip-compressed file, not %s; decompress it first", what)
	case bytes.HasPrefix(head, []byte("PK\x03\x04")):
		return fmt.Sprintf("the file starts with \"PK\", which begins a zip archive, not %s; unpack it first", what)
	}
	return "the file starts with " + byteName(head[0]) + ", not " + what
}

// byteName names a byte for a message: `"x" (byte 0x78)` when printable
// ASCII, `byte 0x00` otherwise.
func byteName(c byte) string {
	if c > ' ' && c < 0x7f {
		return fmt.Sprintf("%q (byte 0x%02x)", c, c)
	}
	return fmt.Sprintf("byte 0x%02x", c)
}

// textProblem reports the first NUL byte or invalid UTF-8 sequence in b,
// one line of a text file, with its byte offset in the line.
func textProblem(b []byte) (at int, msg string, bad bool) {
	i := bytes.IndexByte(b, 0)
	if i < 0 && utf8.Valid(b) {
		return 0, "", false
	}
	if i >= 0 {
		return i, "byte 0x00 (NUL), which a text file does not hold; is this a binary file?", true
	}
	for i := 0; i < len(b); {
		if b[i] < utf8.RuneSelf {
			i++
			continue
		}
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n <= 1 {
			return i, fmt.Sprintf("byte 0x%02x, which is not valid UTF-8; save the file as UTF-8", b[i]), true
		}
		i += n
	}
	return 0, "", false
}

// stringProblem is textProblem for a whole string.
func stringProblem(s string) (at int, msg string, bad bool) {
	if strings.IndexByte(s, 0) < 0 && utf8.ValidString(s) {
		return 0, "", false
	}
	return textProblem([]byte(s))
}

// clip shortens a value shown in a message to its first 64 bytes (cut at
// a character boundary), noting its length, so that a message stays
// readable whatever the file holds.
func clip(s string) string {
	const n = 64
	if len(s) <= n {
		return s
	}
	i := n
	for i > 0 && !utf8.RuneStart(s[i]) {
		i--
	}
	return fmt.Sprintf("%s… (%d bytes)", s[:i], len(s))
}

// quote is strconv.Quote of a value shown in a message, clipped as clip
// does.
func quote(s string) string {
	c := clip(s)
	if c == s {
		return strconv.Quote(s)
	}
	i := strings.LastIndex(c, "… (")
	return strconv.Quote(c[:i]) + c[i:]
}

// lineReader yields the lines of a text file without their line endings
// (\n or \r\n), with their 1-based numbers, refusing a line longer than
// MaxRecordBytes and bytes that are not UTF-8 text. A UTF-8 byte-order
// mark at the start of the file is dropped.
type lineReader struct {
	file string
	r    *bufio.Reader
	line int
	buf  []byte
	err  error // a *PositionError, or the reader's own error
}

func newLineReader(r io.Reader, file string) *lineReader {
	return &lineReader{file: file, r: newInput(r, 64<<10)}
}

// next returns the next line; ok is false at the end of the input or on an
// error (see readErr).
func (l *lineReader) next() (s string, ok bool) {
	if l.err != nil {
		return "", false
	}
	l.buf = l.buf[:0]
	n := l.line + 1
	for {
		chunk, err := l.r.ReadSlice('\n')
		// A NUL byte, the mark of a binary file, is refused at once;
		// UTF-8 is checked on the whole line, whose characters a chunk
		// may split.
		if at := bytes.IndexByte(chunk, 0); at >= 0 {
			_, msg, _ := textProblem(chunk[at:])
			l.err = l.notText(n, len(l.buf)+at, msg)
			return "", false
		}
		if len(l.buf)+len(chunk) > MaxRecordBytes+2 { // +2 for the line ending
			l.err = &PositionError{File: l.file, Line: n,
				Msg: fmt.Sprintf("the line is longer than %d bytes (1 MiB), more than a line of this layout holds; is this the right file?", MaxRecordBytes)}
			return "", false
		}
		l.buf = append(l.buf, chunk...)
		if err == bufio.ErrBufferFull {
			continue
		}
		if err != nil {
			l.err = err
			if len(l.buf) == 0 {
				return "", false
			}
		}
		break
	}
	l.line = n
	b := bytes.TrimSuffix(l.buf, []byte{'\n'})
	b = bytes.TrimSuffix(b, []byte{'\r'})
	if len(b) > MaxRecordBytes {
		l.err = &PositionError{File: l.file, Line: n,
			Msg: fmt.Sprintf("the line is longer than %d bytes (1 MiB), more than a line of this layout holds; is this the right file?", MaxRecordBytes)}
		return "", false
	}
	if at, msg, bad := textProblem(b); bad {
		l.err = l.notText(n, at, msg)
		return "", false
	}
	return string(b), true
}

// notText builds the error for a byte that is not text.
func (l *lineReader) notText(line, at int, msg string) *PositionError {
	if line == 1 && at == 0 {
		return &PositionError{File: l.file, Line: 1, Msg: "the file starts with " + msg}
	}
	return &PositionError{File: l.file, Line: line, Msg: fmt.Sprintf("byte %d of the line is %s", at+1, msg)}
}

// readErr returns a positioned error for a failed read, or nil at a clean
// end of input.
func (l *lineReader) readErr() error {
	var pe *PositionError
	switch {
	case l.err == nil || l.err == io.EOF:
		return nil
	case errors.As(l.err, &pe):
		return pe
	}
	return &PositionError{File: l.file, Line: l.line + 1, Msg: "reading: " + l.err.Error()}
}
