package formats

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"strconv"
	"testing"
)

// fastCases are elements of every kind the readers meet, with the traps
// of encoding/json's rules: keys matched ignoring case, repeated keys
// (the last wins), null (resets a number field, leaves a string), values
// of the wrong type, skipped fields of any shape, escapes and non-ASCII.
var fastCases = []string{
	`{"id": 1, "image_id": 2, "category_id": 3, "bbox": [10, 20.5, 30, 40], "area": 1200, "iscrowd": 0}`,
	`{"id":1,"image_id":2,"category_id":3,"bbox":[1e2,2E-1,3.25,4],"score":0.5,"segmentation":[[1,2,3,4.5]]}`,
	"{\n\t\"id\" : 7 ,\r\n \"bbox\" : [ 1 , 2 , 3 , 4 ] \n}",
	`{}`,
	`{ }`,
	`{"ID": 5, "Image_Id": 6, "CATEGORY_ID": 7, "BBox": [1, 2, 3, 4]}`,
	`{"id": 1, "id": 2, "Id": 3}`,
	`{"id": 1, "id": null}`,
	`{"id": "1", "image_id": 1.0, "category_id": -0, "iscrowd": true, "score": "x"}`,
	`{"id": 1e3, "image_id": -12, "category_id": 99999999999999999999}`,
	`{"bbox": [1, 2, 3]}`,
	`{"bbox": [1, 2, 3, 4, 5]}`,
	`{"bbox": [[1], 2, 3, 4]}`,
	`{"bbox": {"x": 1}}`,
	`{"bbox": null}`,
	`{"bbox": "1,2,3,4"}`,
	`{"score": 1e400}`,
	`{"other": {"a": [true, false, null, "x\"y\\z\/\b\f\n\r\t\u00e9"], "b": {}}, "id": 4}`,
	`{"other": "é", "id": 4}`,
	"{\"other\": \"\xff\xfe\", \"id\": 4}",
	`{"\u0069d": 4}`,
	`{"i\"d": 4}`,
	`{"ſcore": 0.5}`,
	`{"file_name": "img/a.jpg", "width": 640, "height": 480, "id": 1}`,
	`{"file_name": "a", "file_name": null}`,
	`{"file_name": "a\"b"}`,
	"{\"file_name\": \"\xff\"}",
	`{"file_name": 5}`,
	`{"file_name": ["a"]}`,
	`{"name": "boat", "id": 2}`,
	`{"category": "dog", "image_id": 1, "bbox": [1, 2, 3, 4], "score": 0.25}`,
	// Malformed: the fast path must say "not sure", never accept.
	`{"id": 01}`,
	`{"id": 1.}`,
	`{"id": .5}`,
	`{"id": -}`,
	`{"id": 1e}`,
	`{"id": +1}`,
	`{"id": 1,}`,
	`{"id" 1}`,
	`{"id": 1 "x": 2}`,
	`{"id": tru}`,
	`{"id": nulll}`,
	`{"x": [1, 2,]}`,
	`{"x": [1 2]}`,
	`{"x": {"a" 1}}`,
	`{"x": {"a": 1,}}`,
	`{"x": {1: 1}}`,
	"{\"x\": \"a\tb\"}",
	`{"x": "\x"}`,
	`{"x": "\u12g4"}`,
	`{"x": "\u12"}`,
	`{"x": "abc}`,
	`{"id": 1}}`,
	`{"id": 1} `,
	`{`,
	`}`,
	`[1]`,
	`{"x": [`,
}

// fastAgrees checks one element against encoding/json for one element
// type: when the fast path takes it, json.Unmarshal of the element into
// a fresh value must succeed with the same result.
func fastAgrees[T any](t *testing.T, raw []byte, fields func(*T) []fastField) (taken bool) {
	t.Helper()
	var fast T
	if !fastObject(raw, fields(&fast)) {
		return false
	}
	var slow T
	if err := json.Unmarshal(raw, &slow); err != nil {
		t.Fatalf("%q: the fast path took what encoding/json refuses: %v", raw, err)
	}
	if !reflect.DeepEqual(fast, slow) {
		t.Fatalf("%q: fast path %+v, encoding/json %+v", raw, fast, slow)
	}
	return true
}

func fastAgreesAll(t *testing.T, raw []byte) (taken int) {
	for _, ok := range []bool{
		fastAgrees(t, raw, (*cjAnnotationIn).fastFields),
		fastAgrees(t, raw, (*cjImageIn).fastFields),
		fastAgrees(t, raw, (*cjCategoryIn).fastFields),
		fastAgrees(t, raw, (*cjPredictionIn).fastFields),
	} {
		if ok {
			taken++
		}
	}
	return taken
}

// The fast path gives, for every element it takes, exactly what
// encoding/json (the reference: Go's standard library) makes of it, and
// takes the usual shapes, so that it is used at all.
func TestFastPathAgreesWithEncodingJSON(t *testing.T) {
	for _, c := range fastCases {
		fastAgreesAll(t, []byte(c))
		if !json.Valid([]byte(c)) {
			var in cjAnnotationIn
			if fastObject([]byte(c), in.fastFields()) {
				t.Errorf("%q: invalid JSON taken by the fast path", c)
			}
		}
	}
	for _, c := range []string{fastCases[0], fastCases[1], fastCases[2], fastCases[5], fastCases[6], fastCases[8], fastCases[23]} {
		if fastAgreesAll(t, []byte(c)) != 4 {
			t.Errorf("%q: the fast path does not take this element for every type", c)
		}
	}
	for _, c := range []string{`{"\u0069d": 4}`, `{"ſcore": 0.5}`, `{"file_name": "a\"b"}`, `{"file_name": 5}`, "{\"file_name\": \"\xff\"}"} {
		if fastAgreesAll(t, []byte(c)) == 4 {
			t.Errorf("%q: the fast path should leave this to encoding/json for some type", c)
		}
	}
}

// FuzzFastPathAgrees holds the fast path to encoding/json on any input.
func FuzzFastPathAgrees(f *testing.F) {
	for _, c := range fastCases {
		f.Add([]byte(c))
	}
	f.Fuzz(func(t *testing.T, raw []byte) {
		if len(raw) > 0 && raw[0] == '{' {
			fastAgreesAll(t, raw)
			var in cjAnnotationIn
			if fastObject(raw, in.fastFields()) && !json.Valid(raw) {
				t.Fatalf("%q: invalid JSON taken by the fast path", raw)
			}
		}
	})
}

// exactDecimal gives bit for bit what strconv.ParseFloat (the reference:
// Go's correctly rounded parser) gives, sign of zero included, or leaves
// the number to it.
func TestExactDecimalAgreesWithParseFloat(t *testing.T) {
	cases := []string{"0", "-0", "0.0", "-0.000", "1", "12.5", "40.5", "30.25", "0.1", "0.3", "123456789012345",
		"1234567890123456", "9007199254740993", "0.1234567890123456789012", "1.000000000000000000000001",
		"999999999999999", "-999999999999.999", "1e5", "1E5", "2.5e-3", "00", "1.2.3", "-", "."}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 20000 {
		ip := rng.Uint64N(1 << uint(rng.IntN(50)))
		fp := rng.Uint64N(1000000)
		cases = append(cases, fmt.Sprintf("%d.%0*d", ip, 1+rng.IntN(6), fp%1000000))
	}
	for _, c := range cases {
		checkExactDecimal(t, c)
	}
}

func checkExactDecimal(t *testing.T, s string) {
	t.Helper()
	got, ok := exactDecimal([]byte(s))
	if !ok {
		return
	}
	want, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("%q: exactDecimal %v, strconv refuses it: %v", s, got, err)
	}
	if math.Float64bits(got) != math.Float64bits(want) {
		t.Fatalf("%q: exactDecimal %v (%x), strconv %v (%x)", s, got, math.Float64bits(got), want, math.Float64bits(want))
	}
}

func FuzzExactDecimal(f *testing.F) {
	f.Add("12.5")
	f.Add("-0.1")
	f.Fuzz(func(t *testing.T, s string) {
		if s != "" && (s[0] == '-' || s[0] >= '0' && s[0] <= '9') {
			checkExactDecimal(t, s)
		}
	})
}
