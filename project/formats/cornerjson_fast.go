package formats

import (
	"bytes"
	"unicode/utf8"
)

// A fast path for the array elements of corner/size JSON. encoding/json
// spends most of a big import's reading time on reflection and on its
// per-value state machine; the elements of these files are flat objects
// of a few numbers, so most of them can be read directly. The fast path
// only ever says "this element is exactly what encoding/json would make
// of it" or "not sure": it takes an element only when every byte of it
// is valid JSON of a shape it fully understands, and gives the field
// types' own UnmarshalJSON the very bytes encoding/json would give them.
// Anything else (a key with an escape or a byte beyond ASCII, a string
// field with an escape, invalid UTF-8 or not a string, malformed JSON)
// goes the slow way through decode, which also words every error.
// TestFastPathAgreesWithEncodingJSON and FuzzFastPathAgrees hold the two
// to the same results.

// fastField is what a member of an element goes into.
type fastField struct {
	name string
	// num receives the value of a number, bbox or other field decoded by
	// its UnmarshalJSON; str, a plain string field, when num is nil.
	num interface{ UnmarshalJSON([]byte) error }
	str *string
	box *jsonBBox
}

// fastObject reads raw, one JSON object from '{' to its '}', into fields.
// Keys match a field's name as encoding/json matches them (exactly or
// ignoring ASCII case; any other key is skipped after its value is
// checked), and a repeated key leaves its last value, as there. It
// reports false, leaving the fields in any state, when it cannot be sure
// of giving encoding/json's result.
func fastObject(raw []byte, fields []fastField) bool {
	end, ok := fastObjectPrefix(raw, fields)
	return ok && end == len(raw)
}

// fastObjectPrefix is fastObject for an object at the start of raw,
// which may go on after it; it returns the index just past the '}'.
func fastObjectPrefix(raw []byte, fields []fastField) (int, bool) {
	n := len(raw)
	if n < 2 || raw[0] != '{' {
		return 0, false
	}
	i := skipWS(raw, 1)
	if i < n && raw[i] == '}' {
		return i + 1, true
	}
	for {
		// The key: ASCII without escapes only.
		if i >= n || raw[i] != '"' {
			return 0, false
		}
		ks := i + 1
		i = ks
		for i < n && raw[i] != '"' {
			if c := raw[i]; c < 0x20 || c >= 0x80 || c == '\\' {
				return 0, false
			}
			i++
		}
		if i >= n {
			return 0, false
		}
		key := raw[ks:i]
		i = skipWS(raw, i+1)
		if i >= n || raw[i] != ':' {
			return 0, false
		}
		vs := skipWS(raw, i+1)
		ve, ok := scanValue(raw, vs, 2)
		if !ok {
			return 0, false
		}
		if f := matchField(fields, key); f != nil {
			val := raw[vs:ve]
			if f.box != nil {
				f.box.fast(val)
			} else if f.num != nil {
				// The field types never fail; they record what is wrong.
				if f.num.UnmarshalJSON(val) != nil {
					return 0, false
				}
			} else {
				switch {
				case val[0] == 'n':
					// null leaves a string as it was (encoding/json).
				case val[0] != '"':
					return 0, false // a type error, worded by decode
				default:
					s := val[1 : len(val)-1]
					for _, c := range s {
						if c == '\\' {
							return 0, false
						}
					}
					if !utf8.Valid(s) {
						return 0, false
					}
					*f.str = string(s)
				}
			}
		}
		i = skipWS(raw, ve)
		if i >= n {
			return 0, false
		}
		switch raw[i] {
		case ',':
			i = skipWS(raw, i+1)
		case '}':
			return i + 1, true
		default:
			return 0, false
		}
	}
}

// matchField finds the field of an ASCII key: an exact match first, then
// one ignoring case (encoding/json's rule, bytes.EqualFold, which for
// ASCII keys is ASCII case folding).
func matchField(fields []fastField, key []byte) *fastField {
	for i := range fields {
		if fields[i].name == string(key) {
			return &fields[i]
		}
	}
	for i := range fields {
		if asciiEqualFold(fields[i].name, key) {
			return &fields[i]
		}
	}
	return nil
}

func asciiEqualFold(name string, key []byte) bool {
	if len(name) != len(key) {
		return false
	}
	for i := 0; i < len(key); i++ {
		a, b := name[i], key[i]
		if 'A' <= a && a <= 'Z' {
			a += 'a' - 'A'
		}
		if 'A' <= b && b <= 'Z' {
			b += 'a' - 'A'
		}
		if a != b {
			return false
		}
	}
	return true
}

func skipWS(b []byte, i int) int {
	for i < len(b) {
		switch b[i] {
		case ' ', '\t', '\n', '\r':
			i++
		default:
			return i
		}
	}
	return i
}

// scanValue checks the JSON value starting at b[i] (RFC 8259's grammar)
// and returns the index just past it; false when it is not valid JSON or
// nests deeper than value allows (depth is the value's: 1 for an array
// element, 2 for a member of one).
func scanValue(b []byte, i, depth int) (int, bool) {
	if i >= len(b) || depth > maxNesting {
		return i, false
	}
	switch c := b[i]; {
	case c == '"':
		return scanString(b, i)
	case c == '-' || ('0' <= c && c <= '9'):
		return scanNumber(b, i)
	case c == '{':
		i = skipWS(b, i+1)
		if i < len(b) && b[i] == '}' {
			return i + 1, true
		}
		for {
			if i >= len(b) || b[i] != '"' {
				return i, false
			}
			var ok bool
			if i, ok = scanString(b, i); !ok {
				return i, false
			}
			i = skipWS(b, i)
			if i >= len(b) || b[i] != ':' {
				return i, false
			}
			if i, ok = scanValue(b, skipWS(b, i+1), depth+1); !ok {
				return i, false
			}
			i = skipWS(b, i)
			if i >= len(b) {
				return i, false
			}
			switch b[i] {
			case ',':
				i = skipWS(b, i+1)
			case '}':
				return i + 1, true
			default:
				return i, false
			}
		}
	case c == '[':
		i = skipWS(b, i+1)
		if i < len(b) && b[i] == ']' {
			return i + 1, true
		}
		for {
			var ok bool
			if i, ok = scanValue(b, i, depth+1); !ok {
				return i, false
			}
			i = skipWS(b, i)
			if i >= len(b) {
				return i, false
			}
			switch b[i] {
			case ',':
				i = skipWS(b, i+1)
			case ']':
				return i + 1, true
			default:
				return i, false
			}
		}
	}
	for _, lit := range [...]string{"true", "false", "null"} {
		if len(b)-i >= len(lit) && string(b[i:i+len(lit)]) == lit {
			return i + len(lit), true
		}
	}
	return i, false
}

// scanString checks the string starting at b[i] == '"': no control
// characters, only JSON's escapes. Other bytes, valid UTF-8 or not, are
// accepted, as encoding/json accepts them.
func scanString(b []byte, i int) (int, bool) {
	for i++; i < len(b); i++ {
		switch c := b[i]; {
		case c == '"':
			return i + 1, true
		case c < 0x20:
			return i, false
		case c == '\\':
			i++
			if i >= len(b) {
				return i, false
			}
			switch b[i] {
			case '"', '\\', '/', 'b', 'f', 'n', 'r', 't':
			case 'u':
				if len(b)-i < 5 {
					return i, false
				}
				for _, h := range b[i+1 : i+5] {
					if !('0' <= h && h <= '9' || 'a' <= h && h <= 'f' || 'A' <= h && h <= 'F') {
						return i, false
					}
				}
				i += 4
			default:
				return i, false
			}
		}
	}
	return i, false
}

// scanNumber checks the number starting at b[i]:
// -?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?
func scanNumber(b []byte, i int) (int, bool) {
	digits := func() bool {
		s := i
		for i < len(b) && '0' <= b[i] && b[i] <= '9' {
			i++
		}
		return i > s
	}
	if b[i] == '-' {
		i++
	}
	if i < len(b) && b[i] == '0' {
		i++
	} else if !digits() {
		return i, false
	}
	if i < len(b) && b[i] == '.' {
		i++
		if !digits() {
			return i, false
		}
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		if !digits() {
			return i, false
		}
	}
	return i, true
}

// The fast fields of each element type, named as in their json tags.

func (in *cjImageIn) fastFields() []fastField {
	return []fastField{{name: "id", num: &in.ID}, {name: "file_name", str: &in.FileName},
		{name: "width", num: &in.Width}, {name: "height", num: &in.Height}}
}

func (in *cjCategoryIn) fastFields() []fastField {
	return []fastField{{name: "id", num: &in.ID}, {name: "name", str: &in.Name}}
}

func (in *cjAnnotationIn) fastFields() []fastField {
	return []fastField{{name: "id", num: &in.ID}, {name: "image_id", num: &in.ImageID}, {name: "category_id", num: &in.CategoryID},
		{name: "bbox", box: &in.BBox}, {name: "iscrowd", num: &in.IsCrowd}, {name: "score", num: &in.Score}}
}

func (in *cjPredictionIn) fastFields() []fastField {
	return []fastField{{name: "image_id", num: &in.ImageID}, {name: "file_name", str: &in.FileName},
		{name: "category_id", num: &in.CategoryID}, {name: "category", str: &in.Category},
		{name: "bbox", box: &in.BBox}, {name: "score", num: &in.Score}}
}

// fast sets bb from val, a valid JSON value, as UnmarshalJSON does; it
// reads the usual array of four numbers itself.
func (bb *jsonBBox) fast(val []byte) {
	var v [4]float64
	i := 0
	if val[0] != '[' {
		bb.UnmarshalJSON(val)
		return
	}
	for k := 0; k < 4; k++ {
		i = skipWS(val, i+1)
		e, ok := scanNumber(val, i)
		if !ok {
			bb.UnmarshalJSON(val)
			return
		}
		if v[k], ok = parseJSONFloat(val[i:e]); !ok {
			bb.UnmarshalJSON(val)
			return
		}
		i = skipWS(val, e)
		if want := byte(','); k == 3 && (i != len(val)-1 || val[i] != ']') || k < 3 && val[i] != want {
			bb.UnmarshalJSON(val)
			return
		}
	}
	*bb = jsonBBox{v: v, set: true}
}

// readElem reads the next array element, which must be an object, into
// *in (zeroed first); fields are in's fast fields. An element that lies
// whole in the input buffer is read from there, without a copy; one that
// does not is read by value and then tried on the fast path; anything
// the fast path is unsure of goes to decode. It returns the element's
// first line.
func readElem[T any](p *cjReader, path func() string, in *T, fields []fastField) (int, error) {
	var zero T
	*in = zero
	if c, err := p.peek(); err == nil && c == '{' {
		buf, _ := p.r.Peek(p.r.Buffered())
		if end, ok := fastObjectPrefix(buf, fields); ok {
			start := p.line
			p.line += bytes.Count(buf[:end], []byte{'\n'})
			p.lastLine = p.line
			p.r.Discard(end)
			return start, nil
		}
		*in = zero
	}
	raw, start, err := p.value(path)
	if err != nil {
		return 0, err
	}
	if fastObject(raw, fields) {
		return start, nil
	}
	*in = zero
	return start, p.decode(raw, start, path, in)
}
