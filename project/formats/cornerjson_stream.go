package formats

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strconv"
)

// Streaming reader shared by both corner/size JSON layouts, the dataset and
// the prediction list. It walks the outer structure (the top-level object
// or array and the arrays in it) byte by byte, counting lines, and hands
// each array element, at most MaxRecordBytes long, to encoding/json. So a
// file is never held whole, a file that is not JSON is refused at its
// first byte, and every message has an exact line.

// cjReader reads a corner/size JSON document from a stream.
type cjReader struct {
	file     string
	r        *bufio.Reader
	line     int    // line of the next byte
	lastLine int    // line of the last byte that is not white space
	raw      []byte // the value last read by value, reused
	dec      *json.Decoder
	feed     *jsonFeeder // the decoder's input
}

func newCJReader(r io.Reader, file string) *cjReader {
	return &cjReader{file: file, r: newInput(r, 64<<10), line: 1, lastLine: 1}
}

// errAt builds a PositionError on a line.
func (p *cjReader) errAt(line int, path, field, msg string) *PositionError {
	return &PositionError{File: p.file, Line: line, Path: path, Field: field, Msg: msg}
}

// readFail converts an error of the underlying reader.
func (p *cjReader) readFail(err error, path string) *PositionError {
	if err == io.EOF || err == io.ErrUnexpectedEOF {
		return p.errAt(p.lastLine, path, "", "malformed JSON: unexpected end of input")
	}
	return p.errAt(p.line, path, "", "cannot read the file: "+err.Error())
}

// peek skips white space and returns the next byte without consuming it;
// io.EOF at the end of the input.
func (p *cjReader) peek() (byte, error) {
	for {
		c, err := p.r.ReadByte()
		if err != nil {
			return 0, err
		}
		switch c {
		case '\n':
			p.line++
		case ' ', '\t', '\r':
		default:
			p.r.UnreadByte()
			return c, nil
		}
	}
}

// take consumes the byte peek returned.
func (p *cjReader) take() {
	p.r.ReadByte()
	p.lastLine = p.line
}

// head returns up to four bytes from the next one, for startProblem.
func (p *cjReader) head() []byte {
	b, _ := p.r.Peek(4)
	return b
}

// syntax reports malformed JSON at the next byte c.
func (p *cjReader) syntax(c byte, path, context string) *PositionError {
	return p.errAt(p.line, path, "", "malformed JSON: "+byteName(c)+" "+context)
}

// value reads one JSON value whose first byte is next (white space
// skipped) into p.raw and returns it with the line it starts on. It only
// finds the value's end (matching brackets outside strings); encoding/json
// checks the rest. A value longer than MaxRecordBytes is refused.
func (p *cjReader) value(path func() string) ([]byte, int, error) {
	c, err := p.peek()
	if err != nil {
		return nil, 0, p.readFail(err, path())
	}
	if !jsonStartsValue(c) {
		return nil, 0, p.syntax(c, path(), "where a value should begin")
	}
	start := p.line
	p.raw = p.raw[:0]
	scalar := c != '{' && c != '[' && c != '"'
	depth, inStr, esc := 0, false, false
	for {
		buf, err := p.r.Peek(max(1, p.r.Buffered()))
		if len(buf) == 0 {
			if err == io.EOF && scalar && len(p.raw) > 0 {
				return p.raw, start, nil // a number or literal ends the input
			}
			return nil, 0, p.readFail(err, path())
		}
		end := -1 // bytes of buf that belong to the value
	scan:
		for i, c := range buf {
			switch {
			case inStr:
				switch {
				case esc:
					esc = false
				case c == '\\':
					esc = true
				case c == '"':
					inStr = false
					if depth == 0 {
						end = i + 1
						break scan
					}
				}
			case scalar:
				switch c {
				case ' ', '\t', '\r', '\n', ',', ':', ']', '}', '[', '{', '"':
					end = i
					break scan
				}
			default:
				switch c {
				case '"':
					inStr = true
				case '{', '[':
					if depth++; depth > maxNesting {
						return nil, 0, p.errAt(start, path(), "", fmt.Sprintf("arrays and objects are nested more than %d deep", maxNesting))
					}
				case '}', ']':
					if depth--; depth == 0 {
						end = i + 1
						break scan
					}
				}
			}
		}
		n := end
		if n < 0 {
			n = len(buf)
		}
		if len(p.raw)+n > MaxRecordBytes {
			return nil, 0, p.errAt(start, path(), "", fmt.Sprintf("this value is longer than %d bytes (1 MiB), more than one record holds; is this the right file?", MaxRecordBytes))
		}
		p.raw = append(p.raw, buf[:n]...)
		p.line += bytes.Count(buf[:n], []byte{'\n'})
		p.lastLine = p.line
		p.r.Discard(n)
		if end >= 0 {
			return p.raw, start, nil
		}
	}
}

// decode unmarshals a value read by value into v and converts errors to
// PositionErrors: syntax errors at their own line, type errors (only the
// string fields use encoding/json's conversion) with the field's line.
func (p *cjReader) decode(raw []byte, start int, path func() string, v any) error {
	var err error
	if raw[0] == '{' {
		// One decoder for all elements saves json.Unmarshal's per-call
		// state. An object ends at its '}', so the decoder never reads
		// past raw; after any error it is dropped and the error taken
		// from json.Unmarshal, whose offsets are known to count from raw.
		if p.dec == nil {
			p.feed = &jsonFeeder{}
			p.dec = json.NewDecoder(p.feed)
		}
		p.feed.b = raw
		if err = p.dec.Decode(v); err == nil && len(p.feed.b) == 0 {
			return nil
		}
		p.dec = nil
		err = json.Unmarshal(raw, v)
	} else {
		err = json.Unmarshal(raw, v)
	}
	if err == nil && raw[0] == '{' {
		return nil
	}
	var se *json.SyntaxError
	if errors.As(err, &se) {
		off := min(max(se.Offset-1, 0), int64(len(raw)))
		return p.errAt(start+bytes.Count(raw[:off], []byte{'\n'}), path(), "", "malformed JSON: "+se.Error())
	}
	if raw[0] != '{' {
		return p.errAt(start, path(), "", "must be an object, not "+kindOfByte(raw[0]))
	}
	var ute *json.UnmarshalTypeError
	if errors.As(err, &ute) {
		off := min(max(ute.Offset, 0), int64(len(raw)))
		return p.errAt(start+bytes.Count(raw[:off], []byte{'\n'}), path(), ute.Field, "must be a string, not "+ute.Value)
	}
	if err != nil {
		return p.errAt(start, path(), "", err.Error())
	}
	return nil
}

// jsonFeeder hands the decoder one value at a time.
type jsonFeeder struct{ b []byte }

var errFeederEmpty = errors.New("corner/size JSON: the decoder read past a value")

func (f *jsonFeeder) Read(p []byte) (int, error) {
	if len(f.b) == 0 {
		return 0, errFeederEmpty
	}
	n := copy(p, f.b)
	f.b = f.b[n:]
	return n, nil
}

// array reads an array whose '[' is next and calls elem for each element
// with its index; elem reads the element with value.
func (p *cjReader) array(path string, elem func(k int) error) error {
	c, err := p.peek()
	if err != nil {
		return p.readFail(err, path)
	}
	if c != '[' {
		if path == "" {
			return p.errAt(p.line, "", "", "the file must hold one JSON array of predictions, not "+kindOfByte(c))
		}
		return p.errAt(p.line, path, "", "must be an array, not "+kindOfByte(c))
	}
	p.take()
	if c, err = p.peek(); err != nil {
		return p.readFail(err, path)
	}
	if c == ']' {
		p.take()
		return nil
	}
	for k := 0; ; k++ {
		if err := elem(k); err != nil {
			return err
		}
		c, err := p.peek()
		if err != nil {
			return p.readFail(err, path)
		}
		switch c {
		case ',':
			p.take()
		case ']':
			p.take()
			return nil
		default:
			return p.syntax(c, path, "after an array element; want ',' or ']'")
		}
	}
}

// object reads an object whose '{' is next and calls member for each key
// with the key and its line; member reads the value.
func (p *cjReader) object(path string, member func(key string, line int) error) error {
	p.take() // the '{'
	c, err := p.peek()
	if err != nil {
		return p.readFail(err, path)
	}
	if c == '}' {
		p.take()
		return nil
	}
	for {
		if c != '"' {
			return p.syntax(c, path, "where an object key should begin")
		}
		raw, line, err := p.value(func() string { return path })
		if err != nil {
			return err
		}
		var key string
		if err := json.Unmarshal(raw, &key); err != nil {
			return p.errAt(line, path, "", "malformed JSON: the key "+clip(string(raw))+" is not a valid string")
		}
		if c, err = p.peek(); err != nil {
			return p.readFail(err, path)
		}
		if c != ':' {
			return p.syntax(c, path, "after an object key; want ':'")
		}
		p.take()
		if err := member(key, line); err != nil {
			return err
		}
		if c, err = p.peek(); err != nil {
			return p.readFail(err, path)
		}
		switch c {
		case ',':
			p.take()
			if c, err = p.peek(); err != nil {
				return p.readFail(err, path)
			}
		case '}':
			p.take()
			return nil
		default:
			return p.syntax(c, path, "after an object member; want ',' or '}'")
		}
	}
}

// skip reads and discards the next value, however large, keeping only one
// string or number at a time; depth is its nesting.
func (p *cjReader) skip(path string, depth int) error {
	c, err := p.peek()
	if err != nil {
		return p.readFail(err, path)
	}
	if depth > maxNesting {
		return p.errAt(p.line, path, "", fmt.Sprintf("arrays and objects are nested more than %d deep", maxNesting))
	}
	switch c {
	case '{':
		return p.object(path, func(string, int) error { return p.skip(path, depth+1) })
	case '[':
		p.take()
		if c, err = p.peek(); err != nil {
			return p.readFail(err, path)
		}
		if c == ']' {
			p.take()
			return nil
		}
		for {
			if err := p.skip(path, depth+1); err != nil {
				return err
			}
			if c, err = p.peek(); err != nil {
				return p.readFail(err, path)
			}
			switch c {
			case ',':
				p.take()
			case ']':
				p.take()
				return nil
			default:
				return p.syntax(c, path, "after an array element; want ',' or ']'")
			}
		}
	}
	raw, line, err := p.value(func() string { return path })
	if err != nil {
		return err
	}
	var v skipValue
	if err := json.Unmarshal(raw, &v); err != nil {
		var se *json.SyntaxError
		if errors.As(err, &se) {
			return p.errAt(line, path, "", "malformed JSON: "+se.Error())
		}
		return p.errAt(line, path, "", err.Error())
	}
	return nil
}

// begin checks the first byte of the document, which must be want ('{'
// or '['): anything that cannot begin JSON is refused at once with what
// it is, and JSON of another kind with the kind. empty and kind complete
// the messages.
func (p *cjReader) begin(want byte, empty, kind string) error {
	c, err := p.peek()
	switch {
	case err == io.EOF:
		return p.errAt(1, "", "", "the file is empty; want "+empty)
	case err != nil:
		return p.readFail(err, "")
	case !jsonStartsValue(c):
		return p.errAt(p.line, "", "", startProblem(p.head(), "JSON")+"; want "+empty)
	case c != want:
		return p.errAt(p.line, "", "", "the file must hold "+kind+", not "+kindOfByte(c))
	}
	return nil
}

// end checks that nothing but white space follows the top-level value.
func (p *cjReader) end() error {
	c, err := p.peek()
	if err == io.EOF {
		return nil
	}
	if err != nil {
		return p.readFail(err, "")
	}
	switch c {
	case '{', '[':
		return p.errAt(p.line, "", "", "unexpected "+kindOfByte(c)+" after the top-level value; the file holds one value")
	}
	return p.syntax(c, "", "after the top-level value; the file holds one value")
}

// jsonStartsValue reports whether c can begin a JSON value.
func jsonStartsValue(c byte) bool {
	switch c {
	case '{', '[', '"', '-', 't', 'f', 'n':
		return true
	}
	return c >= '0' && c <= '9'
}

func kindOfByte(c byte) string {
	switch c {
	case '{':
		return "an object"
	case '[':
		return "an array"
	case '"':
		return "a string"
	case 't', 'f':
		return "a boolean"
	case 'n':
		return "null"
	}
	if c == '-' || (c >= '0' && c <= '9') {
		return "a number"
	}
	return byteName(c)
}

// whereList builds many position strings in one allocation.
type whereList struct {
	buf  []byte
	ends []int
}

func (w *whereList) add(prefix string, k int) {
	w.buf = append(w.buf, prefix...)
	w.buf = strconv.AppendInt(w.buf, int64(k), 10)
	w.buf = append(w.buf, ']')
	w.ends = append(w.ends, len(w.buf))
}

// strings returns the position strings in the order they were added.
func (w *whereList) strings() []string {
	s := string(w.buf)
	out := make([]string, len(w.ends))
	prev := 0
	for i, e := range w.ends {
		out[i] = s[prev:e]
		prev = e
	}
	return out
}
