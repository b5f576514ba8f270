package formats

import (
	"bytes"
	"fmt"
	"math"
	"strconv"

	"boxwright/project"
)

// Field types that remember whether they were present and well-formed. They
// never return an error from UnmarshalJSON, so that the caller can report the
// problem with its own position and words.

// jsonInt is an integer field.
type jsonInt struct {
	v   int64
	set bool // present, not null, an integer
	bad bool // present but not an integer
}

func (n *jsonInt) UnmarshalJSON(b []byte) error {
	*n = jsonInt{}
	if string(b) == "null" {
		return nil
	}
	v, ok := parseJSONInt(b)
	if !ok {
		n.bad = true
		return nil
	}
	n.v, n.set = v, true
	return nil
}

// parseJSONInt parses an integer without fraction or exponent that fits in
// int64.
func parseJSONInt(b []byte) (int64, bool) {
	neg := false
	if len(b) > 0 && b[0] == '-' {
		neg, b = true, b[1:]
	}
	if len(b) == 0 || len(b) > 19 {
		return 0, false
	}
	var u uint64
	for _, c := range b {
		if c < '0' || c > '9' {
			return 0, false
		}
		u = u*10 + uint64(c-'0')
	}
	if neg {
		if u > 1<<63 {
			return 0, false
		}
		return -int64(u), true
	}
	if u > math.MaxInt64 {
		return 0, false
	}
	return int64(u), true
}

// jsonFloat is a number field.
type jsonFloat struct {
	v   float64
	set bool // present, not null, a finite number
	bad bool // present but not a number, or too large for float64
}

func (f *jsonFloat) UnmarshalJSON(b []byte) error {
	*f = jsonFloat{}
	if string(b) == "null" {
		return nil
	}
	v, ok := parseJSONFloat(b)
	if !ok {
		f.bad = true
		return nil
	}
	f.v, f.set = v, true
	return nil
}

// parseJSONFloat parses a JSON number (the input is known to be valid JSON)
// and reports false for anything else or for a number beyond float64.
func parseJSONFloat(b []byte) (float64, bool) {
	if len(b) == 0 || (b[0] != '-' && (b[0] < '0' || b[0] > '9')) {
		return 0, false
	}
	if v, ok := exactDecimal(b); ok {
		return v, true
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false
	}
	return v, true
}

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// exactDecimal reads a number of the form -?digits(.digits)? whose digits,
// without the point, make an integer below 2^53 and which has at most 22
// digits after the point: both that integer and the power of ten are
// exact in float64, so one division, which IEEE 754 rounds correctly,
// gives the correctly rounded value that strconv.ParseFloat gives (the
// fast path of W. D. Clinger, "How to read floating point numbers
// accurately", PLDI 1990). Anything else reports false.
func exactDecimal(b []byte) (float64, bool) {
	neg := b[0] == '-'
	if neg {
		b = b[1:]
	}
	var m uint64
	frac, point, digits := 0, false, 0
	for _, c := range b {
		switch {
		case c >= '0' && c <= '9':
			m = m*10 + uint64(c-'0')
			digits++
			if point {
				frac++
			}
			if digits > 15 {
				return 0, false // 10^16 > 2^53: leave it to strconv
			}
		case c == '.' && !point:
			point = true
		default:
			return 0, false
		}
	}
	if digits == 0 || frac > 22 {
		return 0, false
	}
	v := float64(m) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}

// jsonBBox is a bbox field: an array of exactly four finite numbers.
type jsonBBox struct {
	v   [4]float64
	set bool   // present and not null
	msg string // what is wrong, if anything
}

func (bb *jsonBBox) UnmarshalJSON(b []byte) error {
	*bb = jsonBBox{}
	if string(b) == "null" {
		return nil
	}
	bb.set = true
	b = bytes.TrimSpace(b)
	if len(b) < 2 || b[0] != '[' || b[len(b)-1] != ']' {
		bb.msg = "must be an array of 4 numbers [x, y, width, height]"
		return nil
	}
	inner := bytes.TrimSpace(b[1 : len(b)-1])
	n := 0
	for len(inner) > 0 {
		var elem []byte
		if i := bytes.IndexByte(inner, ','); i >= 0 {
			elem, inner = inner[:i], inner[i+1:]
			if len(bytes.TrimSpace(inner)) == 0 {
				inner = nil
			}
		} else {
			elem, inner = inner, nil
		}
		elem = bytes.TrimSpace(elem)
		if n < 4 {
			v, ok := parseJSONFloat(elem)
			if !ok {
				if len(elem) > 0 && (elem[0] == '-' || (elem[0] >= '0' && elem[0] <= '9')) {
					bb.msg = fmt.Sprintf("element %d (%s) is not a finite number", n, clip(string(elem)))
				} else {
					bb.msg = fmt.Sprintf("element %d is not a number", n)
				}
				return nil
			}
			bb.v[n] = v
		}
		n++
	}
	if n != 4 {
		bb.msg = fmt.Sprintf("has %d elements, want 4 numbers [x, y, width, height]", n)
	}
	return nil
}

// box checks the bbox and converts it. It returns a message on failure.
func (bb *jsonBBox) box() (project.Box, string) {
	if !bb.set {
		return project.Box{}, "is missing"
	}
	if bb.msg != "" {
		return project.Box{}, bb.msg
	}
	x, y, w, h := bb.v[0], bb.v[1], bb.v[2], bb.v[3]
	switch {
	case w < 0:
		return project.Box{}, "width is negative (" + fmtNum(w) + ")"
	case w == 0:
		return project.Box{}, "width is zero"
	case h < 0:
		return project.Box{}, "height is negative (" + fmtNum(h) + ")"
	case h == 0:
		return project.Box{}, "height is zero"
	}
	b := toBox(x, y, w, h)
	if !b.Valid() {
		return project.Box{}, "corners are out of range or the size vanishes at this position: " + b.String()
	}
	return b, ""
}

func fmtNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// skipValue consumes any JSON value without keeping it.
type skipValue struct{}

func (*skipValue) UnmarshalJSON([]byte) error { return nil }
