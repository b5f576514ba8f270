package formats

import (
	"errors"
	"fmt"
	"path/filepath"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// maxSegmentBytes bounds each path segment; most file systems allow 255
// bytes, and the margin leaves room for UniqueNames' "-N" suffix.
const maxSegmentBytes = 200

// maxExtBytes is the longest tail after the last dot that shortening keeps
// as an extension; a longer one is just part of the name.
const maxExtBytes = 16

// SafeRelPath turns a name from a dataset or an image path into a relative
// path that is safe to join under an output folder.
//
// Both "/" and "\" separate segments; the result uses "/" only. A leading
// drive ("C:") and leading slashes are dropped; empty, "." and ".."
// segments are dropped (not resolved, so nothing can climb out). In each
// segment, letters and digits of any script (with their combining marks)
// and the ASCII characters - _ . and space are kept; everything else,
// including control characters, NUL and invalid UTF-8, becomes "_".
// Leading and trailing spaces and trailing dots are trimmed, since Windows
// drops them silently (common practice); leading dots are kept, so a hidden
// file stays hidden. Windows device names (CON, NUL, COM1 …) get a "_"
// prefix (common practice). Segments are cut to 200 bytes at a character
// boundary, keeping a short extension. The result is never empty: a name
// with nothing usable becomes "unnamed".
func SafeRelPath(name string) string {
	name = strings.ReplaceAll(name, `\`, "/")
	if len(name) >= 2 && name[1] == ':' && isASCIILetter(name[0]) {
		name = name[2:]
	}
	var segs []string
	for seg := range strings.SplitSeq(name, "/") {
		if seg = safeSegment(seg); seg != "" {
			segs = append(segs, seg)
		}
	}
	if len(segs) == 0 {
		return "unnamed"
	}
	return strings.Join(segs, "/")
}

func isASCIILetter(c byte) bool { return c|0x20 >= 'a' && c|0x20 <= 'z' }

// safeSegment cleans one segment; "" means drop it.
func safeSegment(seg string) string {
	var b strings.Builder
	b.Grow(len(seg))
	for i, w := 0, 0; i < len(seg); i += w {
		r, n := utf8.DecodeRuneInString(seg[i:])
		w = n
		switch {
		case r == utf8.RuneError && n <= 1:
			b.WriteByte('_')
		case r == '-' || r == '_' || r == '.' || r == ' ',
			unicode.IsLetter(r), unicode.IsDigit(r), unicode.IsMark(r):
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	s := strings.TrimRight(strings.Trim(b.String(), " "), ". ")
	if s == "" {
		return "" // also covers "." and "..", which trim to nothing
	}
	if isDeviceName(s) {
		s = "_" + s
	}
	return shorten(s, maxSegmentBytes)
}

// isDeviceName reports whether Windows would treat s as a device, with or
// without an extension.
func isDeviceName(s string) bool {
	stem, _, _ := strings.Cut(s, ".")
	stem = strings.TrimRight(stem, " ")
	switch strings.ToUpper(stem) {
	case "CON", "PRN", "AUX", "NUL", "CONIN$", "CONOUT$":
		return true
	}
	if len(stem) == 4 {
		u := strings.ToUpper(stem[:3])
		if (u == "COM" || u == "LPT") && stem[3] >= '0' && stem[3] <= '9' {
			return true
		}
	}
	return false
}

// shorten cuts s to at most limit bytes at a character boundary, keeping
// an extension of up to maxExtBytes.
func shorten(s string, limit int) string {
	if len(s) <= limit {
		return s
	}
	ext := ""
	if dot := strings.LastIndexByte(s, '.'); dot > 0 && len(s)-dot <= maxExtBytes {
		ext = s[dot:]
	}
	stem := s[:len(s)-len(ext)]
	cut := limit - len(ext)
	for cut > 0 && !utf8.RuneStart(stem[cut]) {
		cut--
	}
	// Trimming again keeps the Windows rules after the cut.
	stem = strings.TrimRight(stem[:cut], ". ")
	if stem == "" {
		stem = "unnamed"
	}
	return stem + ext
}

// JoinInside joins rel under root and returns an error unless the cleaned
// result lies strictly inside root. It is a last line of defence behind
// SafeRelPath and works on names only: it does not follow symbolic links.
func JoinInside(root, rel string) (string, error) {
	switch {
	case rel == "":
		return "", errors.New("joining under output folder: empty name")
	case strings.IndexByte(rel, 0) >= 0:
		return "", fmt.Errorf("joining %q under output folder: name contains NUL", rel)
	case filepath.IsAbs(rel) || filepath.VolumeName(rel) != "" || strings.HasPrefix(rel, "/") || strings.HasPrefix(rel, `\`):
		return "", fmt.Errorf("joining %q under output folder: name is absolute", rel)
	}
	cleanRoot := filepath.Clean(root)
	joined := filepath.Join(cleanRoot, rel)
	r, err := filepath.Rel(cleanRoot, joined)
	if err != nil || r == "." || r == ".." || strings.HasPrefix(r, ".."+string(filepath.Separator)) {
		return "", fmt.Errorf("joining %q under %s: result %s is not inside the output folder", rel, cleanRoot, joined)
	}
	return joined, nil
}

// UniqueNames returns names made unique ignoring case, so that they can
// share one folder on any file system. The first name of each spelling
// (ignoring case) is kept; later ones get "-2", "-3" … before the
// extension, skipping any name already taken. The result depends only on
// the input order.
func UniqueNames(names []string) []string {
	out := make([]string, len(names))
	taken := make(map[string]bool, len(names))
	first := make([]bool, len(names))
	for i, n := range names {
		if k := foldKey(n); !taken[k] {
			taken[k] = true
			first[i] = true
		}
	}
	next := map[string]int{} // per folded name, the next suffix to try
	for i, n := range names {
		if first[i] {
			out[i] = n
			continue
		}
		stem, ext := splitExt(n)
		k := foldKey(n)
		num := max(next[k], 2)
		for {
			cand := stem + "-" + strconv.Itoa(num) + ext
			if ck := foldKey(cand); !taken[ck] {
				taken[ck] = true
				out[i] = cand
				break
			}
			num++
		}
		next[k] = num + 1
	}
	return out
}

// splitExt splits the last segment's extension off; a leading dot (a
// hidden file such as ".env") is not an extension.
func splitExt(name string) (stem, ext string) {
	base := name[strings.LastIndexAny(name, `/\`)+1:]
	dot := strings.LastIndexByte(base, '.')
	if dot <= 0 {
		return name, ""
	}
	cut := len(name) - len(base) + dot
	return name[:cut], name[cut:]
}

// foldKey maps s so that two strings get the same key exactly when
// strings.EqualFold says they are equal: each rune becomes the smallest
// rune of its simple case-folding orbit.
func foldKey(s string) string {
	var b strings.Builder
	b.Grow(len(s))
	for _, r := range s {
		m := r
		for f := unicode.SimpleFold(r); f != r; f = unicode.SimpleFold(f) {
			m = min(m, f)
		}
		b.WriteRune(m)
	}
	return b.String()
}
