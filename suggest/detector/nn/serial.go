package nn

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
)

// The parameter blob, little-endian throughout:
//
//	header  magic "BWNN", version u16, element size u8 (4 or 8),
//	        flags u8 (bit 0: Adam state), count u32, Adam step u64,
//	        body length u64
//	body    count records: name length u16, name, rank u8, dims u32…,
//	        moments u8 (1: Adam m and v follow the values), values,
//	        [m, v], CRC-32 of the record so far
//	trailer CRC-32 (IEEE) of header and body
//
// The record checksums let a corrupt blob's error name the parameter hit.
const (
	blobMagic   = "BWNN"
	blobVersion = 1
	headerLen   = 4 + 2 + 1 + 1 + 4 + 8 + 8
	flagAdam    = 1
	// maxBlob bounds what ReadParams will read: far above any detector
	// here, low enough that a corrupt length cannot exhaust memory.
	maxBlob = 1 << 30
)

// Errors that ReadParams wraps, for errors.Is.
var (
	// ErrFormat: the data is not a parameter blob this version can read.
	ErrFormat = errors.New("not a readable parameter blob")
	// ErrCorrupt: the blob is damaged or truncated.
	ErrCorrupt = errors.New("corrupt parameter blob")
	// ErrMismatch: the blob is sound but holds another model's parameters.
	ErrMismatch = errors.New("parameters do not fit the model")
)

// WriteParams writes params (the learnt parameters and any buffers, in a
// fixed order) and, if opt is not nil, Adam's step count and moments. It
// refuses non-finite values, so a diverged training run is not saved.
func WriteParams[T Float](w io.Writer, params []*Param[T], opt *Adam[T]) error {
	if err := checkParams(params); err != nil {
		return fmt.Errorf("writing parameters: %w", err)
	}
	es := elemSize[T]()
	var body bytes.Buffer
	for _, p := range params {
		var st *moments[T]
		if opt != nil {
			st = opt.state[p]
		}
		for _, vals := range [][]T{p.W, stateM(st), stateV(st)} {
			if i := firstNonFinite(vals); i >= 0 {
				return fmt.Errorf("writing parameters: %q element %d is %v", p.Name, i, vals[i])
			}
		}
		start := body.Len()
		le16(&body, uint16(len(p.Name)))
		body.WriteString(p.Name)
		body.WriteByte(byte(len(p.Shape)))
		for _, d := range p.Shape {
			le32(&body, uint32(d))
		}
		if st != nil {
			body.WriteByte(1)
		} else {
			body.WriteByte(0)
		}
		putVals(&body, p.W, es)
		if st != nil {
			putVals(&body, st.m, es)
			putVals(&body, st.v, es)
		}
		le32(&body, crc32.ChecksumIEEE(body.Bytes()[start:]))
	}
	var out bytes.Buffer
	out.WriteString(blobMagic)
	le16(&out, blobVersion)
	out.WriteByte(byte(es))
	var flags byte
	var step uint64
	if opt != nil {
		flags |= flagAdam
		step = uint64(opt.step)
	}
	out.WriteByte(flags)
	le32(&out, uint32(len(params)))
	le64(&out, step)
	le64(&out, uint64(body.Len()))
	out.Write(body.Bytes())
	le32(&out, crc32.ChecksumIEEE(out.Bytes()))
	if _, err := w.Write(out.Bytes()); err != nil {
		return fmt.Errorf("writing parameters: %w", err)
	}
	return nil
}

// ReadParams reads one blob written by WriteParams from r, stopping at its
// end, and loads it into params, which must have the same names and
// shapes (in any order). If opt is not nil it gets the blob's Adam state,
// or is reset when the blob has none. Nothing is changed unless the whole
// blob is sound and fits: a damaged blob gives an error that wraps
// ErrCorrupt or ErrFormat and names the parameter hit where it can, a blob
// of another model one that wraps ErrMismatch.
func ReadParams[T Float](r io.Reader, params []*Param[T], opt *Adam[T]) error {
	if err := checkParams(params); err != nil {
		return fmt.Errorf("reading parameters: %w", err)
	}
	head := make([]byte, headerLen)
	n, err := io.ReadFull(r, head)
	if err != nil && !errors.Is(err, io.EOF) && !errors.Is(err, io.ErrUnexpectedEOF) {
		return fmt.Errorf("reading parameters: %w", err)
	}
	if m := min(n, len(blobMagic)); string(head[:m]) != blobMagic[:m] {
		return fmt.Errorf("reading parameters: %w (magic %q)", ErrFormat, head[:m])
	}
	if n == 0 {
		return fmt.Errorf("reading parameters: %w: empty", ErrCorrupt)
	}
	if err != nil {
		return fmt.Errorf("reading parameters: %w: truncated in the header (%d of %d bytes)", ErrCorrupt, n, headerLen)
	}
	if v := binary.LittleEndian.Uint16(head[4:]); v != blobVersion {
		return fmt.Errorf("reading parameters: %w: version %d, this build reads %d", ErrFormat, v, blobVersion)
	}
	es := int(head[6])
	flags := head[7]
	count := int(binary.LittleEndian.Uint32(head[8:]))
	step := binary.LittleEndian.Uint64(head[12:])
	bodyLen := binary.LittleEndian.Uint64(head[20:])
	if bodyLen > maxBlob {
		return fmt.Errorf("reading parameters: %w: header claims %d bytes", ErrCorrupt, bodyLen)
	}
	// ReadAll grows as data arrives, so a wrong length costs no more memory
	// than the data there is.
	rest, err := io.ReadAll(io.LimitReader(r, int64(bodyLen)+4))
	if err != nil {
		return fmt.Errorf("reading parameters: %w", err)
	}
	truncated := len(rest) < int(bodyLen)+4
	body := rest[:min(len(rest), int(bodyLen))]
	recs, perr := parseBody(body, es, count, flags&flagAdam != 0, truncated)
	if truncated {
		if perr != nil {
			return fmt.Errorf("reading parameters: %w: %w", ErrCorrupt, perr)
		}
		return fmt.Errorf("reading parameters: %w: truncated before the checksum", ErrCorrupt)
	}
	sum := crc32.Update(crc32.ChecksumIEEE(head), crc32.IEEETable, body)
	if sum != binary.LittleEndian.Uint32(rest[bodyLen:]) {
		if perr != nil {
			return fmt.Errorf("reading parameters: %w: %w", ErrCorrupt, perr)
		}
		return fmt.Errorf("reading parameters: %w: checksum mismatch in the header or trailer", ErrCorrupt)
	}
	if perr != nil {
		return fmt.Errorf("reading parameters: %w: %w", ErrCorrupt, perr)
	}
	if es != 4 && es != 8 {
		return fmt.Errorf("reading parameters: %w: element size %d", ErrCorrupt, es)
	}
	if flags&^flagAdam != 0 {
		return fmt.Errorf("reading parameters: %w: unknown flags %#x", ErrFormat, flags)
	}

	byName := make(map[string]*record, len(recs))
	for i := range recs {
		if byName[recs[i].name] != nil {
			return fmt.Errorf("reading parameters: %w: %q appears twice", ErrCorrupt, recs[i].name)
		}
		byName[recs[i].name] = &recs[i]
	}
	type loaded struct {
		p       *Param[T]
		w, m, v []T
	}
	var out []loaded
	for _, p := range params {
		rec := byName[p.Name]
		if rec == nil {
			return fmt.Errorf("reading parameters: %w: %q is not in the blob", ErrMismatch, p.Name)
		}
		delete(byName, p.Name)
		if !equalInts(rec.shape, p.Shape) {
			return fmt.Errorf("reading parameters: %w: %q has shape %v in the blob, %v in the model", ErrMismatch, p.Name, rec.shape, p.Shape)
		}
		l := loaded{p: p, w: getVals[T](rec.w, es)}
		if rec.m != nil {
			l.m, l.v = getVals[T](rec.m, es), getVals[T](rec.v, es)
		}
		for _, vals := range [][]T{l.w, l.m, l.v} {
			if i := firstNonFinite(vals); i >= 0 {
				return fmt.Errorf("reading parameters: %w: %q element %d is %v", ErrCorrupt, p.Name, i, vals[i])
			}
		}
		out = append(out, l)
	}
	for _, rec := range recs {
		if byName[rec.name] != nil {
			return fmt.Errorf("reading parameters: %w: the blob has %q, which the model lacks", ErrMismatch, rec.name)
		}
	}
	for _, l := range out {
		copy(l.p.W, l.w)
	}
	if opt != nil {
		opt.Reset()
		if flags&flagAdam != 0 {
			opt.step = int(step)
			for _, l := range out {
				if l.m != nil {
					opt.state[l.p] = &moments[T]{m: l.m, v: l.v}
				}
			}
		}
	}
	return nil
}

// record is one parameter of a blob, its arrays still encoded.
type record struct {
	name       string
	shape      []int
	w, m, v    []byte
	hasMoments bool
}

// parseBody splits the body into records, checking each record's
// checksum. Its errors name the record where it can; truncated says
// whether running out of bytes means a cut blob or a corrupt length.
func parseBody(body []byte, es, count int, adam, truncated bool) ([]record, error) {
	if es != 4 && es != 8 {
		return nil, fmt.Errorf("element size %d", es)
	}
	var recs []record
	for i := range count {
		start := body
		name := fmt.Sprintf("#%d", i+1)
		fail := func(what string) ([]record, error) {
			return nil, fmt.Errorf("parameter %s (%d of %d): %s", name, i+1, count, what)
		}
		short := func(part string, have, want int) ([]record, error) {
			if truncated {
				return fail(fmt.Sprintf("truncated in the %s (%d of %d bytes)", part, have, want))
			}
			return fail(fmt.Sprintf("the %s would run past the end of the blob (%d of %d bytes): a length or shape is corrupt", part, have, want))
		}
		if len(body) < 2 {
			return short("name", len(body), 2)
		}
		nl := int(binary.LittleEndian.Uint16(body))
		body = body[2:]
		if len(body) < nl {
			return short("name", len(body), nl)
		}
		name = fmt.Sprintf("%q", body[:nl])
		rec := record{name: string(body[:nl])}
		body = body[nl:]
		if len(body) < 1 {
			return short("shape", 0, 1)
		}
		rank := int(body[0])
		body = body[1:]
		if len(body) < 4*rank+1 {
			return short("shape", len(body), 4*rank+1)
		}
		n := 1
		for range rank {
			d := int(binary.LittleEndian.Uint32(body))
			body = body[4:]
			rec.shape = append(rec.shape, d)
			if d > maxBlob || n*d > maxBlob {
				return fail(fmt.Sprintf("shape %v is too large", rec.shape))
			}
			n *= d
		}
		rec.hasMoments = body[0] == 1
		if body[0] > 1 || rec.hasMoments && !adam {
			return fail(fmt.Sprintf("bad moments flag %d", body[0]))
		}
		body = body[1:]
		arrays := 1
		if rec.hasMoments {
			arrays = 3
		}
		size := n * es
		if len(body) < arrays*size+4 {
			return short("values", len(body), arrays*size+4)
		}
		rec.w = body[:size]
		if rec.hasMoments {
			rec.m, rec.v = body[size:2*size], body[2*size:3*size]
		}
		body = body[arrays*size:]
		used := len(start) - len(body)
		if crc32.ChecksumIEEE(start[:used]) != binary.LittleEndian.Uint32(body) {
			return fail("checksum mismatch (data corrupt)")
		}
		body = body[4:]
		recs = append(recs, rec)
	}
	if len(body) != 0 {
		return nil, fmt.Errorf("%d bytes after the last of %d parameters: the count is corrupt", len(body), count)
	}
	return recs, nil
}

// checkParams rejects what the format cannot hold or a load would get
// wrong: unnamed or duplicate names, shapes that disagree with W.
func checkParams[T Float](params []*Param[T]) error {
	seen := make(map[string]bool, len(params))
	for _, p := range params {
		if p.Name == "" || len(p.Name) > math.MaxUint16 {
			return fmt.Errorf("parameter name %q is empty or too long", p.Name)
		}
		if seen[p.Name] {
			return fmt.Errorf("parameter name %q used twice", p.Name)
		}
		seen[p.Name] = true
		if len(p.Shape) > math.MaxUint8 {
			return fmt.Errorf("parameter %q has rank %d", p.Name, len(p.Shape))
		}
		n := 1
		for _, d := range p.Shape {
			if d < 0 || d > math.MaxUint32 {
				return fmt.Errorf("parameter %q has shape %v", p.Name, p.Shape)
			}
			n *= d
		}
		if n != len(p.W) {
			return fmt.Errorf("parameter %q has shape %v but %d values", p.Name, p.Shape, len(p.W))
		}
	}
	return nil
}

func stateM[T Float](s *moments[T]) []T {
	if s == nil {
		return nil
	}
	return s.m
}

func stateV[T Float](s *moments[T]) []T {
	if s == nil {
		return nil
	}
	return s.v
}

func firstNonFinite[T Float](vals []T) int {
	for i, v := range vals {
		if f := float64(v); math.IsNaN(f) || math.IsInf(f, 0) {
			return i
		}
	}
	return -1
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// elemSize tells float32-like from float64-like types by their precision.
func elemSize[T Float]() int {
	one, tiny := T(1), T(1e-10)
	if one+tiny == one {
		return 4
	}
	return 8
}

func putVals[T Float](b *bytes.Buffer, vals []T, es int) {
	buf := make([]byte, len(vals)*es)
	for i, v := range vals {
		if es == 4 {
			binary.LittleEndian.PutUint32(buf[4*i:], math.Float32bits(float32(v)))
		} else {
			binary.LittleEndian.PutUint64(buf[8*i:], math.Float64bits(float64(v)))
		}
	}
	b.Write(buf)
}

// getVals decodes values, converting between float32 and float64 when the
// blob was written with the other type.
func getVals[T Float](raw []byte, es int) []T {
	vals := make([]T, len(raw)/es)
	for i := range vals {
		if es == 4 {
			vals[i] = T(math.Float32frombits(binary.LittleEndian.Uint32(raw[4*i:])))
		} else {
			vals[i] = T(math.Float64frombits(binary.LittleEndian.Uint64(raw[8*i:])))
		}
	}
	return vals
}

func le16(b *bytes.Buffer, v uint16) { b.Write(binary.LittleEndian.AppendUint16(nil, v)) }

func le32(b *bytes.Buffer, v uint32) { b.Write(binary.LittleEndian.AppendUint32(nil, v)) }

func le64(b *bytes.Buffer, v uint64) { b.Write(binary.LittleEndian.AppendUint64(nil, v)) }
