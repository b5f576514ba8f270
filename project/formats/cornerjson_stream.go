package formats

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"os"
	"strconv"
)

// Streaming reader shared by both corner/size JSON layouts, the dataset and
// the prediction list.

// cjReader walks a corner/size JSON document held in data.
type cjReader struct {
	file string
	data []byte
	dec  *json.Decoder
}

// estimate counts the occurrences of key in data, which bounds the number
// of records that use it, capped to keep a hostile file from reserving
// much.
func estimate(data []byte, key string) int {
	return min(bytes.Count(data, []byte(key)), len(data)/16+1)
}

func newCJReader(r io.Reader, file string) (*cjReader, error) {
	var buf bytes.Buffer
	switch s := r.(type) {
	case interface{ Len() int }: // bytes.Reader, strings.Reader, bytes.Buffer
		buf.Grow(s.Len() + bytes.MinRead)
	case interface{ Stat() (os.FileInfo, error) }: // os.File
		if fi, err := s.Stat(); err == nil && fi.Mode().IsRegular() && fi.Size() > 0 && fi.Size() < 1<<32 {
			buf.Grow(int(fi.Size()) + bytes.MinRead)
		}
	}
	_, err := buf.ReadFrom(r)
	data := buf.Bytes()
	if err != nil {
		return nil, &PositionError{File: file, Msg: "cannot read the file: " + err.Error()}
	}
	// A UTF-8 byte-order mark, as some editors on Windows write it, is not
	// JSON but says nothing wrong about the file (the text readers skip it
	// too); line numbers are unchanged without it.
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	dec := json.NewDecoder(bytes.NewReader(data))
	return &cjReader{file: file, data: data, dec: dec}, nil
}

// line returns the 1-based line of a byte offset.
func (p *cjReader) line(off int64) int {
	if off < 0 {
		off = 0
	}
	if off > int64(len(p.data)) {
		off = int64(len(p.data))
	}
	return bytes.Count(p.data[:off], []byte{'\n'}) + 1
}

// errAt builds a PositionError at a byte offset.
func (p *cjReader) errAt(off int64, path, field, msg string) *PositionError {
	return &PositionError{File: p.file, Line: p.line(off), Path: path, Field: field, Msg: msg}
}

// fail converts an error from the decoder into a PositionError. Syntax
// errors are located by validating the whole document, which gives an
// absolute byte offset.
func (p *cjReader) fail(err error, path string) *PositionError {
	var pe *PositionError
	if errors.As(err, &pe) {
		return pe
	}
	var se *json.SyntaxError
	if errors.As(err, &se) || errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
		var all skipValue
		if verr := json.Unmarshal(p.data, &all); verr != nil {
			var vse *json.SyntaxError
			if errors.As(verr, &vse) {
				return p.errAt(vse.Offset-1, path, "", "malformed JSON: "+vse.Error())
			}
		}
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			return p.errAt(int64(len(p.data)), path, "", "malformed JSON: unexpected end of input")
		}
		return p.errAt(p.dec.InputOffset(), path, "", "malformed JSON: "+err.Error())
	}
	return p.errAt(p.dec.InputOffset(), path, "", err.Error())
}

// valueStart returns the offset of the next value, skipping white space and
// one separating comma.
func (p *cjReader) valueStart() int64 {
	off := p.dec.InputOffset()
	comma := false
	for off < int64(len(p.data)) {
		switch p.data[off] {
		case ' ', '\t', '\n', '\r':
		case ',', ':':
			if comma {
				return off
			}
			comma = true
		default:
			return off
		}
		off++
	}
	return off
}

// array reads the opening bracket of an array named path and calls elem for
// each element with its index and start offset; elem decodes the element.
func (p *cjReader) array(path string, elem func(k int, start int64) error) error {
	start := p.valueStart()
	tok, err := p.dec.Token()
	if err != nil {
		return p.fail(err, path)
	}
	if tok != json.Delim('[') {
		if path == "" {
			return p.errAt(start, "", "", "the file must hold one JSON array of predictions, not "+tokenKind(tok))
		}
		return p.errAt(start, path, "", "must be an array, not "+tokenKind(tok))
	}
	for k := 0; p.dec.More(); k++ {
		if err := elem(k, p.valueStart()); err != nil {
			return err
		}
	}
	if _, err := p.dec.Token(); err != nil {
		return p.fail(err, path)
	}
	return nil
}

// element decodes one array element, which starts at start, into v and
// reports a PositionError for malformed JSON, a non-object or a field of the
// wrong type.
func (p *cjReader) element(v any, path func() string, start int64) error {
	// The decoder measures type-error offsets from just after the comma.
	raw := p.dec.InputOffset()
	if raw < int64(len(p.data)) && p.data[raw] == ',' {
		raw++
	}
	err := p.dec.Decode(v)
	var ute *json.UnmarshalTypeError
	if err != nil && !errors.As(err, &ute) {
		return p.fail(err, path())
	}
	if start < int64(len(p.data)) && p.data[start] != '{' {
		return p.errAt(start, path(), "", "must be an object, not "+kindOfByte(p.data[start]))
	}
	if ute != nil {
		// Only the string fields use the decoder's own conversion.
		return p.errAt(raw+ute.Offset, path(), ute.Field, "must be a string, not "+ute.Value)
	}
	return nil
}

// end checks that nothing but white space follows the top-level value.
func (p *cjReader) end() error {
	start := p.valueStart()
	tok, err := p.dec.Token()
	if err == io.EOF {
		return nil
	}
	if err != nil {
		return p.fail(err, "")
	}
	return p.errAt(start, "", "", "unexpected "+tokenKind(tok)+" after the top-level value")
}

func tokenKind(tok json.Token) string {
	switch t := tok.(type) {
	case json.Delim:
		switch t {
		case '{':
			return "an object"
		case '[':
			return "an array"
		}
		return "'" + t.String() + "'"
	case string:
		return "a string"
	case float64, json.Number:
		return "a number"
	case bool:
		return "a boolean"
	case nil:
		return "null"
	}
	return "a value"
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
	return "a number"
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
